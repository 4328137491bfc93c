package analyze

import (
	"math/rand/v2"
	"testing"

	"github.com/costdrift/costdrift/internal/costdrift"
)

// Detection study on invented series: how soon a change in behaviour is
// found, how well it is dated, and how often a stable cost is reclassified.

var driftSettings = Settings{MinPeriods: 12, Lags: []int{0, 1}, Alpha: 0.05, BreakAlpha: 0.01, Replicates: 999, Seed: 7}

// window is the 36-period panel of one object ending at period end
// (exclusive) of a longer history; drivers carry one lead-in period.
func window(cost []float64, ds []costdrift.DriverSeries, end int) *costdrift.Panel {
	const n = 36
	p := &costdrift.Panel{Periods: periods(n), MaxLag: 1,
		Objects: []costdrift.ObjectSeries{{Object: costdrift.CostObject{Account: "6000"}, Cost: cost[end-n : end]}}}
	for _, d := range ds {
		d.Values = d.Values[end-n : end+1]
		p.Drivers = append(p.Drivers, d)
	}
	return p
}

// detect runs the analysis 1, 2 and 3 periods after a change at period
// change of a cost history and reports whether a break was found by then,
// and whether the first one found is dated within one period.
func detect(cost []float64, ds []costdrift.DriverSeries, change int) (found, dated bool) {
	for after := 1; after <= 3; after++ {
		p := window(cost, ds, change+after)
		b := Object(p, &p.Objects[0], driftSettings).Behaviour
		if b.Break == nil {
			continue
		}
		// The window's period i is history period change+after-36+i.
		for i, per := range p.Periods {
			if per == b.Break.Period {
				at := change + after - 36 + i
				return true, at >= change-1 && at <= change+1
			}
		}
		return true, false
	}
	return false, false
}

func TestDetectionStudy(t *testing.T) {
	const trials, history, change = 200, 60, 50
	r := rand.New(rand.NewPCG(2026, 5))
	type tally struct{ found, dated int }
	var level, rate tally
	for k := 0; k < trials; k++ {
		ds := studyDrivers(r, history)
		// A fixed cost whose level rises 15 % at 5 % noise.
		fixed := make([]float64, history)
		for i := range fixed {
			v := 5000.0
			if i >= change {
				v *= 1.15
			}
			fixed[i] = v * (1 + 0.05*r.NormFloat64())
		}
		if f, d := detect(fixed, ds, change); f {
			level.found++
			if d {
				level.dated++
			}
		}
		// A variable cost whose rate falls 20 % at 5 % noise.
		x := driverValues(ds, "machine_hours")
		variable := make([]float64, history)
		for i := range variable {
			rt := 4.0
			if i >= change {
				rt *= 0.8
			}
			variable[i] = rt * x[i+1] * (1 + 0.05*r.NormFloat64())
		}
		if f, d := detect(variable, ds, change); f {
			rate.found++
			if d {
				rate.dated++
			}
		}
	}
	pct := func(n int) float64 { return 100 * float64(n) / trials }
	t.Logf("15 %% level shift: found within 3 periods %.1f %%, dated within one period %.1f %%", pct(level.found), pct(level.dated))
	t.Logf("20 %% rate shift:  found within 3 periods %.1f %%, dated within one period %.1f %%", pct(rate.found), pct(rate.dated))
	// Targets: found within 3 periods in at least 90 %, dated within one
	// period in at least 80 %.
	floors := map[string][2]float64{"level shift": {90, 80}, "rate shift": {90, 80}}
	for name, c := range map[string]tally{"level shift": level, "rate shift": rate} {
		if f := floors[name]; pct(c.found) < f[0] || pct(c.dated) < f[1] {
			t.Errorf("%s: found %.1f %% (want %.0f), dated %.1f %% (want %.0f)", name, pct(c.found), f[0], pct(c.dated), f[1])
		}
	}
}

// On stable costs, twelve monthly analyses in a row must reclassify at most
// 2 % of objects. Each analysis gets the behaviour the store would hold
// as its prior (hysteresis), and a change of class or driver counts only
// when two analyses in a row see it, the store's rule for a change without a
// break.
func TestStableCostsAreNotReclassified(t *testing.T) {
	const trials = 150
	r := rand.New(rand.NewPCG(12, 34))
	reclassified, breaks, objects := 0, 0, 0
	kinds := map[string]int{}
	for _, class := range []costdrift.Class{costdrift.Fixed, costdrift.Variable, costdrift.Mixed} {
		for k := 0; k < trials; k++ {
			ds := studyDrivers(r, 48)
			cost, _ := studyCost(r, class, ds, 48, 0.02+0.06*r.Float64())
			objects++
			var confirmed, pending *costdrift.Behaviour
			changed, broke := false, false
			for end := 37; end <= 48; end++ {
				p := window(cost, ds, end)
				s := driftSettings
				if confirmed != nil {
					s.Prior = map[string]costdrift.Behaviour{p.Objects[0].Object.String(): *confirmed}
				}
				b := Object(p, &p.Objects[0], s).Behaviour
				if b.Break != nil {
					broke = true
				}
				differs := func(a *costdrift.Behaviour) bool {
					return a.Class != b.Class || a.Driver != b.Driver || a.Lag != b.Lag
				}
				switch {
				case confirmed == nil:
					confirmed = &b
				case !differs(confirmed):
					pending = nil
				case pending != nil && !differs(pending):
					changed = true
					kinds[string(confirmed.Class)+">"+string(b.Class)+map[bool]string{true: " after a break", false: ""}[b.Break != nil]]++
					confirmed, pending = &b, nil
				default:
					pending = &b
				}
			}
			if changed {
				reclassified++
			}
			if broke {
				breaks++
			}
		}
	}
	t.Logf("stable costs over 12 analyses: %d of %d reclassified (%.1f %%), %d with a break found (%.1f %%); changes %v",
		reclassified, objects, 100*float64(reclassified)/float64(objects), breaks, 100*float64(breaks)/float64(objects), kinds)
	// 5 of 450 (1.1 %) before a formula that predicts the same costs was
	// kept (README, Drift: hysteresis), 1 since.
	if float64(reclassified) > 0.01*float64(objects) {
		t.Errorf("%d of %d stable costs reclassified, want at most 1 %%", reclassified, objects)
	}
}
