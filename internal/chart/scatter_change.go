package chart

import (
	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg/draw"
)

// splitBefore returns s without its points before a change (Point.Before),
// the high-low indices moved to match, and those points: they are drawn
// apart, so that periods the formula was not fitted on do not read as its
// misfits.
func (s Scatter) splitBefore() (Scatter, plotter.XYs) {
	var before plotter.XYs
	kept := make([]Point, 0, len(s.Points))
	moved := make([]int, len(s.Points))
	for i, p := range s.Points {
		moved[i] = -1
		if p.Before {
			before = append(before, plotter.XY{X: p.Activity, Y: p.Cost})
			continue
		}
		moved[i] = len(kept)
		kept = append(kept, p)
	}
	if len(before) == 0 {
		return s, nil
	}
	s.Points = kept
	if s.HighLow != nil {
		h, l := moved[s.HighLow[0]], moved[s.HighLow[1]]
		s.HighLow = nil
		if h >= 0 && l >= 0 {
			s.HighLow = &[2]int{h, l}
		}
	}
	return s, before
}

// addBefore draws the points before a change as grey rings and returns
// their legend entry; nothing without any.
func addBefore(p *plot.Plot, before plotter.XYs) []legendItem {
	if len(before) == 0 {
		return nil
	}
	rings := mustScatter(before, draw.GlyphStyle{Color: colPrevious, Radius: pointR + 0.4, Shape: ringGlyph{width: 1.1}})
	p.Add(rings)
	return []legendItem{{"before the change (not fitted)", rings}}
}
