package analyze

import (
	"math"
	"math/rand/v2"
	"testing"

	"github.com/costdrift/costdrift/internal/costdrift"
	"github.com/costdrift/costdrift/internal/fit"
)

// checkPrediction requires b's prediction terms to be complete and to give
// b's own formula: the budget is the formula and its interval comes from
// the terms, so the two must describe the same fit.
func checkPrediction(t *testing.T, what string, b costdrift.Behaviour) {
	t.Helper()
	if b.Class == costdrift.InsufficientData {
		if b.Prediction != nil {
			t.Errorf("%s: insufficient data with prediction terms", what)
		}
		return
	}
	if b.Prediction == nil {
		t.Errorf("%s: %s without prediction terms (%s)", what, b.Class, b.Reason)
		return
	}
	if err := b.Prediction.Check(); err != nil {
		t.Errorf("%s: %v", what, err)
		return
	}
	p := fit.Terms(*b.Prediction)
	same := func(got, want float64) bool { return math.Abs(got-want) <= 1e-9*math.Max(1, math.Abs(want)) }
	provisional := b.Break != nil && b.Break.Provisional
	switch {
	case b.Class == costdrift.Step && !provisional:
		if !p.Levels || len(p.Coef) != len(b.Steps) {
			t.Errorf("%s: step with %d levels, terms %+v", what, len(b.Steps), p)
			return
		}
		n := 0
		for g, s := range b.Steps {
			if y, _ := p.Predict(fit.StepRow(g, len(b.Steps))); !same(y, s.Level) {
				t.Errorf("%s: level %d is %v, the terms give %v", what, g, s.Level, y)
			}
			n += s.N
		}
		if n != p.N {
			t.Errorf("%s: levels hold %d periods, the terms %d", what, n, p.N)
		}
	case b.Class == costdrift.Fixed || b.Class == costdrift.Unexplained || b.Class == costdrift.Step:
		if p.Regressors() != 0 {
			t.Errorf("%s: %s with %d regressors in its terms", what, b.Class, p.Regressors())
		}
		if y, _ := p.Predict(nil); !same(y, b.FixedPerPeriod) {
			t.Errorf("%s: fixed %v, the terms give %v", what, b.FixedPerPeriod, y)
		}
	default:
		x := []float64{(b.RangeMin + b.RangeMax) / 2}
		want := b.VariableRate * x[0]
		if b.Class == costdrift.Mixed {
			want += b.FixedPerPeriod
		}
		if b.Driver2 != "" {
			x = append(x, 250)
			want += b.VariableRate2 * 250
		}
		if p.Intercept != (b.Class == costdrift.Mixed) || p.Regressors() != len(x) {
			t.Errorf("%s: %s on %d driver(s), terms with intercept %v and %d regressors", what, b.Class, len(x), p.Intercept, p.Regressors())
			return
		}
		if y, _ := p.Predict(x); !same(y, want) {
			t.Errorf("%s: the formula gives %v at %v, the terms %v", what, want, x, y)
		}
	}
}

// Every class, with and without a second driver and a break (provisional
// and settled), stores prediction terms that give its formula.
func TestPredictionTermsGiveTheFormula(t *testing.T) {
	r := rand.New(rand.NewPCG(11, 12))
	seen := map[string]int{}
	for k := 0; k < 60; k++ {
		ds := studyDrivers(r, 36)
		for _, class := range []costdrift.Class{costdrift.Fixed, costdrift.Variable, costdrift.Mixed, costdrift.Step, costdrift.Unexplained} {
			cost, _ := studyCost(r, class, ds, 36, 0.03)
			p := &costdrift.Panel{Periods: periods(36), MaxLag: 1,
				Objects: []costdrift.ObjectSeries{{Object: costdrift.CostObject{Account: "6000"}, Cost: cost}}, Drivers: ds}
			b := Object(p, &p.Objects[0], defaults).Behaviour
			checkPrediction(t, string(class), b)
			seen[string(b.Class)]++
		}
		// Two drivers.
		hours, orders := driverValues(ds, "machine_hours"), driverValues(ds, "orders")
		two := make([]float64, 36)
		for i := range two {
			two[i] = (1500 + 2.5*hours[i+1] + 4*orders[i+1]) * (1 + 0.02*r.NormFloat64())
		}
		p := &costdrift.Panel{Periods: periods(36), MaxLag: 1,
			Objects: []costdrift.ObjectSeries{{Object: costdrift.CostObject{Account: "6000"}, Cost: two}}, Drivers: ds}
		b := Object(p, &p.Objects[0], defaults).Behaviour
		checkPrediction(t, "two drivers", b)
		if b.Driver2 != "" {
			seen["two drivers"]++
		}
		// Breaks: a fixed level and a variable rate change, 4 and 20
		// periods before the window's end.
		ds = studyDrivers(r, 60)
		hours = driverValues(ds, "machine_hours")
		for _, after := range []int{4, 20} {
			change := 50 - after
			fixed, variable := make([]float64, 60), make([]float64, 60)
			for i := range fixed {
				level, rate := 5000.0, 2.4
				if i >= change {
					level, rate = 6500, 1.7
				}
				fixed[i] = level * (1 + 0.02*r.NormFloat64())
				variable[i] = rate * hours[i+1] * (1 + 0.02*r.NormFloat64())
			}
			for _, cost := range [][]float64{fixed, variable} {
				p := window(cost, ds, 50)
				b := Object(p, &p.Objects[0], driftSettings).Behaviour
				checkPrediction(t, "break", b)
				if b.Break != nil {
					if b.Break.Provisional {
						seen["provisional break"]++
					} else {
						seen["break"]++
					}
					if b.Break.PredictionBefore == nil || b.Break.PredictionBefore.Check() != nil {
						t.Errorf("break at %s without the terms of the formula before it", b.Break.Period)
					}
				}
			}
		}
	}
	t.Logf("behaviours checked: %v", seen)
	for _, want := range []string{"fixed", "variable", "mixed", "step", "unexplained", "two drivers", "break", "provisional break"} {
		if seen[want] == 0 {
			t.Errorf("no %s among the cases: the check did not cover it", want)
		}
	}
}
