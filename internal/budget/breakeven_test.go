package budget

import (
	"errors"
	"math"
	"math/rand/v2"
	"sort"
	"strings"
	"testing"

	"github.com/costdrift/costdrift/internal/costdrift"
	"github.com/costdrift/costdrift/internal/fit"
)

// exactFixed and exactVariable are behaviours whose prediction terms carry
// (almost) no uncertainty, for
// the hand-worked figures.
func exactFixed(account string, level float64) costdrift.Behaviour {
	return costdrift.Behaviour{Object: costdrift.CostObject{Account: account}, Class: costdrift.Fixed, FixedPerPeriod: level,
		Prediction: &costdrift.PredictionTerms{Intercept: true, Coef: []float64{level}, Cov: []float64{1.0 / 24}, N: 24, DF: 23}}
}

func exactVariable(account, driver string, rate, lo, hi float64) costdrift.Behaviour {
	return costdrift.Behaviour{Object: costdrift.CostObject{Account: account}, Class: costdrift.Variable, Driver: driver, VariableRate: rate,
		RangeMin: lo, RangeMax: hi,
		Prediction: &costdrift.PredictionTerms{Coef: []float64{rate}, Cov: []float64{1e-7}, N: 24, DF: 23}}
}

func noPairs(*costdrift.Behaviour, string) ([]float64, []float64) { return nil, nil }
func noHeld(*costdrift.Behaviour, string) (float64, bool)         { return 0, false }

// Common practice, hand-worked: fixed costs 60,000 a period, price 50,
// variable cost 30 a unit: contribution 20 a unit (ratio 40 %), break-even
// 60,000 / 20 = 3,000 units or 150,000 of revenue; at 4,000 units the
// margin of safety is 1,000 units (25 %), operating income 20,000 on a
// contribution of 80,000, so operating leverage 80,000 / 20,000 = 4.
func TestBreakEvenHandWorked(t *testing.T) {
	in := BreakEvenInput{Driver: "units", Price: 50, Reference: 4000, Pairs: noPairs, Held: noHeld,
		Behaviours: []costdrift.Behaviour{exactFixed("6000", 45000), exactFixed("6100", 15000), exactVariable("5000", "units", 30, 1000, 6000)}}
	res, err := BreakEvenOf(in)
	if err != nil {
		t.Fatal(err)
	}
	for _, c := range []struct {
		name      string
		got, want float64
	}{
		{"fixed", res.Fixed.Value, 60000},
		{"variable per unit", res.Variable.Value, 30},
		{"contribution per unit", res.Contribution.Value, 20},
		{"contribution ratio", res.Ratio.Value, 0.40},
		{"break-even volume", res.Volume.Value, 3000},
		{"break-even revenue", res.Revenue.Value, 150000},
		{"operating income at 4,000", res.Income.Value, 20000},
		{"margin of safety", res.Safety.Value, 1000},
		{"margin of safety ratio", res.SafetyRatio.Value, 0.25},
		{"operating leverage", res.Leverage.Value, 4},
	} {
		if math.Abs(c.got-c.want) > 1e-9*math.Max(1, math.Abs(c.want)) {
			t.Errorf("%s = %v, want %v", c.name, c.got, c.want)
		}
	}
	// Without scatter around the formulas the intervals are the figures.
	if math.Abs(res.Volume.Low-3000) > 1e-6 || math.Abs(res.Volume.High-3000) > 1e-6 {
		t.Errorf("break-even interval %v – %v, want 3000 – 3000 with S = 0", res.Volume.Low, res.Volume.High)
	}
	if res.RangeLow != 1000 || res.RangeHigh != 6000 {
		t.Errorf("relevant range %v – %v, want 1000 – 6000", res.RangeLow, res.RangeHigh)
	}
	if len(res.Parts) != 3 || res.Parts[0].PerUnit != 30 || res.Parts[1].Fixed != 45000 {
		t.Errorf("parts = %+v", res.Parts)
	}
}

// The break-even volume outside the formulas' relevant range is said.
func TestBreakEvenOutsideRelevantRange(t *testing.T) {
	in := BreakEvenInput{Driver: "units", Price: 50, Reference: 4000, Pairs: noPairs, Held: noHeld,
		Behaviours: []costdrift.Behaviour{exactFixed("6000", 60000), exactVariable("5000", "units", 30, 3500, 6000)}}
	res, err := BreakEvenOf(in)
	if err != nil {
		t.Fatal(err)
	}
	if !strings.Contains(strings.Join(res.Notes, "\n"), "break-even volume 3,000 lies outside the relevant range 3,500 to 6,000") {
		t.Errorf("notes = %q, want the break-even outside the range said", res.Notes)
	}
}

func TestBreakEvenBadInput(t *testing.T) {
	fixedOnly := BreakEvenInput{Driver: "units", Price: 50, Reference: math.NaN(), Pairs: noPairs, Held: noHeld,
		Behaviours: []costdrift.Behaviour{exactFixed("6000", 60000), exactVariable("5000", "hours", 30, 1, 2)}}
	if _, err := BreakEvenOf(fixedOnly); err == nil || !strings.Contains(err.Error(), "no cost formula in scope uses units") {
		t.Errorf("volume driver no cost uses: err = %v", err)
	}
	low := BreakEvenInput{Driver: "units", Price: 25, Reference: math.NaN(), Pairs: noPairs, Held: noHeld,
		Behaviours: []costdrift.Behaviour{exactFixed("6000", 60000), exactVariable("5000", "units", 30, 1000, 6000)}}
	_, err := BreakEvenOf(low)
	if !errors.Is(err, ErrNoBreakEven) || !strings.Contains(err.Error(), "the price 25.00 does not exceed the variable cost of 30.00 per unit of units") {
		t.Errorf("price below the variable cost: err = %v", err)
	}
}

// A cost on another driver is brought onto the volume through the fitted
// relation of the drivers: machine hours exactly 0.5 per unit, at 40 an
// hour, add 20 a unit (hand-worked).
func TestBreakEvenThroughRelation(t *testing.T) {
	units := []float64{1000, 1500, 2000, 2500, 3000, 3500, 4000}
	hours := make([]float64, len(units))
	for i, u := range units {
		hours[i] = 0.5 * u
	}
	mh := exactVariable("5300", "machine_hours", 40, 500, 2000)
	in := BreakEvenInput{Driver: "units", Price: 50, Reference: 4000, Held: noHeld,
		Pairs: func(b *costdrift.Behaviour, other string) ([]float64, []float64) {
			if other != "machine_hours" {
				t.Fatalf("pairs asked for %s", other)
			}
			return units, hours
		},
		Behaviours: []costdrift.Behaviour{exactFixed("6000", 30000), exactVariable("5000", "units", 10, 500, 5000), mh}}
	res, err := BreakEvenOf(in)
	if err != nil {
		t.Fatal(err)
	}
	if math.Abs(res.Variable.Value-30) > 1e-9 || math.Abs(res.Volume.Value-1500) > 1e-6 {
		t.Errorf("variable %v, break-even %v; want 30 and 30,000 / 20 = 1,500", res.Variable.Value, res.Volume.Value)
	}
	if res.RangeLow != 1000 || res.RangeHigh != 4000 {
		t.Errorf("relevant range %v – %v, want the relation's 1000 – 4000", res.RangeLow, res.RangeHigh)
	}
	if !strings.Contains(res.Parts[1].How, "through machine_hours = ") {
		t.Errorf("how = %q", res.Parts[1].How)
	}
}

// The break-even volume's 95 % interval, checked by simulation: data drawn
// from a mixed formula (cost = 60,000 + 30·Q + ε, σ = 4,000) at the same
// 24 volumes, fitted by least squares, their prediction terms turned into
// the interval at price 50; the interval must hold the true break-even,
// 3,000, in 95 % of the draws (± 3 binomial standard errors).
func TestBreakEvenIntervalCoverage(t *testing.T) {
	r := rand.New(rand.NewPCG(19, 3))
	x := make([]float64, 24)
	for i := range x {
		x[i] = 2000 + 150*float64(i)
	}
	const draws = 2000
	covered := 0
	y := make([]float64, len(x))
	for range draws {
		for i := range x {
			y[i] = 60000 + 30*x[i] + 4000*r.NormFloat64()
		}
		reg, err := fit.Line(x, y)
		if err != nil {
			t.Fatal(err)
		}
		terms := costdrift.PredictionTerms(reg.Terms())
		b := costdrift.Behaviour{Object: costdrift.CostObject{Account: "5000"}, Class: costdrift.Mixed, Driver: "units",
			FixedPerPeriod: reg.Coef[0], VariableRate: reg.Coef[1], RangeMin: 2000, RangeMax: 5450, Prediction: &terms}
		res, err := BreakEvenOf(BreakEvenInput{Driver: "units", Price: 50, Reference: 4000, Pairs: noPairs, Held: noHeld, Behaviours: []costdrift.Behaviour{b}})
		if err != nil {
			t.Fatal(err)
		}
		if res.Volume.Low <= 3000 && 3000 <= res.Volume.High {
			covered++
		}
	}
	p := float64(covered) / draws
	if se := math.Sqrt(0.95 * 0.05 / draws); math.Abs(p-0.95) > 3*se {
		t.Errorf("coverage %.4f of %d draws, want 0.95 ± %.4f", p, draws, 3*se)
	}
}

// Two objects' intervals combine: the fixed cost's interval is the sum's,
// the t quantile at Welch–Satterthwaite's degrees of freedom. Checked by
// simulation from the same prediction terms: coefficients drawn from each
// formula's sampling distribution (normal with covariance S²·Cov, S
// scaled by sqrt(χ²_df/df)), the fixed cost's 2.5 and 97.5 % quantiles
// over the draws against the interval, within 3 % of its half-width.
func TestBreakEvenFixedIntervalBySimulation(t *testing.T) {
	mk := func(account string, level, s float64, n int) costdrift.Behaviour {
		return costdrift.Behaviour{Object: costdrift.CostObject{Account: account}, Class: costdrift.Fixed, FixedPerPeriod: level,
			Prediction: &costdrift.PredictionTerms{Intercept: true, Coef: []float64{level}, Cov: []float64{1 / float64(n)}, S: s, N: n, DF: n - 1}}
	}
	a, b := mk("6000", 40000, 3000, 12), mk("6100", 20000, 2000, 30)
	res, err := BreakEvenOf(BreakEvenInput{Driver: "units", Price: 50, Reference: math.NaN(), Pairs: noPairs, Held: noHeld,
		Behaviours: []costdrift.Behaviour{a, b, exactVariable("5000", "units", 30, 1000, 6000)}})
	if err != nil {
		t.Fatal(err)
	}
	r := rand.New(rand.NewPCG(19, 4))
	const draws = 200000
	sums := make([]float64, draws)
	for i := range sums {
		for _, bh := range []costdrift.Behaviour{a, b} {
			p := bh.Prediction
			// t-distributed: normal over sqrt(χ²_df / df).
			chi := 0.0
			for range p.DF {
				z := r.NormFloat64()
				chi += z * z
			}
			sums[i] += p.Coef[0] + p.S*math.Sqrt(p.Cov[0])*r.NormFloat64()/math.Sqrt(chi/float64(p.DF))
		}
	}
	lo, hi := quantile(sums, 0.025), quantile(sums, 0.975)
	half := (res.Fixed.High - res.Fixed.Low) / 2
	if math.Abs(lo-res.Fixed.Low) > 0.03*half || math.Abs(hi-res.Fixed.High) > 0.03*half {
		t.Errorf("fixed interval %.0f – %.0f, simulated %.0f – %.0f", res.Fixed.Low, res.Fixed.High, lo, hi)
	}
}

func quantile(v []float64, p float64) float64 {
	s := append([]float64(nil), v...)
	sort.Float64s(s)
	return s[int(p*float64(len(s)-1))]
}

// With a step cost the profit can cross zero twice (hand-worked, common
// practice for break-even with step costs): fixed 10,000, 30 a unit,
// supervision 6,000 up to 999 units and 12,000 from 1,000, price 50:
// 16,000 / 20 = 800 lies in the lower step, 22,000 / 20 = 1,100 in the
// upper; the break-even is 1,100, above which every volume profits, and
// 800 is said.
func TestBreakEvenWithStepCosts(t *testing.T) {
	step := costdrift.Behaviour{Object: costdrift.CostObject{Account: "6300"}, Class: costdrift.Step, Driver: "units",
		Steps:      []costdrift.StepLevel{{From: 500, To: 999, Level: 6000}, {From: 1000, To: 2000, Level: 12000}},
		Prediction: &costdrift.PredictionTerms{Coef: []float64{6000, 12000}, Cov: []float64{1.0 / 12, 0, 0, 1.0 / 12}, N: 24, DF: 22, Levels: true}}
	in := BreakEvenInput{Driver: "units", Price: 50, Reference: 1500, Pairs: noPairs, Held: noHeld,
		Behaviours: []costdrift.Behaviour{exactFixed("6000", 10000), exactVariable("5000", "units", 30, 500, 2000), step}}
	res, err := BreakEvenOf(in)
	if err != nil {
		t.Fatal(err)
	}
	if math.Abs(res.Volume.Value-1100) > 1e-9 || math.Abs(res.Fixed.Value-22000) > 1e-9 {
		t.Errorf("break-even %v at fixed %v, want 1,100 at 22,000", res.Volume.Value, res.Fixed.Value)
	}
	if !strings.Contains(strings.Join(res.Notes, "\n"), "also crosses zero at 800") {
		t.Errorf("notes = %q, want the crossing at 800 said", res.Notes)
	}
	// At 1,500 units: income 20·1,500 − 22,000 = 8,000, leverage 30,000 /
	// 8,000 = 3.75.
	if math.Abs(res.Income.Value-8000) > 1e-9 || math.Abs(res.Leverage.Value-3.75) > 1e-9 {
		t.Errorf("income %v, leverage %v; want 8,000 and 3.75", res.Income.Value, res.Leverage.Value)
	}
}

// The relation between the drivers carries its own uncertainty: with the
// cost formulas exact (5 a unit, 40 an hour), the cost per unit is
// 5 + 40·b̂ and its
// variance 40²·s²/Sxx, s² = RSS/(n − 2), the slope's variance of a
// straight line by least squares (common practice), on n − 2 degrees of
// freedom.
func TestBreakEvenRelationUncertainty(t *testing.T) {
	units := []float64{1000, 1400, 1800, 2200, 2600, 3000, 3400, 3800}
	noise := []float64{12, -20, 5, 30, -25, 8, -14, 4}
	hours := make([]float64, len(units))
	for i, u := range units {
		hours[i] = 20 + 0.5*u + noise[i]
	}
	var mx, my float64
	for i := range units {
		mx += units[i]
		my += hours[i]
	}
	n := float64(len(units))
	mx, my = mx/n, my/n
	var sxx, sxy float64
	for i := range units {
		sxx += (units[i] - mx) * (units[i] - mx)
		sxy += (units[i] - mx) * (hours[i] - my)
	}
	b := sxy / sxx
	a := my - b*mx
	var rss float64
	for i := range units {
		e := hours[i] - a - b*units[i]
		rss += e * e
	}
	half := tQuantile(0.05, n-2) * 40 * math.Sqrt(rss/(n-2)/sxx)
	mh := exactVariable("5300", "machine_hours", 40, 500, 2000)
	mh.Prediction.Cov = []float64{0}
	in := BreakEvenInput{Driver: "units", Price: 50, Reference: math.NaN(), Held: noHeld,
		Pairs:      func(*costdrift.Behaviour, string) ([]float64, []float64) { return units, hours },
		Behaviours: []costdrift.Behaviour{exactFixed("6000", 30000), exactVariable("5000", "units", 5, 500, 5000), mh}}
	in.Behaviours[0].Prediction.Cov = []float64{0}
	in.Behaviours[1].Prediction.Cov = []float64{0}
	res, err := BreakEvenOf(in)
	if err != nil {
		t.Fatal(err)
	}
	if math.Abs(res.Variable.Value-(5+40*b)) > 1e-9 {
		t.Errorf("variable per unit %v, want 5 + 40·b̂ = %v", res.Variable.Value, 5+40*b)
	}
	if got := res.Variable.High - res.Variable.Value; math.Abs(got-half) > 1e-9*half {
		t.Errorf("interval half-width %v, want t·40·s/√Sxx = %v", got, half)
	}
	if math.Abs(res.Fixed.Value-(30000+40*a)) > 1e-6 {
		t.Errorf("fixed %v, want 30,000 + 40·â = %v", res.Fixed.Value, 30000+40*a)
	}
}
