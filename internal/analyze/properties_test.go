package analyze

import (
	"math"
	"math/rand/v2"
	"testing"

	"github.com/costdrift/costdrift/internal/costdrift"
)

// Properties the analysis must have whatever the data (common practice for
// a cost formula; they follow from least squares being equivariant).

func studyPanel(r *rand.Rand, class costdrift.Class, n int, cv float64) *costdrift.Panel {
	ds := studyDrivers(r, n)
	cost, _ := studyCost(r, class, ds, n, cv)
	return &costdrift.Panel{Periods: periods(n), MaxLag: 1,
		Objects: []costdrift.ObjectSeries{{Object: costdrift.CostObject{Account: "6000"}, Cost: cost}}, Drivers: ds}
}

func near(a, b, rel float64) bool {
	if math.IsNaN(a) && math.IsNaN(b) {
		return true
	}
	return math.Abs(a-b) <= rel*math.Max(1, math.Max(math.Abs(a), math.Abs(b)))
}

// Scaling every cost by k scales the formula by k and changes nothing else.
func TestScalingCostScalesFormula(t *testing.T) {
	r := rand.New(rand.NewPCG(11, 12))
	for _, class := range []costdrift.Class{costdrift.Fixed, costdrift.Variable, costdrift.Mixed, costdrift.Step, costdrift.Unexplained} {
		for k := 0; k < 20; k++ {
			p := studyPanel(r, class, 36, 0.04)
			before := Object(p, &p.Objects[0], defaults).Behaviour
			const scale = 1000.0 / 7
			for i := range p.Objects[0].Cost {
				p.Objects[0].Cost[i] *= scale
			}
			after := Object(p, &p.Objects[0], defaults).Behaviour
			if after.Class != before.Class || after.Driver != before.Driver || after.Lag != before.Lag {
				t.Fatalf("%s: scaling changed %s/%s/%d into %s/%s/%d", class, before.Class, before.Driver, before.Lag, after.Class, after.Driver, after.Lag)
			}
			if !near(after.FixedPerPeriod, scale*before.FixedPerPeriod, 1e-9) || !near(after.VariableRate, scale*before.VariableRate, 1e-9) ||
				!near(after.R2, before.R2, 1e-9) {
				t.Fatalf("%s: formula %g + %g scaled to %g + %g, want ×%g", class, before.FixedPerPeriod, before.VariableRate, after.FixedPerPeriod, after.VariableRate, scale)
			}
			for i := range before.Steps {
				if !near(after.Steps[i].Level, scale*before.Steps[i].Level, 1e-9) {
					t.Fatalf("step level %d not scaled", i)
				}
			}
		}
	}
}

// Shuffling the periods (with no lag to tie neighbours together) changes
// nothing: least squares does not know the order of its observations.
func TestReorderingPeriodsChangesNothing(t *testing.T) {
	r := rand.New(rand.NewPCG(13, 14))
	s := Settings{MinPeriods: 12, Lags: []int{0}, Alpha: 0.05}
	for _, class := range []costdrift.Class{costdrift.Fixed, costdrift.Variable, costdrift.Mixed, costdrift.Step} {
		for k := 0; k < 20; k++ {
			p := studyPanel(r, class, 36, 0.04)
			p.MaxLag = 0
			for i := range p.Drivers {
				p.Drivers[i].Values = p.Drivers[i].Values[1:] // no lead-in without lags
			}
			before := Object(p, &p.Objects[0], s).Behaviour
			perm := r.Perm(36)
			shuffle := func(v []float64) []float64 {
				out := make([]float64, len(v))
				for i, j := range perm {
					out[i] = v[j]
				}
				return out
			}
			p.Objects[0].Cost = shuffle(p.Objects[0].Cost)
			for i := range p.Drivers {
				p.Drivers[i].Values = shuffle(p.Drivers[i].Values)
			}
			after := Object(p, &p.Objects[0], s).Behaviour
			if after.Class != before.Class || after.Driver != before.Driver || !near(after.FixedPerPeriod, before.FixedPerPeriod, 1e-9) ||
				!near(after.VariableRate, before.VariableRate, 1e-9) || !near(after.R2, before.R2, 1e-9) {
				t.Fatalf("%s: reordering changed %+v into %+v", class, before, after)
			}
		}
	}
}

// Adding a driver that has nothing to do with the cost does not change the
// class or the driver of a clear case.
func TestUselessDriverChangesNothing(t *testing.T) {
	r := rand.New(rand.NewPCG(15, 16))
	for _, class := range []costdrift.Class{costdrift.Fixed, costdrift.Variable, costdrift.Mixed, costdrift.Step} {
		for k := 0; k < 20; k++ {
			p := studyPanel(r, class, 36, 0.03)
			before := Object(p, &p.Objects[0], defaults).Behaviour
			noise := make([]float64, 37)
			for i := range noise {
				noise[i] = 500 * (1 + 0.4*(2*r.Float64()-1))
			}
			p.Drivers = append(p.Drivers, costdrift.DriverSeries{Name: "visitors", Values: noise})
			after := Object(p, &p.Objects[0], defaults).Behaviour
			if after.Class != before.Class || after.Driver != before.Driver || after.Lag != before.Lag || after.Driver2 == "visitors" {
				t.Fatalf("%s: a useless driver changed %s/%s into %s/%s (second %q)", class, before.Class, before.Driver, after.Class, after.Driver, after.Driver2)
			}
		}
	}
}
