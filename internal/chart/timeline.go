package chart

import (
	"errors"
	"fmt"
	"io"
	"math"
	"slices"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/text"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
)

// TimePoint is one period of a cost object on the timeline: its cost, and
// the cost the formula in force then gives for it.
type TimePoint struct {
	Period string // "2024-07"
	Cost   float64
	// Formula is what the formula in force in the period gives for it (at
	// the period's activity for a cost with a driver); NaN where there is
	// none, as for a period without a driver value.
	Formula float64
	// Before marks a period before the behaviour's change: the current
	// formula was not fitted on it, and its Formula is the earlier one.
	Before  bool
	Outlier bool // flagged by the analysis
}

// Timeline is a cost object's cost per period with its formula: periods
// on the horizontal axis in order, the cost as points, the formula as a
// line, the periods before a change drawn apart from those after it (they
// are not what the current formula was fitted on), outliers and changes
// marked.
type Timeline struct {
	Title  string
	YLabel string
	Points []TimePoint
	// FormulaLabel and BeforeLabel name the current and the earlier
	// formula in the legend; "formula" and "formula before the change"
	// when empty.
	FormulaLabel, BeforeLabel string
	// Changes are the periods a new behaviour starts in; each is one of
	// the Points' periods.
	Changes []string
}

// Validate reports why t cannot be drawn: no points, a cost that is not
// finite, an infinite formula value, or a change in a period not among the
// points.
func (t Timeline) Validate() error {
	if len(t.Points) == 0 {
		return errors.New("chart: no periods to draw")
	}
	for i, p := range t.Points {
		if err := finite(p.Cost, "period %d (%s) cost", i, p.Period); err != nil {
			return err
		}
		if math.IsInf(p.Formula, 0) {
			return fmt.Errorf("chart: period %d (%s) formula is %v", i, p.Period, p.Formula)
		}
	}
	for _, c := range t.Changes {
		if t.index(c) < 0 {
			return fmt.Errorf("chart: change in %s, a period not on the timeline", c)
		}
	}
	return nil
}

func (t Timeline) index(period string) int {
	return slices.IndexFunc(t.Points, func(p TimePoint) bool { return p.Period == period })
}

// WritePNG draws t as a widthPx × heightPx PNG.
func (t Timeline) WritePNG(w io.Writer, widthPx, heightPx int) error {
	return writePNG(t, w, widthPx, heightPx)
}

// WriteSVG draws t as an SVG document of widthPt × heightPt points.
func (t Timeline) WriteSVG(w io.Writer, widthPt, heightPt float64) error {
	return writeSVG(t, w, widthPt, heightPt)
}

// draw lays out title, plot and legend on c (drawFrame).
func (t Timeline) draw(c draw.Canvas) error { return drawFrame(c, t.Title, t.plot) }

// plot builds the timeline's plot and legend entries. Layers bottom to
// top: grid, changes, formulas, points, outliers.
func (t Timeline) plot() (*plot.Plot, []legendItem) {
	p := Scatter{XLabel: "period", YLabel: t.YLabel}.axes()
	p.X.Tick.Marker = periodTicks{periods: t.periods()}
	p.X.AutoRescale = false
	p.X.Min, p.X.Max = -0.6, float64(len(t.Points))-0.4
	p.Add(&plotter.Grid{Horizontal: draw.LineStyle{Color: colGrid, Width: 0.5}})

	var items []legendItem
	if len(t.Changes) > 0 {
		ch := &changeLines{style: textStyle(noteSize, colSubtle)}
		for _, c := range t.Changes {
			ch.at = append(ch.at, float64(t.index(c))-0.5)
			ch.labels = append(ch.labels, "change "+clean(c))
		}
		p.Add(ch)
		items = append(items, legendItem{"change of behaviour", ch})
	}

	var before, after, outliers plotter.XYs
	for i, pt := range t.Points {
		xy := plotter.XY{X: float64(i), Y: pt.Cost}
		switch {
		case pt.Outlier:
			outliers = append(outliers, xy)
		case pt.Before:
			before = append(before, xy)
		default:
			after = append(after, xy)
		}
	}
	formulas := []struct {
		before bool
		label  string
		style  draw.LineStyle
	}{
		{false, orDefault(t.FormulaLabel, "formula"), draw.LineStyle{Color: colFit, Width: 1.6}},
		{true, orDefault(t.BeforeLabel, "formula before the change"), draw.LineStyle{Color: colPrevious, Width: 1.4, Dashes: []vg.Length{5, 3}}},
	}
	var markers []legendItem
	for _, f := range formulas {
		var first *plotter.Line
		for _, run := range t.formulaRuns(f.before) {
			l := mustLine(run, f.style)
			p.Add(l)
			if first == nil {
				first = l
			}
		}
		if first != nil {
			items = append(items, legendItem{f.label, first})
		}
	}
	if len(after) > 0 {
		dots := mustScatter(after, draw.GlyphStyle{Color: colPoint, Radius: pointR, Shape: draw.CircleGlyph{}})
		p.Add(dots)
		markers = append(markers, legendItem{periodsLabel(len(after)), dots})
	}
	if len(before) > 0 {
		rings := mustScatter(before, draw.GlyphStyle{Color: colPrevious, Radius: pointR + 0.4, Shape: ringGlyph{width: 1.1}})
		p.Add(rings)
		markers = append(markers, legendItem{"before the change", rings})
	}
	if len(outliers) > 0 {
		x := mustScatter(outliers, draw.GlyphStyle{Color: colOutlier, Radius: 3.6, Shape: crossGlyph{width: 1.5}})
		p.Add(x)
		markers = append(markers, legendItem{"outlier", x})
	}
	if t.allNonNegative() {
		p.Y.Min = 0 // cost from zero, as on the scatter (common practice)
	}
	return p, append(markers, items...)
}

func (t Timeline) periods() []string {
	out := make([]string, len(t.Points))
	for i, p := range t.Points {
		out[i] = clean(p.Period)
	}
	return out
}

// formulaRuns are the stretches of consecutive periods, on the side of the
// change given, whose formula value is known: each is drawn as one line.
func (t Timeline) formulaRuns(before bool) []plotter.XYs {
	var runs []plotter.XYs
	var cur plotter.XYs
	for i, pt := range t.Points {
		if pt.Before != before || math.IsNaN(pt.Formula) {
			if len(cur) > 0 {
				runs = append(runs, cur)
			}
			cur = nil
			continue
		}
		cur = append(cur, plotter.XY{X: float64(i), Y: pt.Formula})
	}
	if len(cur) > 0 {
		runs = append(runs, cur)
	}
	// A single period draws as a short level rather than a dot.
	for i, r := range runs {
		if len(r) == 1 {
			runs[i] = plotter.XYs{{X: r[0].X - 0.3, Y: r[0].Y}, {X: r[0].X + 0.3, Y: r[0].Y}}
		}
	}
	return runs
}

func (t Timeline) allNonNegative() bool {
	for _, p := range t.Points {
		if p.Cost < 0 || p.Formula < 0 {
			return false
		}
	}
	return true
}

// periodTicks labels the periods on the horizontal axis, every k-th one so
// that at most eight labels fit; every period gets a mark.
type periodTicks struct{ periods []string }

// Ticks implements plot.Ticker.
func (pt periodTicks) Ticks(_, _ float64) []plot.Tick {
	n := len(pt.periods)
	every := max(1, (n+7)/8)
	ticks := make([]plot.Tick, 0, n)
	for i, p := range pt.periods {
		label := ""
		if i%every == 0 {
			label = p
		}
		ticks = append(ticks, plot.Tick{Value: float64(i), Label: label})
	}
	return ticks
}

// changeLines draws a dashed vertical line between the last period of one
// behaviour and the first of the next, labelled at the top.
type changeLines struct {
	at     []float64
	labels []string
	style  text.Style
}

func (ch *changeLines) lineStyle() draw.LineStyle {
	return draw.LineStyle{Color: colOutlier, Width: 0.9, Dashes: []vg.Length{3, 2}}
}

// Plot implements plot.Plotter.
func (ch *changeLines) Plot(c draw.Canvas, p *plot.Plot) {
	trX, _ := p.Transforms(&c)
	sty := ch.style
	sty.YAlign = draw.YTop
	for i, x := range ch.at {
		vx := trX(x)
		c.StrokeLine2(ch.lineStyle(), vx, c.Min.Y, vx, c.Max.Y)
		c.FillText(sty, vg.Point{X: vx + 3, Y: c.Max.Y - 2}, ch.labels[i])
	}
}

// Thumbnail implements plot.Thumbnailer.
func (ch *changeLines) Thumbnail(c *draw.Canvas) {
	x := (c.Min.X + c.Max.X) / 2
	c.StrokeLine2(ch.lineStyle(), x, c.Min.Y, x, c.Max.Y)
}
