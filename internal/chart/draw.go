package chart

import (
	"fmt"
	"image/color"
	"math"
	"slices"
	"strconv"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/font"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/text"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
)

// Palette: dark neutral ink, one blue for what was observed and fitted, one
// rust for what needs a second look, warm greys for context. Shape carries
// every distinction as well as colour (dot, cross, ring; solid, dashed), so the
// chart still reads in greyscale print.
var (
	colInk      = rgb(0x2b, 0x2b, 0x2b) // text, axes
	colSubtle   = rgb(0x5c, 0x5c, 0x5c) // tick labels, point labels
	colGrid     = rgb(0xe4, 0xe4, 0xe1)
	colBand     = rgb(0xf3, 0xf1, 0xec) // relevant range
	colBandEdge = rgb(0xd9, 0xd5, 0xcc)
	colPoint    = rgb(0x3d, 0x6a, 0x8e)
	colFit      = rgb(0x17, 0x3f, 0x5f)
	colPrevious = rgb(0x8c, 0x86, 0x7a)
	colOutlier  = rgb(0xb4, 0x4b, 0x1e)
	colHighLow  = rgb(0x4a, 0x4a, 0x4a)
	colExcluded = rgb(0x7a, 0x5c, 0x8e)
	colHalo     = color.NRGBA{R: 0xff, G: 0xff, B: 0xff, A: 0xd0}
)

func rgb(r, g, b uint8) color.Color { return color.NRGBA{R: r, G: g, B: b, A: 0xff} }

// sans is Liberation Sans from the font collection gonum/plot compiles in.
var sans = font.Font{Typeface: "Liberation", Variant: "Sans"}

// Sizes in points, measured on the 540×360 pt default page.
const (
	titleSize  = 11.5
	labelSize  = 9
	tickSize   = 8
	legendSize = 8
	noteSize   = 7.5
	margin     = 10
	pointR     = 2.6
)

func textStyle(size vg.Length, c color.Color) text.Style {
	return text.Style{
		Color:   c,
		Font:    font.From(sans, size),
		XAlign:  draw.XLeft,
		YAlign:  draw.YBottom,
		Handler: plot.DefaultTextHandler,
	}
}

// legendItem is one entry of the legend row under the chart.
type legendItem struct {
	label string
	thumb plot.Thumbnailer
}

// draw lays out title, plot and legend on c (drawFrame).
func (s Scatter) draw(c draw.Canvas) error { return drawFrame(c, s.Title, s.plot) }

// drawFrame lays out a chart on c: its title, the plot build makes and the
// legend row under it. A panic inside the plotting library becomes an
// error: a chart that fails to draw must not take the daemon down.
func drawFrame(c draw.Canvas, title string, build func() (*plot.Plot, []legendItem)) (err error) {
	defer func() {
		if r := recover(); r != nil {
			err = fmt.Errorf("chart: drawing failed: %v", r)
		}
	}()
	c.SetColor(color.White)
	c.Fill(c.Rectangle.Path())

	area := draw.Crop(c, margin, -margin, margin*0.8, -margin*0.8)
	if title := clean(title); title != "" {
		sty := fitText(textStyle(titleSize, colInk), title, area.Max.X-area.Min.X)
		sty.YAlign = draw.YTop
		title = ellipsize(sty, title, area.Max.X-area.Min.X)
		area.FillText(sty, vg.Point{X: area.Min.X, Y: area.Max.Y}, title)
		area.Max.Y -= sty.Height(title) + 8
	}

	p, items := build()
	h := drawLegend(area, textStyle(legendSize, colInk), items)
	area.Min.Y += h + 6
	p.Draw(area)
	return nil
}

// fitText shrinks sty's font, down to 8 pt, until txt fits width.
func fitText(sty text.Style, txt string, width vg.Length) text.Style {
	for sty.Width(txt) > width && sty.Font.Size > 8 {
		sty.Font.Size -= 0.5
	}
	return sty
}

// ellipsize cuts txt and appends "…" until it fits width.
func ellipsize(sty text.Style, txt string, width vg.Length) string {
	if sty.Width(txt) <= width {
		return txt
	}
	r := []rune(txt)
	for len(r) > 1 && sty.Width(string(r)+"…") > width {
		r = r[:len(r)-1]
	}
	return string(r) + "…"
}

// drawLegend draws items left to right along the bottom of c, wrapping to a
// new row when one is full, and returns the height used.
func drawLegend(c draw.Canvas, sty text.Style, items []legendItem) vg.Length {
	if len(items) == 0 {
		return 0
	}
	const (
		thumbW = 18
		gapIn  = 4  // between thumbnail and text
		gapOut = 14 // between items
	)
	rowH := sty.Height("Xg") * 1.5
	width := c.Max.X - c.Min.X
	type placed struct {
		x   vg.Length
		row int
	}
	pos := make([]placed, len(items))
	x, row := vg.Length(0), 0
	for i, it := range items {
		w := thumbW + gapIn + sty.Width(it.label)
		if x > 0 && x+w > width {
			x, row = 0, row+1
		}
		pos[i] = placed{x: x, row: row}
		x += w + gapOut
	}
	rows := row + 1
	height := rowH * vg.Length(rows)
	sty.YAlign = draw.YCenter
	for i, it := range items {
		// Rows fill from the top of the legend block downwards.
		yMid := c.Min.Y + height - rowH*(vg.Length(pos[i].row)+0.5)
		x0 := c.Min.X + pos[i].x
		thumb := draw.Canvas{Canvas: c.Canvas, Rectangle: vg.Rectangle{
			Min: vg.Point{X: x0, Y: yMid - rowH*0.3},
			Max: vg.Point{X: x0 + thumbW, Y: yMid + rowH*0.3},
		}}
		it.thumb.Thumbnail(&thumb)
		c.FillText(sty, vg.Point{X: x0 + thumbW + gapIn, Y: yMid}, it.label)
	}
	return height
}

// plot builds the gonum plot (without title or legend, which draw lays out
// itself) and the legend entries. Layers are added bottom to top: range band,
// grid, high-low line, previous formula, fit or steps, points, outliers,
// high-low rings, labels.
func (s Scatter) plot() (*plot.Plot, []legendItem) {
	s, before := s.splitBefore()
	p := s.axes()
	// The legend lists markers, then formulas, then the range.
	lo, hi := s.relevantRange()
	band := &rangeBand{from: lo, to: hi}
	p.Add(band)
	p.Add(&plotter.Grid{Horizontal: draw.LineStyle{Color: colGrid, Width: 0.5}})
	items := s.addFormulas(p, lo, hi)
	markers, notes := s.addPoints(p)
	markers = append(markers, addBefore(p, before)...)
	items = append(append(markers, items...), legendItem{"relevant range", band})
	if len(notes) > 0 {
		p.Add(&noteLabels{notes: notes, style: textStyle(noteSize, colSubtle)})
	}

	// A cost-volume chart reads best from the origin (common practice): the
	// fixed part of a cost is then seen as the height of the line above zero
	// activity. Only when every value is non-negative, so no data are cut off.
	if s.allNonNegative() {
		p.X.Min, p.Y.Min = 0, 0
	}
	return p, items
}

// axes is a new plot with the chart's axes, labels and ticks.
func (s Scatter) axes() *plot.Plot {
	p := plot.New()
	p.BackgroundColor = nil
	for _, ax := range []*plot.Axis{&p.X, &p.Y} {
		ax.LineStyle = draw.LineStyle{Color: colInk, Width: 0.6}
		ax.Padding = 0
		ax.Label.TextStyle = textStyle(labelSize, colInk)
		ax.Label.Padding = 4
		ax.Tick.LineStyle = draw.LineStyle{Color: colInk, Width: 0.6}
		ax.Tick.Length = 3.5
		ax.AutoRescale = true
	}
	p.X.Label.TextStyle.XAlign = draw.XCenter
	p.Y.Label.TextStyle.XAlign = draw.XCenter
	p.X.Label.Text = clean(s.XLabel)
	p.Y.Label.Text = clean(s.YLabel)
	p.X.Tick.Label = textStyle(tickSize, colSubtle)
	p.X.Tick.Label.XAlign, p.X.Tick.Label.YAlign = draw.XCenter, draw.YTop
	p.Y.Tick.Label = textStyle(tickSize, colSubtle)
	p.Y.Tick.Label.XAlign, p.Y.Tick.Label.YAlign = draw.XRight, draw.YCenter
	p.X.Tick.Marker = groupedTicks{target: 6}
	p.Y.Tick.Marker = groupedTicks{target: 5}

	return p
}

// addFormulas adds the high-low line, the previous formula, and the fitted
// line or the step levels, bottom to top, and returns their legend entries:
// the current formula first, the previous one after it.
func (s Scatter) addFormulas(p *plot.Plot, lo, hi float64) []legendItem {
	var items []legendItem
	if s.HighLow != nil {
		h, l := s.Points[s.HighLow[0]], s.Points[s.HighLow[1]]
		hl := mustLine(plotter.XYs{{X: l.Activity, Y: l.Cost}, {X: h.Activity, Y: h.Cost}},
			draw.LineStyle{Color: colHighLow, Width: 0.7, Dashes: []vg.Length{1, 1.5}})
		p.Add(hl)
	}
	// The previous formula is drawn beneath the current one but listed after it.
	var previous *legendItem
	if s.Previous != nil {
		x0, y0, x1, y1 := segment(*s.Previous, lo, hi)
		prev := mustLine(plotter.XYs{{X: x0, Y: y0}, {X: x1, Y: y1}},
			draw.LineStyle{Color: colPrevious, Width: 1.4, Dashes: []vg.Length{5, 3}})
		p.Add(prev)
		previous = &legendItem{orDefault(s.Previous.Label, "previous formula"), prev}
	}
	if s.Fit != nil {
		x0, y0, x1, y1 := segment(*s.Fit, lo, hi)
		fit := mustLine(plotter.XYs{{X: x0, Y: y0}, {X: x1, Y: y1}},
			draw.LineStyle{Color: colFit, Width: 1.6})
		p.Add(fit)
		items = append(items, legendItem{orDefault(s.Fit.Label, "fitted formula"), fit})
	}
	if len(s.Steps) > 0 {
		steps := &stepLines{steps: sortedSteps(s.Steps)}
		p.Add(steps)
		items = append(items, legendItem{"step levels", steps})
	}
	if previous != nil {
		items = append(items, *previous)
	}

	return items
}

// addPoints adds the periods, the outliers and the high-low rings, and
// returns their legend entries and the labels of the points that carry one.
func (s Scatter) addPoints(p *plot.Plot) ([]legendItem, []note) {
	var markers []legendItem
	var plain, outliers, excluded plotter.XYs
	var notes []note
	for i, pt := range s.Points {
		xy := plotter.XY{X: pt.Activity, Y: pt.Cost}
		left := slices.Contains(s.Excluded, pt.Period)
		switch {
		case left:
			excluded = append(excluded, xy)
		case pt.Outlier:
			outliers = append(outliers, xy)
		default:
			plain = append(plain, xy)
		}
		var tag string
		if s.HighLow != nil && i == s.HighLow[0] {
			tag = "high"
		} else if s.HighLow != nil && i == s.HighLow[1] {
			tag = "low"
		}
		if period := clean(pt.Period); (pt.Outlier || left || tag != "") && (period != "" || tag != "") {
			label := period
			if tag != "" {
				label = joinNonEmpty(tag, period)
			}
			below := false
			if ref, ok := s.reference(pt.Activity); ok {
				below = pt.Cost < ref
			}
			notes = append(notes, note{x: pt.Activity, y: pt.Cost, text: label, below: below})
		}
	}
	dots := mustScatter(plain, draw.GlyphStyle{Color: colPoint, Radius: pointR, Shape: draw.CircleGlyph{}})
	p.Add(dots)
	markers = append(markers, legendItem{periodsLabel(len(plain)), dots})
	if len(outliers) > 0 {
		x := mustScatter(outliers, draw.GlyphStyle{Color: colOutlier, Radius: 3.6, Shape: crossGlyph{width: 1.5}})
		p.Add(x)
		markers = append(markers, legendItem{"outlier", x})
	}
	if len(excluded) > 0 {
		x := mustScatter(excluded, draw.GlyphStyle{Color: colExcluded, Radius: 3.4, Shape: draw.SquareGlyph{}})
		p.Add(x)
		markers = append(markers, legendItem{"excluded from the fit", x})
	}
	if s.HighLow != nil {
		h, l := s.Points[s.HighLow[0]], s.Points[s.HighLow[1]]
		rings := mustScatter(plotter.XYs{{X: h.Activity, Y: h.Cost}, {X: l.Activity, Y: l.Cost}},
			draw.GlyphStyle{Color: colHighLow, Radius: 5.2, Shape: ringGlyph{width: 0.9}})
		p.Add(rings)
		markers = append(markers, legendItem{"high-low points", rings})
	}
	return markers, notes
}

// reference returns the cost the drawn formula gives at activity: the fitted
// line, or the level of the step that contains activity (or the nearest step).
// Labels go on the side of a point away from it, so they do not sit on the line.
func (s Scatter) reference(activity float64) (float64, bool) {
	if s.Fit != nil {
		return s.Fit.At(activity), true
	}
	best, bestDist := 0.0, math.Inf(1)
	for _, st := range s.Steps {
		d := math.Max(0, math.Max(st.From-activity, activity-st.To))
		if d < bestDist {
			best, bestDist = st.Level, d
		}
	}
	return best, len(s.Steps) > 0
}

func (s Scatter) allNonNegative() bool {
	lo, hi := s.relevantRange()
	if lo < 0 {
		return false
	}
	for _, pt := range s.Points {
		if pt.Activity < 0 || pt.Cost < 0 {
			return false
		}
	}
	for _, l := range []*Line{s.Fit, s.Previous} {
		if l != nil && (l.At(lo) < 0 || l.At(hi) < 0) {
			return false
		}
	}
	for _, st := range s.Steps {
		if st.From < 0 || st.Level < 0 {
			return false
		}
	}
	return true
}

func periodsLabel(n int) string {
	if n == 1 {
		return "1 period"
	}
	return strconv.Itoa(n) + " periods"
}

func orDefault(s, def string) string {
	if s = clean(s); s != "" {
		return s
	}
	return def
}

func joinNonEmpty(a, b string) string {
	switch {
	case a == "":
		return b
	case b == "":
		return a
	}
	return a + " " + b
}

// mustLine and mustScatter wrap constructors whose only error is a NaN or
// infinite value, which Validate has already excluded.
func mustLine(xys plotter.XYs, sty draw.LineStyle) *plotter.Line {
	l, err := plotter.NewLine(xys)
	if err != nil {
		panic(fmt.Sprintf("chart: line after validation: %v", err))
	}
	l.LineStyle = sty
	return l
}

func mustScatter(xys plotter.XYs, sty draw.GlyphStyle) *plotter.Scatter {
	sc, err := plotter.NewScatter(xys)
	if err != nil {
		panic(fmt.Sprintf("chart: scatter after validation: %v", err))
	}
	sc.GlyphStyle = sty
	return sc
}

// rangeBand shades the relevant range [from, to] across the full height of
// the data area, with a thin edge on each side.
type rangeBand struct{ from, to float64 }

func (b *rangeBand) Plot(c draw.Canvas, p *plot.Plot) {
	trX, _ := p.Transforms(&c)
	x0, x1 := trX(b.from), trX(b.to)
	c.FillPolygon(colBand, c.ClipPolygonX([]vg.Point{
		{X: x0, Y: c.Min.Y}, {X: x1, Y: c.Min.Y}, {X: x1, Y: c.Max.Y}, {X: x0, Y: c.Max.Y},
	}))
	edge := draw.LineStyle{Color: colBandEdge, Width: 0.6}
	for _, x := range []vg.Length{x0, x1} {
		if c.ContainsX(x) {
			c.StrokeLine2(edge, x, c.Min.Y, x, c.Max.Y)
		}
	}
}

// DataRange widens only the horizontal axis; ±Inf leaves the vertical as is.
func (b *rangeBand) DataRange() (xmin, xmax, ymin, ymax float64) {
	return b.from, b.to, math.Inf(1), math.Inf(-1)
}

func (b *rangeBand) Thumbnail(c *draw.Canvas) {
	r := c.Rectangle
	pts := []vg.Point{r.Min, {X: r.Max.X, Y: r.Min.Y}, r.Max, {X: r.Min.X, Y: r.Max.Y}}
	c.FillPolygon(colBand, pts)
	c.StrokeLines(draw.LineStyle{Color: colBandEdge, Width: 0.6}, append(pts, r.Min))
}

// stepLines draws each level of a step cost as a horizontal segment, and a
// dotted riser where one level ends at the activity the next begins.
type stepLines struct{ steps []StepLevel }

var stepStyle = draw.LineStyle{Color: colFit, Width: 1.6}

func (s *stepLines) Plot(c draw.Canvas, p *plot.Plot) {
	trX, trY := p.Transforms(&c)
	riser := draw.LineStyle{Color: colFit, Width: 0.6, Dashes: []vg.Length{1, 2}}
	for i, st := range s.steps {
		c.StrokeLines(stepStyle, c.ClipLinesXY([]vg.Point{
			{X: trX(st.From), Y: trY(st.Level)}, {X: trX(st.To), Y: trY(st.Level)},
		})...)
		if i > 0 && s.steps[i-1].To == st.From {
			x := trX(st.From)
			c.StrokeLines(riser, c.ClipLinesXY([]vg.Point{
				{X: x, Y: trY(s.steps[i-1].Level)}, {X: x, Y: trY(st.Level)},
			})...)
		}
	}
}

func (s *stepLines) DataRange() (xmin, xmax, ymin, ymax float64) {
	xmin, xmax = math.Inf(1), math.Inf(-1)
	ymin, ymax = math.Inf(1), math.Inf(-1)
	for _, st := range s.steps {
		xmin, xmax = math.Min(xmin, st.From), math.Max(xmax, st.To)
		ymin, ymax = math.Min(ymin, st.Level), math.Max(ymax, st.Level)
	}
	return xmin, xmax, ymin, ymax
}

func (s *stepLines) Thumbnail(c *draw.Canvas) {
	// A small stair: low level on the left, high on the right.
	r := c.Rectangle
	midX := (r.Min.X + r.Max.X) / 2
	lowY := r.Min.Y + (r.Max.Y-r.Min.Y)*0.2
	highY := r.Min.Y + (r.Max.Y-r.Min.Y)*0.8
	c.StrokeLine2(stepStyle, r.Min.X, lowY, midX, lowY)
	c.StrokeLine2(stepStyle, midX, highY, r.Max.X, highY)
}

// crossGlyph is an × whose stroke width is set, so it stays visible beside
// the filled dots (draw.CrossGlyph strokes at a fixed 0.5 pt).
type crossGlyph struct{ width vg.Length }

func (g crossGlyph) DrawGlyph(c *draw.Canvas, sty draw.GlyphStyle, pt vg.Point) {
	c.SetLineStyle(draw.LineStyle{Color: sty.Color, Width: g.width})
	r := sty.Radius * 0.75
	var p vg.Path
	p.Move(vg.Point{X: pt.X - r, Y: pt.Y - r})
	p.Line(vg.Point{X: pt.X + r, Y: pt.Y + r})
	p.Move(vg.Point{X: pt.X - r, Y: pt.Y + r})
	p.Line(vg.Point{X: pt.X + r, Y: pt.Y - r})
	c.Stroke(p)
}

// ringGlyph is a circle outline of a set stroke width, drawn around a point.
type ringGlyph struct{ width vg.Length }

func (g ringGlyph) DrawGlyph(c *draw.Canvas, sty draw.GlyphStyle, pt vg.Point) {
	c.SetLineStyle(draw.LineStyle{Color: sty.Color, Width: g.width})
	var p vg.Path
	p.Move(vg.Point{X: pt.X + sty.Radius, Y: pt.Y})
	p.Arc(pt, sty.Radius, 0, 2*math.Pi)
	p.Close()
	c.Stroke(p)
}

// note is a short label beside one point, above it unless below is set.
type note struct {
	x, y  float64
	text  string
	below bool
}

// noteLabels writes each note beside its point: to the right, or to the left
// for points in the right quarter of the chart so that labels stay inside it;
// above or below as the note asks, and on the other side when that would
// overlap a label already placed.
type noteLabels struct {
	notes []note
	style text.Style
}

const noteGap = 5 // points between a marker's centre and its label

// placement returns the text style and offset from its point of note nt,
// on the side below says.
func (n *noteLabels) placement(p *plot.Plot, nt note, below bool) (text.Style, vg.Point) {
	sty := n.style
	off := vg.Point{X: noteGap, Y: noteGap * 0.6}
	if p.X.Norm(nt.x) > 0.75 {
		sty.XAlign = draw.XRight
		off.X = -noteGap
	}
	if below {
		sty.YAlign = draw.YTop
		off.Y = -off.Y
	}
	return sty, off
}

func (n *noteLabels) Plot(c draw.Canvas, p *plot.Plot) {
	trX, trY := p.Transforms(&c)
	var taken []vg.Rectangle
	for _, nt := range n.notes {
		at := vg.Point{X: trX(nt.x), Y: trY(nt.y)}
		if !c.Contains(at) {
			continue
		}
		sty, off := n.placement(p, nt, nt.below)
		r := sty.Rectangle(nt.text).Add(at.Add(off))
		if overlapsAny(r, taken) {
			sty, off = n.placement(p, nt, !nt.below)
			r = sty.Rectangle(nt.text).Add(at.Add(off))
		}
		taken = append(taken, r)
		// A pale backing keeps the label legible where it crosses a line.
		const pad = 1
		c.FillPolygon(colHalo, []vg.Point{
			{X: r.Min.X - pad, Y: r.Min.Y}, {X: r.Max.X + pad, Y: r.Min.Y},
			{X: r.Max.X + pad, Y: r.Max.Y}, {X: r.Min.X - pad, Y: r.Max.Y},
		})
		c.FillText(sty, at.Add(off), nt.text)
	}
}

func overlapsAny(r vg.Rectangle, others []vg.Rectangle) bool {
	for _, o := range others {
		if r.Min.X < o.Max.X && o.Min.X < r.Max.X && r.Min.Y < o.Max.Y && o.Min.Y < r.Max.Y {
			return true
		}
	}
	return false
}

// GlyphBoxes reserves room for the labels, on either side, so the plot does
// not clip them.
func (n *noteLabels) GlyphBoxes(p *plot.Plot) []plot.GlyphBox {
	var boxes []plot.GlyphBox
	for _, nt := range n.notes {
		for _, below := range []bool{false, true} {
			sty, off := n.placement(p, nt, below)
			boxes = append(boxes, plot.GlyphBox{
				X:         p.X.Norm(nt.x),
				Y:         p.Y.Norm(nt.y),
				Rectangle: sty.Rectangle(nt.text).Add(off),
			})
		}
	}
	return boxes
}
