package analyze

import (
	"math"
	"slices"

	"github.com/costdrift/costdrift/internal/costdrift"
)

// StoredLines is how many straight-line fits of an object the store keeps
// beside the ones its behaviour rests on: the best-ranked, in the order
// explain lists them. With 30 drivers at two lags an object has 60
// candidates, and storing every fit of every object made the store grow by
// about 30 kB an object each analysis; explain fits the rest again from the
// stored data (Lines).
const StoredLines = 5

// Stored returns the fits of the result the store keeps: the constant; the
// StoredLines best straight lines (ranked first, by rank, then the others by
// leave-one-out error per period, as explain lists them); the straight line
// and the fit through the origin on the chosen driver and lag; the step
// fits; the two-driver fit; and every fit marked chosen.
func (r *Result) Stored() []costdrift.Fit {
	b := &r.Behaviour
	// The StoredLines best lines, kept in order as the lines come: an
	// insertion into a short list rather than a sort of them all.
	var best [StoredLines]int
	kept := 0
	for i := range r.Fits {
		if r.Fits[i].Model != costdrift.ModelLinear {
			continue
		}
		at := kept
		for at > 0 && lineBefore(&r.Fits[i], &r.Fits[best[at-1]]) {
			at--
		}
		if at == StoredLines {
			continue
		}
		if kept < StoredLines {
			kept++
		}
		copy(best[at+1:kept], best[at:kept-1])
		best[at] = i
	}
	isBest := func(i int) bool { return slices.Contains(best[:kept], i) }
	out := make([]costdrift.Fit, 0, StoredLines+8)
	for i := range r.Fits {
		f := &r.Fits[i]
		onChosen := b.Driver != "" && f.Driver == b.Driver && f.Lag == b.Lag
		switch {
		case f.Chosen, f.Model == costdrift.ModelLinear && isBest(i), f.Model == costdrift.ModelConstant, f.Model == costdrift.ModelStep, f.Model == costdrift.ModelTwoDriver,
			onChosen && (f.Model == costdrift.ModelLinear || f.Model == costdrift.ModelProportional):
			out = append(out, *f)
			fillRecordP(&out[len(out)-1])
		}
	}
	return out
}

// lineBefore orders straight-line fits as explain lists them: ranked ones
// by rank, then the others by leave-one-out error per period (unknown
// last), then by driver and lag.
func lineBefore(a, b *costdrift.Fit) bool {
	if (a.PlausibleRanked > 0) != (b.PlausibleRanked > 0) {
		return a.PlausibleRanked > 0
	}
	if a.PlausibleRanked > 0 && a.PlausibleRanked != b.PlausibleRanked {
		return a.PlausibleRanked < b.PlausibleRanked
	}
	pa, pb := pressPerPeriod(a), pressPerPeriod(b)
	if pa != pb {
		return pa < pb
	}
	if a.Driver != b.Driver {
		return a.Driver < b.Driver
	}
	return a.Lag < b.Lag
}

func pressPerPeriod(f *costdrift.Fit) float64 {
	if f.N == 0 || math.IsNaN(f.PRESS) {
		return math.Inf(1)
	}
	return f.PRESS / float64(f.N)
}

// Lines fits the straight line cost = a + b·driver on every driver-lag
// candidate of one object, as Object does before it chooses: each with its
// Holm-corrected p-value, its flags and its rank by leave-one-out error
// among the significant positive slopes. It is nil when the object has
// fewer than MinPeriods periods. The fits are Object's on the same panel
// and settings, except where Object's hysteresis (Settings.Prior) revived
// a prior driver that is no longer significant: that driver is the chosen
// one, whose fit the store keeps (Stored).
func Lines(p *costdrift.Panel, obj *costdrift.ObjectSeries, s Settings) []costdrift.Fit {
	n := 0
	for _, v := range obj.Cost {
		if !math.IsNaN(v) {
			n++
		}
	}
	if n < s.MinPeriods {
		return nil
	}
	cands := candidates(p, obj, s)
	adjust(cands, s.Alpha)
	rank(cands)
	out := make([]costdrift.Fit, 0, len(cands))
	for _, c := range cands {
		f := fitRecord(obj.Object, c.driver.Name, c.lag, costdrift.ModelLinear, c.linear, c.rangeMin, c.rangeMax)
		f.SlopeAdjustedP, f.Significant, f.Implausible, f.PlausibleRanked = c.adjustedP, c.plausible, c.negative, c.rank
		fillRecordP(&f)
		out = append(out, f)
	}
	return out
}
