package chart

import (
	"bytes"
	"errors"
	"fmt"
	"image"
	"image/png"
	"io"
	"math"
	"path/filepath"
	"sort"
	"strings"
	"unicode"
	"unicode/utf8"

	"git.sr.ht/~sbinet/gg"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgimg"
	"gonum.org/v1/plot/vg/vgsvg"

	"github.com/costdrift/costdrift/internal/atomicfile"
)

// Default sizes. 720×480 px is what an alert email inlines; the SVG default is
// the same picture at 96 dots per inch (720 px · 72/96 = 540 pt).
const (
	DefaultWidthPx  = 720
	DefaultHeightPx = 480
	DefaultWidthPt  = 540.0
	DefaultHeightPt = 360.0
)

// Size limits: below the minimum nothing readable fits, above the maximum a
// PNG would need hundreds of megabytes.
const (
	minPx = 120
	maxPx = 6000
	minPt = 90.0
	maxPt = 4500.0
)

// Point is one period of a cost object: its activity (the driver value) and its
// cost. Outlier marks a point the analysis flagged (it gets its own marker and a
// label with its period).
type Point struct {
	Period   string // "2024-07"
	Activity float64
	Cost     float64
	Outlier  bool
	// Before marks a period before the behaviour's change: the formula
	// drawn was not fitted on it, so it is drawn apart (a grey ring).
	Before bool
}

// Line is a cost formula cost = Fixed + Rate·activity. Label is its legend text;
// when empty the legend says "fitted formula" or "previous formula".
type Line struct {
	Fixed, Rate float64
	Label       string
}

// At returns Fixed + Rate·activity.
func (l Line) At(activity float64) float64 { return l.Fixed + l.Rate*activity }

// StepLevel is one level of a step cost: cost = Level for From ≤ activity < To.
type StepLevel struct {
	From, To, Level float64
}

// Scatter is everything one chart shows. Only Points is required.
//
// The relevant range is [RangeMin, RangeMax]; when both are zero it is taken
// as [min activity, max activity] of Points. Fit and Previous are drawn only
// across it: outside the range the formula was not observed, and extending it
// to zero activity would read the intercept as a fixed cost it may not be.
//
// HighLow holds the indices into Points of the high activity point
// (HighLow[0]) and the low activity point (HighLow[1]) of the high-low method.
//
// Fit and Steps are exclusive: a cost is drawn as a line or as steps.
type Scatter struct {
	Title          string
	XLabel, YLabel string
	Points         []Point
	Fit            *Line
	Steps          []StepLevel
	Previous       *Line
	HighLow        *[2]int
	// Excluded lists the periods of Points left out of the fit by the
	// accountant's decision: drawn as hollow squares, with their period.
	Excluded []string

	RangeMin, RangeMax float64
}

// Validate reports why s cannot be drawn: no points, a NaN or infinite number,
// an empty or inverted range, overlapping steps, Fit together with Steps, or
// HighLow indices that are out of range, equal, or in the wrong order.
func (s Scatter) Validate() error {
	if len(s.Points) == 0 {
		return errors.New("chart: no points to draw")
	}
	for i, p := range s.Points {
		if err := finite(p.Activity, "point %d (%s) activity", i, p.Period); err != nil {
			return err
		}
		if err := finite(p.Cost, "point %d (%s) cost", i, p.Period); err != nil {
			return err
		}
	}
	if err := finite(s.RangeMin, "range minimum"); err != nil {
		return err
	}
	if err := finite(s.RangeMax, "range maximum"); err != nil {
		return err
	}
	if s.RangeMin > s.RangeMax {
		return fmt.Errorf("chart: range minimum %g is above range maximum %g", s.RangeMin, s.RangeMax)
	}
	lo, hi := s.relevantRange()
	for _, l := range []struct {
		name string
		line *Line
	}{{"fit", s.Fit}, {"previous formula", s.Previous}} {
		if l.line == nil {
			continue
		}
		if err := finite(l.line.Fixed, "%s fixed cost", l.name); err != nil {
			return err
		}
		if err := finite(l.line.Rate, "%s rate", l.name); err != nil {
			return err
		}
		// Fixed and Rate can each be finite while Fixed + Rate·activity overflows.
		if err := finite(l.line.At(lo), "%s cost at range minimum", l.name); err != nil {
			return err
		}
		if err := finite(l.line.At(hi), "%s cost at range maximum", l.name); err != nil {
			return err
		}
	}
	if s.Fit != nil && len(s.Steps) > 0 {
		return errors.New("chart: fit and steps are exclusive; draw a line or steps")
	}
	for i, st := range s.Steps {
		for _, f := range []struct {
			v    float64
			name string
		}{{st.From, "from"}, {st.To, "to"}, {st.Level, "level"}} {
			if err := finite(f.v, "step %d %s", i, f.name); err != nil {
				return err
			}
		}
		if st.From >= st.To {
			return fmt.Errorf("chart: step %d runs from %g to %g; from must be below to", i, st.From, st.To)
		}
	}
	steps := sortedSteps(s.Steps)
	for i := 1; i < len(steps); i++ {
		if steps[i].From < steps[i-1].To {
			return fmt.Errorf("chart: steps %g–%g and %g–%g overlap",
				steps[i-1].From, steps[i-1].To, steps[i].From, steps[i].To)
		}
	}
	if s.HighLow != nil {
		h, l := s.HighLow[0], s.HighLow[1]
		if h < 0 || h >= len(s.Points) || l < 0 || l >= len(s.Points) {
			return fmt.Errorf("chart: high-low indices %d and %d outside the %d points", h, l, len(s.Points))
		}
		if h == l {
			return fmt.Errorf("chart: high and low point are the same point %d", h)
		}
		if s.Points[h].Activity < s.Points[l].Activity {
			return fmt.Errorf("chart: high point %d has less activity (%g) than low point %d (%g)",
				h, s.Points[h].Activity, l, s.Points[l].Activity)
		}
	}
	return nil
}

// finite returns an error naming what when v is NaN or infinite.
func finite(v float64, what string, args ...any) error {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return fmt.Errorf("chart: %s is %v", fmt.Sprintf(what, args...), v)
	}
	return nil
}

// relevantRange returns [RangeMin, RangeMax], or the activity span of the
// points when both are zero.
func (s Scatter) relevantRange() (lo, hi float64) {
	if s.RangeMin != 0 || s.RangeMax != 0 || len(s.Points) == 0 {
		return s.RangeMin, s.RangeMax
	}
	lo, hi = s.Points[0].Activity, s.Points[0].Activity
	for _, p := range s.Points[1:] {
		lo = math.Min(lo, p.Activity)
		hi = math.Max(hi, p.Activity)
	}
	return lo, hi
}

// segment returns the end points of l drawn across [from, to]:
// (from, Fixed + Rate·from) and (to, Fixed + Rate·to).
func segment(l Line, from, to float64) (x0, y0, x1, y1 float64) {
	return from, l.At(from), to, l.At(to)
}

// sortedSteps returns a copy of steps ordered by From.
func sortedSteps(steps []StepLevel) []StepLevel {
	out := append([]StepLevel(nil), steps...)
	sort.Slice(out, func(i, j int) bool { return out[i].From < out[j].From })
	return out
}

// WritePNG draws s as a widthPx × heightPx PNG (see writePNG).
func (s Scatter) WritePNG(w io.Writer, widthPx, heightPx int) error {
	return writePNG(s, w, widthPx, heightPx)
}

// WriteSVG draws s as an SVG document of widthPt × heightPt points (see
// writeSVG).
func (s Scatter) WriteSVG(w io.Writer, widthPt, heightPt float64) error {
	return writeSVG(s, w, widthPt, heightPt)
}

// Drawing is a chart this package draws: the scatter of cost against
// activity, or the timeline of cost over the periods.
type Drawing interface {
	// Validate reports why the chart cannot be drawn.
	Validate() error
	draw(c draw.Canvas) error
}

// writePNG draws d as a widthPx × heightPx PNG. Up to 720×480 px the text keeps
// its size in pixels; a larger image is drawn at a higher resolution, so it is
// the same chart, sharper, rather than the same text on a larger page.
func writePNG(d Drawing, w io.Writer, widthPx, heightPx int) error {
	if widthPx < minPx || heightPx < minPx || widthPx > maxPx || heightPx > maxPx {
		return fmt.Errorf("chart: png size %d×%d px outside %d–%d px", widthPx, heightPx, minPx, maxPx)
	}
	if err := d.Validate(); err != nil {
		return err
	}
	scale := math.Max(1, math.Min(float64(widthPx)/DefaultWidthPx, float64(heightPx)/DefaultHeightPx))
	img := image.NewRGBA(image.Rect(0, 0, widthPx, heightPx))
	// The canvas draws on img itself through a context set up as vgimg
	// sets up its own (butt line caps, y upwards): given the image alone,
	// it would draw on a copy, and a mail of alerts allocates and fills
	// every chart's pixels twice.
	ctx := gg.NewContextForRGBA(img)
	ctx.SetLineCapButt()
	ctx.InvertY()
	cv := vgimg.NewWith(vgimg.UseImageWithContext(img, ctx), vgimg.UseDPI(int(math.Round(96*scale))))
	if err := d.draw(draw.New(cv)); err != nil {
		return err
	}
	// BestSpeed: a mail of alerts draws one chart per alert, and the
	// default compression took two thirds of the drawing time for files
	// only a few kilobytes smaller.
	enc := png.Encoder{CompressionLevel: png.BestSpeed}
	if err := enc.Encode(w, cv.Image()); err != nil {
		return fmt.Errorf("chart: encode png: %w", err)
	}
	return nil
}

// writeSVG draws d as an SVG document of widthPt × heightPt points.
//
// Fonts are not embedded (that would add about a megabyte per chart); the text
// names Liberation Sans, whose widths the layout was measured with, followed by
// Arial, which has the same metrics, and the generic sans-serif.
func writeSVG(d Drawing, w io.Writer, widthPt, heightPt float64) error {
	if !(widthPt >= minPt && widthPt <= maxPt && heightPt >= minPt && heightPt <= maxPt) {
		return fmt.Errorf("chart: svg size %g×%g pt outside %g–%g pt", widthPt, heightPt, minPt, maxPt)
	}
	if err := d.Validate(); err != nil {
		return err
	}
	cv := vgsvg.New(vg.Points(widthPt), vg.Points(heightPt))
	if err := d.draw(draw.New(cv)); err != nil {
		return err
	}
	var buf bytes.Buffer
	if _, err := cv.WriteTo(&buf); err != nil {
		return fmt.Errorf("chart: write svg: %w", err)
	}
	// Only attribute values are rewritten: in text content a '"' is escaped,
	// so a title cannot contain this pattern.
	out := bytes.ReplaceAll(buf.Bytes(),
		[]byte(`style="font-family:Liberation Sans;`),
		[]byte(`style="font-family:Liberation Sans,Arial,sans-serif;`))
	if _, err := w.Write(out); err != nil {
		return fmt.Errorf("chart: write svg: %w", err)
	}
	return nil
}

// WriteFile draws d into path at the default size, as PNG or SVG by the
// extension (.png or .svg, any case). The file is written whole or not at all
// and owner-only (mode 0600), because the chart shows ledger figures: an
// existing file at path is replaced, and left as it was when the write fails.
func WriteFile(path string, d Drawing) error {
	var buf bytes.Buffer
	var err error
	switch ext := strings.ToLower(filepath.Ext(path)); ext {
	case ".png":
		err = writePNG(d, &buf, DefaultWidthPx, DefaultHeightPx)
	case ".svg":
		err = writeSVG(d, &buf, DefaultWidthPt, DefaultHeightPt)
	default:
		return fmt.Errorf("chart: %s: extension %q not supported; use .png or .svg", path, ext)
	}
	if err != nil {
		return fmt.Errorf("%w (%s)", err, path)
	}
	err = atomicfile.Write(path, 0o600, func(w io.Writer) error {
		_, err := w.Write(buf.Bytes())
		return err
	})
	if err != nil {
		return fmt.Errorf("chart: %w", err)
	}
	return nil
}

// clean makes caller text safe to draw: invalid UTF-8 and control characters
// (which XML 1.0 forbids even when escaped) become spaces, runs of spaces one.
func clean(s string) string {
	if !utf8.ValidString(s) {
		s = strings.ToValidUTF8(s, " ")
	}
	s = strings.Map(func(r rune) rune {
		if unicode.IsControl(r) || r == '\uFFFE' || r == '\uFFFF' {
			return ' '
		}
		return r
	}, s)
	return strings.Join(strings.Fields(s), " ")
}
