package chart

import (
	"bytes"
	"encoding/xml"
	"errors"
	"flag"
	"fmt"
	"image"
	"image/color"
	"image/png"
	"io"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"testing"
)

// go test ./internal/chart/ -run Examples -examples /tmp writes the two example
// charts as PNG and SVG, for a person to look at.
var examplesDir = flag.String("examples", "", "folder to write the example charts into")

// exampleMixed is a mixed cost of the invented Quillfeather Frames: 24 periods of
// machine hours and power cost, generated as cost = 1,850 + 2.35·hours plus
// seeded noise, with one period (2024-05) pushed up as an outlier, and the
// previous year's formula for comparison.
func exampleMixed() Scatter {
	rng := rand.New(rand.NewPCG(6200, 1))
	var pts []Point
	for i := range 24 {
		hours := 640 + 520*rng.Float64()
		cost := 1850 + 2.35*hours + rng.NormFloat64()*70
		p := Point{Period: fmt.Sprintf("%d-%02d", 2023+i/12, i%12+1), Activity: math.Round(hours), Cost: math.Round(cost*100) / 100}
		if p.Period == "2024-05" {
			p.Cost += 980
			p.Outlier = true
		}
		pts = append(pts, p)
	}
	hi, lo := 0, 0
	for i, p := range pts {
		if p.Activity > pts[hi].Activity {
			hi = i
		}
		if p.Activity < pts[lo].Activity {
			lo = i
		}
	}
	return Scatter{
		Title:    "6200/WELD Power: cost = 1,850.00 + 2.35 per machine hour",
		XLabel:   "machine hours (period before)",
		YLabel:   "EUR per period",
		Points:   pts,
		Fit:      &Line{Fixed: 1850, Rate: 2.35, Label: "2024: 1,850.00 + 2.35 per hour"},
		Previous: &Line{Fixed: 1600, Rate: 2.10, Label: "2023: 1,600.00 + 2.10 per hour"},
		HighLow:  &[2]int{hi, lo},
		RangeMin: pts[lo].Activity,
		RangeMax: pts[hi].Activity,
	}
}

// exampleStep is a step-fixed supervision cost of the same invented company:
// one supervisor (4,200 a month) per 2,000 packing hours begun.
func exampleStep() Scatter {
	rng := rand.New(rand.NewPCG(6400, 2))
	var pts []Point
	for i := range 24 {
		hours := 1100 + 4400*rng.Float64()
		level := 4200 * math.Ceil(hours/2000)
		pts = append(pts, Point{
			Period:   fmt.Sprintf("%d-%02d", 2023+i/12, i%12+1),
			Activity: math.Round(hours),
			Cost:     math.Round(level + rng.NormFloat64()*60),
		})
	}
	return Scatter{
		Title:  "6400/PACK Supervision: step cost, 4,200.00 per 2,000 packing hours begun",
		XLabel: "packing hours",
		YLabel: "EUR per period",
		Points: pts,
		Steps: []StepLevel{
			{From: 1000, To: 2000, Level: 4200},
			{From: 2000, To: 4000, Level: 8400},
			{From: 4000, To: 5600, Level: 12600},
		},
		RangeMin: 1000,
		RangeMax: 5600,
	}
}

func TestExamples(t *testing.T) {
	for _, tc := range []struct {
		name string
		s    Scatter
	}{
		{"mixed", exampleMixed()},
		{"step", exampleStep()},
	} {
		t.Run(tc.name, func(t *testing.T) {
			var buf bytes.Buffer
			if err := tc.s.WritePNG(&buf, DefaultWidthPx, DefaultHeightPx); err != nil {
				t.Fatal(err)
			}
			checkPNG(t, buf.Bytes(), DefaultWidthPx, DefaultHeightPx)
			if *examplesDir == "" {
				return
			}
			for _, ext := range []string{".png", ".svg"} {
				path := filepath.Join(*examplesDir, "costdrift-chart-"+tc.name+ext)
				if err := WriteFile(path, tc.s); err != nil {
					t.Fatal(err)
				}
				t.Logf("wrote %s", path)
			}
		})
	}
}

// checkPNG decodes b and checks its size and that it is not blank: a drawn
// chart has text, axes, dots and lines in several colours plus their
// anti-aliased edges, so far more than a handful of distinct colours.
func checkPNG(t *testing.T, b []byte, w, h int) image.Image {
	t.Helper()
	img, err := png.Decode(bytes.NewReader(b))
	if err != nil {
		t.Fatalf("png.Decode: %v", err)
	}
	if got := img.Bounds().Size(); got != (image.Point{X: w, Y: h}) {
		t.Fatalf("size = %v, want %dx%d", got, w, h)
	}
	colours := map[color.RGBA]bool{}
	for y := range h {
		for x := range w {
			r, g, b, a := img.At(x, y).RGBA()
			colours[color.RGBA{uint8(r >> 8), uint8(g >> 8), uint8(b >> 8), uint8(a >> 8)}] = true
		}
	}
	if len(colours) < 20 {
		t.Fatalf("%d distinct colours; the chart looks blank", len(colours))
	}
	return img
}

// line is a small mixed-cost chart whose numbers are easy to follow by hand:
// points off both ends of the relevant range [300, 800], fit cost = 200 + 3·x.
func line() Scatter {
	return Scatter{
		Title:  "test line",
		XLabel: "hours",
		YLabel: "EUR",
		Points: []Point{
			{Period: "2024-01", Activity: 100, Cost: 500},
			{Period: "2024-02", Activity: 400, Cost: 1350},
			{Period: "2024-03", Activity: 600, Cost: 2100, Outlier: true},
			{Period: "2024-04", Activity: 700, Cost: 2250},
			{Period: "2024-05", Activity: 1000, Cost: 3000},
		},
		Fit:      &Line{Fixed: 200, Rate: 3},
		RangeMin: 300,
		RangeMax: 800,
	}
}

func TestWritePNG(t *testing.T) {
	for _, tc := range []struct {
		name string
		s    Scatter
		w, h int
		// Whether the outlier colour must appear: it is used by nothing else.
		outlier bool
	}{
		{"mixed default size", exampleMixed(), 720, 480, true},
		{"step default size", exampleStep(), 720, 480, false},
		{"mixed double resolution", exampleMixed(), 1440, 960, true},
		{"small", line(), 300, 200, true},
		{"tall", line(), 400, 800, true},
	} {
		t.Run(tc.name, func(t *testing.T) {
			var buf bytes.Buffer
			if err := tc.s.WritePNG(&buf, tc.w, tc.h); err != nil {
				t.Fatal(err)
			}
			img := checkPNG(t, buf.Bytes(), tc.w, tc.h)
			if got := countColour(img, colOutlier); (got > 0) != tc.outlier {
				t.Errorf("%d pixels in the outlier colour, want them present = %v", got, tc.outlier)
			}
			// The corners are page margin: white, not transparent, so the
			// chart reads the same in a mail client with a dark theme.
			if r, g, b, a := img.At(0, 0).RGBA(); r != 0xffff || g != 0xffff || b != 0xffff || a != 0xffff {
				t.Errorf("corner pixel = %v, want opaque white", img.At(0, 0))
			}
		})
	}
}

func countColour(img image.Image, c color.Color) int {
	want := color.NRGBAModel.Convert(c)
	n := 0
	b := img.Bounds()
	for y := b.Min.Y; y < b.Max.Y; y++ {
		for x := b.Min.X; x < b.Max.X; x++ {
			if color.NRGBAModel.Convert(img.At(x, y)) == want {
				n++
			}
		}
	}
	return n
}

// svgTexts parses b as XML (failing the test if it is not well formed) and
// returns the character data of every <text> element and the names of all
// elements.
func svgTexts(t *testing.T, b []byte) (texts []string, elements map[string]int) {
	t.Helper()
	elements = map[string]int{}
	dec := xml.NewDecoder(bytes.NewReader(b))
	inText := false
	for {
		tok, err := dec.Token()
		if errors.Is(err, io.EOF) {
			break
		}
		if err != nil {
			t.Fatalf("svg is not well-formed XML: %v", err)
		}
		switch tok := tok.(type) {
		case xml.StartElement:
			elements[strings.ToLower(tok.Name.Local)]++
			inText = tok.Name.Local == "text"
			if inText {
				texts = append(texts, "")
			}
		case xml.EndElement:
			inText = false
		case xml.CharData:
			if inText {
				texts[len(texts)-1] += string(tok)
			}
		}
	}
	if elements["svg"] != 1 {
		t.Fatalf("%d <svg> elements, want 1", elements["svg"])
	}
	return texts, elements
}

func renderSVG(t *testing.T, s Scatter) []byte {
	t.Helper()
	var buf bytes.Buffer
	if err := s.WriteSVG(&buf, DefaultWidthPt, DefaultHeightPt); err != nil {
		t.Fatal(err)
	}
	return buf.Bytes()
}

func TestWriteSVGEscapesText(t *testing.T) {
	for _, tc := range []struct {
		name, title, want string
	}{
		{"plain", "6200/WELD Power: cost = 1,850.00 + 2.35 per machine hour",
			"6200/WELD Power: cost = 1,850.00 + 2.35 per machine hour"},
		{"script tag", "<script>alert(1)</script>", "<script>alert(1)</script>"},
		{"quotes and ampersand", `Tom & Jerry's "power"`, `Tom & Jerry's "power"`},
		// XML 1.0 forbids these characters even escaped; they become spaces.
		{"control characters", "power\x00cost\x1b[31m\nnext", "power cost [31m next"},
		{"invalid utf-8", "cost \xff\xfe line", "cost line"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			s := line()
			s.Title = tc.title
			s.XLabel = tc.title
			out := renderSVG(t, s)
			texts, elements := svgTexts(t, out)
			if elements["script"] != 0 {
				t.Fatalf("the svg has %d <script> elements", elements["script"])
			}
			n := 0
			for _, txt := range texts {
				if txt == tc.want {
					n++
				}
			}
			if n != 2 { // title and x-axis label
				t.Errorf("%d <text> elements read %q, want 2; texts: %q", n, tc.want, texts)
			}
			if strings.Contains(tc.title, "<script>") && !bytes.Contains(out, []byte("&lt;script&gt;")) {
				t.Errorf("title not escaped as &lt;script&gt;")
			}
		})
	}
}

func TestWriteSVGFontFallback(t *testing.T) {
	out := renderSVG(t, line())
	if bytes.Contains(out, []byte("font-family:Liberation Sans;")) {
		t.Error("a text style names only Liberation Sans, with no fallback")
	}
	if !bytes.Contains(out, []byte("font-family:Liberation Sans,Arial,sans-serif;")) {
		t.Error("no text style names Liberation Sans with its fallbacks")
	}
}

// TestLabelsAreSparse: only outliers and the high and low points carry their
// period; the legend carries the default formula names when Label is empty.
func TestLabelsAreSparse(t *testing.T) {
	s := line()
	s.HighLow = &[2]int{4, 0}
	s.Previous = &Line{Fixed: 100, Rate: 2.8}
	texts, _ := svgTexts(t, renderSVG(t, s))
	has := map[string]bool{}
	for _, txt := range texts {
		has[txt] = true
	}
	for _, want := range []string{"2024-03", "high 2024-05", "low 2024-01", "fitted formula",
		"previous formula", "4 periods", "outlier", "high-low points", "relevant range"} {
		if !has[want] {
			t.Errorf("no text %q; texts: %q", want, texts)
		}
	}
	for _, unwanted := range []string{"2024-02", "2024-04"} {
		for _, txt := range texts {
			if strings.Contains(txt, unwanted) {
				t.Errorf("ordinary point %s is labelled (%q)", unwanted, txt)
			}
		}
	}
}

var (
	pathRE   = regexp.MustCompile(`<path d="([^"]*)" style="([^"]*)"`)
	numberRE = regexp.MustCompile(`-?[0-9]+(?:\.[0-9]+)?(?:e-?[0-9]+)?`)
)

type svgPath struct {
	nums  []float64
	style string
}

func svgPaths(t *testing.T, b []byte) []svgPath {
	t.Helper()
	var out []svgPath
	for _, m := range pathRE.FindAllSubmatch(b, -1) {
		var p svgPath
		p.style = string(m[2])
		for _, f := range numberRE.FindAll(m[1], -1) {
			v, err := strconv.ParseFloat(string(f), 64)
			if err != nil {
				t.Fatal(err)
			}
			p.nums = append(p.nums, v)
		}
		out = append(out, p)
	}
	return out
}

func hexColour(c color.Color) string {
	r, g, b, _ := c.RGBA()
	return fmt.Sprintf("#%02X%02X%02X", r>>8, g>>8, b>>8)
}

// TestFitDrawnOnlyAcrossRange reads the SVG geometry back. The dots at known
// (activity, cost) give the page's linear mapping for each axis; through it
// the fitted line must start at (300, 200 + 3·300 = 1,100) and end at
// (800, 200 + 3·800 = 2,600), the relevant range, although points lie at
// activity 100 and 1,000.
func TestFitDrawnOnlyAcrossRange(t *testing.T) {
	s := line()
	paths := svgPaths(t, renderSVG(t, s))

	// Dot centres: a circle path starts at (cx + r, cy).
	centres := map[[2]float64]bool{}
	var dots [][2]float64
	for _, p := range paths {
		if p.style == "fill:"+hexColour(colPoint) && len(p.nums) > 2 {
			c := [2]float64{p.nums[0] - pointR, p.nums[1]}
			if !centres[c] {
				centres[c] = true
				dots = append(dots, c)
			}
		}
	}
	// One legend dot and the four non-outlier points; the points are drawn
	// after the legend, in the order of s.Points without the outlier.
	if len(dots) != 5 {
		t.Fatalf("found %d dots, want 5 (legend + 4 points): %v", len(dots), dots)
	}
	first, last := dots[1], dots[4] // (100, 500) and (1000, 3000)
	pageX := func(x float64) float64 { return first[0] + (x-100)/(1000-100)*(last[0]-first[0]) }
	pageY := func(y float64) float64 { return first[1] + (y-500)/(3000-500)*(last[1]-first[1]) }

	var fit []svgPath
	for _, p := range paths {
		if p.style == "fill:none;stroke:"+hexColour(colFit)+";stroke-width:1.6" {
			fit = append(fit, p)
		}
	}
	// The legend sample is horizontal; the fitted line is not.
	var drawn []float64
	for _, p := range fit {
		if len(p.nums) == 4 && p.nums[1] != p.nums[3] {
			drawn = p.nums
		}
	}
	if drawn == nil {
		t.Fatalf("no sloping path in the fit style among %d", len(fit))
	}
	const tol = 0.02 // pt; the SVG carries 5 significant digits
	for _, c := range []struct {
		name      string
		got, want float64
	}{
		{"start x (activity 300)", drawn[0], pageX(300)},
		{"start y (cost 1,100)", drawn[1], pageY(1100)},
		{"end x (activity 800)", drawn[2], pageX(800)},
		{"end y (cost 2,600)", drawn[3], pageY(2600)},
	} {
		if math.Abs(c.got-c.want) > tol {
			t.Errorf("%s: page coordinate %.3f, want %.3f", c.name, c.got, c.want)
		}
	}
	// The other two dots confirm the mapping: (400, 1,350) and (700, 2,250).
	for i, d := range [][2]float64{{400, 1350}, {700, 2250}} {
		got := dots[2+i]
		if math.Abs(got[0]-pageX(d[0])) > tol || math.Abs(got[1]-pageY(d[1])) > tol {
			t.Errorf("dot %v at page %v, mapping says (%.3f, %.3f)", d, got, pageX(d[0]), pageY(d[1]))
		}
	}
}

func TestSegment(t *testing.T) {
	// cost = Fixed + Rate·activity, evaluated by hand (common practice).
	for _, tc := range []struct {
		name           string
		l              Line
		from, to       float64
		y0, y1, tolAbs float64
	}{
		{"mixed", Line{Fixed: 1850, Rate: 2.35}, 640, 1160, 3354, 4576, 1e-9},
		{"variable", Line{Fixed: 0, Rate: 4.2}, 100, 200, 420, 840, 1e-9},
		{"fixed", Line{Fixed: 5000, Rate: 0}, 10, 90, 5000, 5000, 0},
		{"negative intercept", Line{Fixed: -300, Rate: 1.5}, 400, 800, 300, 900, 1e-9},
	} {
		t.Run(tc.name, func(t *testing.T) {
			x0, y0, x1, y1 := segment(tc.l, tc.from, tc.to)
			if x0 != tc.from || x1 != tc.to {
				t.Errorf("x = %g..%g, want %g..%g", x0, x1, tc.from, tc.to)
			}
			if math.Abs(y0-tc.y0) > tc.tolAbs || math.Abs(y1-tc.y1) > tc.tolAbs {
				t.Errorf("y = %g..%g, want %g..%g", y0, y1, tc.y0, tc.y1)
			}
		})
	}
}

func TestRelevantRangeDefaultsToActivitySpan(t *testing.T) {
	s := line()
	s.RangeMin, s.RangeMax = 0, 0
	if lo, hi := s.relevantRange(); lo != 100 || hi != 1000 {
		t.Errorf("range = %g..%g, want 100..1000 (the points' activity span)", lo, hi)
	}
	s.RangeMin, s.RangeMax = 0, 500 // zero is a legitimate lower bound
	if lo, hi := s.relevantRange(); lo != 0 || hi != 500 {
		t.Errorf("range = %g..%g, want 0..500", lo, hi)
	}
}

// TestRenders draws charts of every shape the callers produce, in both
// formats: a line, steps, no formula, negative values, a single point, all
// zeros, a title too long for the page.
func TestRenders(t *testing.T) {
	negative := line()
	negative.Points[0].Cost = -400 // a credit note booked in a period
	single := Scatter{Points: []Point{{Period: "2024-01", Activity: 50, Cost: 900}}}
	zeros := Scatter{Points: []Point{{Activity: 0, Cost: 0}, {Activity: 0, Cost: 0}}}
	long := exampleMixed()
	long.Title = strings.Repeat("a very long cost object name ", 12)
	noFormula := line()
	noFormula.Fit = nil
	for _, tc := range []struct {
		name string
		s    Scatter
	}{
		{"line", line()},
		{"steps", exampleStep()},
		{"no formula", noFormula},
		{"negative cost", negative},
		{"single point", single},
		{"all zero", zeros},
		{"long title", long},
	} {
		t.Run(tc.name, func(t *testing.T) {
			var buf bytes.Buffer
			if err := tc.s.WritePNG(&buf, DefaultWidthPx, DefaultHeightPx); err != nil {
				t.Fatal(err)
			}
			checkPNG(t, buf.Bytes(), DefaultWidthPx, DefaultHeightPx)
			texts, _ := svgTexts(t, renderSVG(t, tc.s))
			if len(texts) < 4 { // at least tick labels on both axes and a legend entry
				t.Errorf("only %d text elements: %q", len(texts), texts)
			}
		})
	}
	t.Run("long title is cut with an ellipsis", func(t *testing.T) {
		texts, _ := svgTexts(t, renderSVG(t, long))
		if !strings.HasPrefix(texts[0], "a very long cost object name") || !strings.HasSuffix(texts[0], "…") {
			t.Errorf("title drawn as %q", texts[0])
		}
	})
}

// TestAxesFromOrigin: with every value non-negative both axes start at zero
// (common practice for cost-volume charts); with a negative cost they follow
// the data.
func TestAxesFromOrigin(t *testing.T) {
	p, _ := line().plot()
	if p.X.Min != 0 || p.Y.Min != 0 {
		t.Errorf("all positive: axes start at (%g, %g), want (0, 0)", p.X.Min, p.Y.Min)
	}
	neg := line()
	neg.Points[1].Cost = -250
	p, _ = neg.plot()
	if p.Y.Min != -250 {
		t.Errorf("negative cost: y axis starts at %g, want the data minimum -250", p.Y.Min)
	}
	if p.X.Min != 100 {
		t.Errorf("negative cost: x axis starts at %g, want the data minimum 100", p.X.Min)
	}
}

func TestValidate(t *testing.T) {
	nan, inf := math.NaN(), math.Inf(1)
	for _, tc := range []struct {
		name   string
		modify func(*Scatter)
		want   string // part of the error; "" for none
	}{
		{"valid", func(*Scatter) {}, ""},
		{"no points", func(s *Scatter) { s.Points = nil }, "no points"},
		{"NaN activity", func(s *Scatter) { s.Points[1].Activity = nan }, "point 1 (2024-02) activity is NaN"},
		{"NaN cost", func(s *Scatter) { s.Points[2].Cost = nan }, "point 2 (2024-03) cost is NaN"},
		{"infinite cost", func(s *Scatter) { s.Points[0].Cost = inf }, "cost is +Inf"},
		{"NaN fit rate", func(s *Scatter) { s.Fit.Rate = nan }, "fit rate is NaN"},
		{"NaN previous fixed", func(s *Scatter) { s.Previous = &Line{Fixed: nan} }, "previous formula fixed cost is NaN"},
		{"fit overflows", func(s *Scatter) { s.Fit.Rate = math.MaxFloat64 }, "fit cost at range minimum is +Inf"},
		{"NaN range", func(s *Scatter) { s.RangeMax = nan }, "range maximum is NaN"},
		{"inverted range", func(s *Scatter) { s.RangeMin, s.RangeMax = 800, 300 }, "above range maximum"},
		{"NaN step", func(s *Scatter) { s.Fit = nil; s.Steps = []StepLevel{{0, 10, nan}} }, "step 0 level is NaN"},
		{"empty step", func(s *Scatter) { s.Fit = nil; s.Steps = []StepLevel{{10, 10, 5}} }, "from must be below to"},
		{"overlapping steps", func(s *Scatter) {
			s.Fit = nil
			s.Steps = []StepLevel{{500, 900, 2}, {0, 600, 1}}
		}, "overlap"},
		{"fit and steps", func(s *Scatter) { s.Steps = []StepLevel{{0, 10, 1}} }, "exclusive"},
		{"high-low out of range", func(s *Scatter) { s.HighLow = &[2]int{5, 0} }, "outside the 5 points"},
		{"high-low negative", func(s *Scatter) { s.HighLow = &[2]int{4, -1} }, "outside the 5 points"},
		{"high-low same point", func(s *Scatter) { s.HighLow = &[2]int{2, 2} }, "same point"},
		{"high-low reversed", func(s *Scatter) { s.HighLow = &[2]int{0, 4} }, "less activity"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			s := line()
			tc.modify(&s)
			err := s.Validate()
			if tc.want == "" {
				if err != nil {
					t.Fatalf("Validate: %v", err)
				}
				return
			}
			if err == nil || !strings.Contains(err.Error(), tc.want) {
				t.Fatalf("Validate = %v, want an error containing %q", err, tc.want)
			}
			// Both writers refuse the chart with the same error, and write nothing.
			var buf bytes.Buffer
			if err := s.WritePNG(&buf, DefaultWidthPx, DefaultHeightPx); err == nil || !strings.Contains(err.Error(), tc.want) {
				t.Errorf("WritePNG = %v", err)
			}
			if err := s.WriteSVG(&buf, DefaultWidthPt, DefaultHeightPt); err == nil || !strings.Contains(err.Error(), tc.want) {
				t.Errorf("WriteSVG = %v", err)
			}
			if buf.Len() != 0 {
				t.Errorf("%d bytes written for an invalid chart", buf.Len())
			}
		})
	}
}

func TestSizeLimits(t *testing.T) {
	var buf bytes.Buffer
	for _, wh := range [][2]int{{0, 480}, {720, -1}, {100000, 480}} {
		if err := line().WritePNG(&buf, wh[0], wh[1]); err == nil {
			t.Errorf("WritePNG %dx%d: no error", wh[0], wh[1])
		}
	}
	for _, wh := range [][2]float64{{0, 360}, {540, math.NaN()}, {1e6, 360}} {
		if err := line().WriteSVG(&buf, wh[0], wh[1]); err == nil {
			t.Errorf("WriteSVG %gx%g: no error", wh[0], wh[1])
		}
	}
	if buf.Len() != 0 {
		t.Errorf("%d bytes written", buf.Len())
	}
}

func TestWriteFile(t *testing.T) {
	dir := t.TempDir()
	t.Run("png", func(t *testing.T) {
		path := filepath.Join(dir, "chart.PNG")
		if err := WriteFile(path, line()); err != nil {
			t.Fatal(err)
		}
		b := checkMode(t, path)
		checkPNG(t, b, DefaultWidthPx, DefaultHeightPx)
	})
	t.Run("svg replaces a readable file and tightens its mode", func(t *testing.T) {
		path := filepath.Join(dir, "chart.svg")
		if err := os.WriteFile(path, []byte("old"), 0o644); err != nil {
			t.Fatal(err)
		}
		if err := WriteFile(path, line()); err != nil {
			t.Fatal(err)
		}
		svgTexts(t, checkMode(t, path))
	})
	for _, name := range []string{"chart.jpg", "chart", "chart.png.txt"} {
		t.Run("refuses "+name, func(t *testing.T) {
			path := filepath.Join(dir, name)
			err := WriteFile(path, line())
			if err == nil || !strings.Contains(err.Error(), ".png") || !strings.Contains(err.Error(), ".svg") {
				t.Fatalf("WriteFile = %v, want an error naming .png and .svg", err)
			}
			if _, err := os.Stat(path); !errors.Is(err, os.ErrNotExist) {
				t.Errorf("%s exists after a refused write", name)
			}
		})
	}
	t.Run("invalid chart leaves no file", func(t *testing.T) {
		path := filepath.Join(dir, "empty.png")
		if err := WriteFile(path, Scatter{}); err == nil {
			t.Fatal("no error for a chart without points")
		}
		entries, _ := os.ReadDir(dir)
		for _, e := range entries {
			if strings.HasPrefix(e.Name(), ".") || e.Name() == "empty.png" {
				t.Errorf("left behind %s", e.Name())
			}
		}
	})
}

func checkMode(t *testing.T, path string) []byte {
	t.Helper()
	fi, err := os.Stat(path)
	if err != nil {
		t.Fatal(err)
	}
	if fi.Mode().Perm() != 0o600 {
		t.Errorf("%s mode %v, want 0600", path, fi.Mode().Perm())
	}
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	return b
}

func TestGroupedTicks(t *testing.T) {
	// Expected marks worked by hand from the rule in the doc comment.
	for _, tc := range []struct {
		name     string
		min, max float64
		target   int
		want     []string
	}{
		{"thousands", 0, 12500, 5, []string{"0", "2,500", "5,000", "7,500", "10,000", "12,500"}},
		{"rounds outward", 0, 5400, 5, []string{"0", "1,000", "2,000", "3,000", "4,000", "5,000", "6,000"}},
		{"hours", 0, 1140, 6, []string{"0", "200", "400", "600", "800", "1,000", "1,200"}},
		{"not from zero", 640, 1160, 5, []string{"600", "700", "800", "900", "1,000", "1,100", "1,200"}},
		{"negative", -400, 3000, 5, []string{"-500", "0", "500", "1,000", "1,500", "2,000", "2,500", "3,000"}},
		// 1.2/5 = 0.24 lies nearer 0.25 than 0.2.
		{"fractions", 0, 1.2, 5, []string{"0.00", "0.25", "0.50", "0.75", "1.00", "1.25"}},
		{"tenths", 0, 0.9, 5, []string{"0.0", "0.2", "0.4", "0.6", "0.8", "1.0"}},
		{"quarters", 0, 1, 4, []string{"0.00", "0.25", "0.50", "0.75", "1.00"}},
		{"millions", 0, 2.5e6, 5, []string{"0", "500,000", "1,000,000", "1,500,000", "2,000,000", "2,500,000"}},
	} {
		t.Run(tc.name, func(t *testing.T) {
			var got []string
			for _, tk := range (groupedTicks{target: tc.target}).Ticks(tc.min, tc.max) {
				got = append(got, tk.Label)
			}
			if strings.Join(got, " ") != strings.Join(tc.want, " ") {
				t.Errorf("ticks = %q, want %q", got, tc.want)
			}
		})
	}
	for _, r := range [][2]float64{{1, 1}, {2, 1}, {math.NaN(), 1}, {0, math.Inf(1)}} {
		if got := (groupedTicks{}).Ticks(r[0], r[1]); got != nil {
			t.Errorf("Ticks(%g, %g) = %v, want none", r[0], r[1], got)
		}
	}
}

func TestFormatGrouped(t *testing.T) {
	// Digits grouped in threes with a comma, a point before the decimals: the
	// convention of the titles the callers write (common practice in English).
	for _, tc := range []struct {
		v        float64
		decimals int
		want     string
	}{
		{12500, 0, "12,500"},
		{999, 0, "999"},
		{1000, 0, "1,000"},
		{100000, 0, "100,000"},
		{1234567.891, 2, "1,234,567.89"},
		{-1234.5, 2, "-1,234.50"},
		{-0.001, 2, "0.00"},
		{0, 0, "0"},
		{2.5, 1, "2.5"},
	} {
		if got := formatGrouped(tc.v, tc.decimals); got != tc.want {
			t.Errorf("formatGrouped(%g, %d) = %q, want %q", tc.v, tc.decimals, got, tc.want)
		}
	}
}

// TestExcludedPeriodsDrawnApart: a period the accountant left out of the
// fit is drawn in its own colour and marker, labelled with its period and
// named in the legend, and is not counted among the fitted periods.
func TestExcludedPeriodsDrawnApart(t *testing.T) {
	s := line()
	s.Excluded = []string{"2024-02"}
	b := renderSVG(t, s)
	texts, _ := svgTexts(t, b)
	has := map[string]bool{}
	for _, txt := range texts {
		has[txt] = true
	}
	for _, want := range []string{"2024-02", "excluded from the fit", "3 periods"} {
		if !has[want] {
			t.Errorf("no text %q; texts: %q", want, texts)
		}
	}
	if has["4 periods"] {
		t.Errorf("the legend counts the excluded period among the fitted ones; texts: %q", texts)
	}
	if !strings.Contains(strings.ToUpper(string(b)), hexColour(colExcluded)) {
		t.Errorf("nothing drawn in the excluded colour %s", hexColour(colExcluded))
	}
	var buf bytes.Buffer
	if err := line().WritePNG(&buf, 720, 480); err != nil {
		t.Fatal(err)
	}
	if got := countColour(checkPNG(t, buf.Bytes(), 720, 480), colExcluded); got != 0 {
		t.Errorf("%d pixels in the excluded colour on a chart without exclusions", got)
	}
}
