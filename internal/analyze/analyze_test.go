package analyze

import (
	"context"
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"strings"
	"testing"

	"github.com/costdrift/costdrift/internal/costdrift"
)

// Invented data for ground-truth recovery: each test designs a cost
// behaviour and checks that the analysis finds it.

func periods(n int) []string {
	out := make([]string, n)
	for i := range out {
		out[i] = fmt.Sprintf("%d-%02d", 2023+(i+6)/12, (i+6)%12+1)
	}
	return out
}

// activity draws a driver series of n+lead values around level.
func activity(r *rand.Rand, n, lead int, level, spread float64) []float64 {
	v := make([]float64, n+lead)
	for i := range v {
		v[i] = level * (1 + spread*(2*r.Float64()-1))
	}
	return v
}

func noisy(r *rand.Rand, v, cv float64) float64 { return v * (1 + cv*r.NormFloat64()) }

var defaults = Settings{MinPeriods: 12, Lags: []int{0, 1}, Alpha: 0.05}

func panelOf(n int, cost []float64, drivers ...costdrift.DriverSeries) *costdrift.Panel {
	return &costdrift.Panel{
		Periods: periods(n), MaxLag: 1,
		Objects: []costdrift.ObjectSeries{{Object: costdrift.CostObject{Account: "6200", CostCenter: "WELD"}, Cost: cost}},
		Drivers: drivers,
	}
}

func TestClassifyRecoversDesignedBehaviour(t *testing.T) {
	const n = 36
	tests := []struct {
		name      string
		cost      func(r *rand.Rand, hours, frames []float64, i int) float64
		class     costdrift.Class
		driver    string
		lag       int
		fixed     float64 // expected formula, with tolerance tol (relative)
		rate      float64
		tol       float64
		reasonHas string
	}{
		{"fixed", func(r *rand.Rand, _, _ []float64, _ int) float64 { return noisy(r, 4200, 0.02) },
			costdrift.Fixed, "", 0, 4200, 0, 0.02, "varies"},
		{"variable on hours", func(r *rand.Rand, h, _ []float64, i int) float64 { return noisy(r, 2.35*h[i+1], 0.02) },
			costdrift.Variable, "machine_hours", 0, 0, 2.35, 0.02, "fixed part not significant"},
		{"mixed on hours", func(r *rand.Rand, h, _ []float64, i int) float64 { return noisy(r, 1850+2.35*h[i+1], 0.01) },
			costdrift.Mixed, "machine_hours", 0, 1850, 2.35, 0.1, "significant fixed part"},
		{"mixed with a lag", func(r *rand.Rand, h, _ []float64, i int) float64 { return noisy(r, 900+1.1*h[i], 0.01) },
			costdrift.Mixed, "machine_hours", 1, 900, 1.1, 0.1, "of the period before"},
		{"frames beat a correlated driver", func(r *rand.Rand, _, f []float64, i int) float64 { return noisy(r, 18.4*f[i+1], 0.01) },
			costdrift.Variable, "frames_built", 0, 0, 18.4, 0.02, "frames built"},
		{"unexplained", func(r *rand.Rand, _, _ []float64, _ int) float64 { return 2500 * math.Exp(0.35*r.NormFloat64()) },
			costdrift.Unexplained, "", 0, 0, 0, 0, "more than 10 %"},
		{"tiny variable share is fixed", func(r *rand.Rand, h, _ []float64, i int) float64 { return 20000 + 0.5*h[i+1] + 2*r.NormFloat64() },
			costdrift.Fixed, "", 0, 20000 + 0.5*1000, 0, 0.01, "treated as fixed"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			r := rand.New(rand.NewPCG(7, 11))
			hours := activity(r, n, 1, 1000, 0.4)
			frames := make([]float64, len(hours))
			for i := range frames {
				frames[i] = hours[i] * (1.1 + 0.3*r.Float64()) // correlated with hours, not the same
			}
			cost := make([]float64, n)
			for i := range cost {
				cost[i] = tc.cost(r, hours, frames, i)
			}
			p := panelOf(n, cost,
				costdrift.DriverSeries{Name: "frames_built", Unit: "frame", Values: frames},
				costdrift.DriverSeries{Name: "machine_hours", CostCenter: "WELD", Unit: "machine hour", Values: hours},
				costdrift.DriverSeries{Name: "orders", Unit: "order", Values: activity(r, n, 1, 300, 0.3)})
			res := Object(p, &p.Objects[0], defaults)
			b := res.Behaviour
			if b.Class != tc.class || b.Driver != tc.driver || (b.Driver != "" && b.Lag != tc.lag) {
				t.Fatalf("got %s on %q lag %d, want %s on %q lag %d\nreason: %s", b.Class, b.Driver, b.Lag, tc.class, tc.driver, tc.lag, b.Reason)
			}
			if tc.fixed != 0 && math.Abs(b.FixedPerPeriod-tc.fixed) > tc.tol*tc.fixed {
				t.Errorf("fixed per period = %.2f, want %.2f within %.0f %%", b.FixedPerPeriod, tc.fixed, 100*tc.tol)
			}
			if tc.rate != 0 && math.Abs(b.VariableRate-tc.rate) > tc.tol*tc.rate {
				t.Errorf("variable rate = %.4f, want %.4f within %.0f %%", b.VariableRate, tc.rate, 100*tc.tol)
			}
			if !strings.Contains(b.Reason, tc.reasonHas) || strings.Contains(b.Reason, "\n") {
				t.Errorf("reason %q should contain %q on one line", b.Reason, tc.reasonHas)
			}
			chosen := 0
			for _, f := range res.Fits {
				if f.Chosen {
					chosen++
				}
			}
			if chosen != 1 {
				t.Errorf("%d fits marked chosen, want exactly 1", chosen)
			}
			// 3 drivers x 2 lags, linear and proportional, plus the constant;
			// step fits for at most the 3 best-ranked drivers.
			byModel := map[costdrift.Model]int{}
			for _, f := range res.Fits {
				byModel[f.Model]++
			}
			if byModel[costdrift.ModelConstant] != 1 || byModel[costdrift.ModelLinear] != 6 || byModel[costdrift.ModelProportional] != 6 || byModel[costdrift.ModelStep] > StepCandidates {
				t.Errorf("fits stored by model: %v", byModel)
			}
		})
	}
}

func TestInsufficientData(t *testing.T) {
	cost := []float64{1, 2, 3, 4, 5, 6, 7, 8, 9, 10, 11, 12, 13, 14}
	for i := 0; i < 4; i++ {
		cost[i] = math.NaN() // the whole ledger was silent then
	}
	p := panelOf(len(cost), cost, costdrift.DriverSeries{Name: "frames_built", Values: make([]float64, len(cost)+1)})
	b := Object(p, &p.Objects[0], defaults).Behaviour
	if b.Class != costdrift.InsufficientData || b.N != 10 || !strings.Contains(b.Reason, "only 10 closed periods") {
		t.Fatalf("got %s n=%d (%s), want insufficient_data with n=10", b.Class, b.N, b.Reason)
	}
}

// A significant negative slope is reported and never used (README, The method).
func TestNegativeSlopeIsImplausible(t *testing.T) {
	const n = 30
	r := rand.New(rand.NewPCG(3, 5))
	x := activity(r, n, 1, 100, 0.5)
	cost := make([]float64, n)
	for i := range cost {
		cost[i] = 9000 - 20*x[i+1] + 20*r.NormFloat64()
	}
	p := panelOf(n, cost, costdrift.DriverSeries{Name: "orders", Values: x})
	res := Object(p, &p.Objects[0], defaults)
	if res.Behaviour.Driver != "" || !strings.Contains(res.Behaviour.Reason, "negative slope") {
		t.Fatalf("got %s on %q: %s", res.Behaviour.Class, res.Behaviour.Driver, res.Behaviour.Reason)
	}
	implausible := 0
	for _, f := range res.Fits {
		if f.Implausible {
			implausible++
			if f.Significant || f.Chosen {
				t.Errorf("an implausible fit must not be significant or chosen: %+v", f)
			}
		}
	}
	if implausible == 0 {
		t.Error("no fit marked implausible")
	}
}

// A cost centre's own series wins over the company-wide one of the same name.
func TestOwnCostCentreSeriesWins(t *testing.T) {
	const n = 24
	r := rand.New(rand.NewPCG(9, 9))
	own := activity(r, n, 1, 500, 0.5)
	company := activity(r, n, 1, 2000, 0.5)
	cost := make([]float64, n)
	for i := range cost {
		cost[i] = noisy(r, 3*own[i+1], 0.01)
	}
	p := panelOf(n, cost,
		costdrift.DriverSeries{Name: "machine_hours", Values: company},
		costdrift.DriverSeries{Name: "machine_hours", CostCenter: "WELD", Values: own},
		costdrift.DriverSeries{Name: "machine_hours", CostCenter: "PAINT", Values: company})
	b := Object(p, &p.Objects[0], defaults).Behaviour
	if b.Class != costdrift.Variable || math.Abs(b.VariableRate-3) > 0.05 {
		t.Fatalf("got %s rate %.3f, want variable at 3 on WELD's own machine hours", b.Class, b.VariableRate)
	}
}

// Holm's step-down adjustment, worked by hand from its definition
// (adjusted p_(i) = max over j <= i of min(1, (m-j+1) p_(j)); Holm 1979);
// the same values as R's p.adjust(c(.01,.04,.03,.02,.05), "holm"), recalled
// from memory of that function's definition.
func TestHolmAdjustment(t *testing.T) {
	raw := []float64{0.01, 0.04, 0.03, 0.02, 0.05}
	want := []float64{0.05, 0.09, 0.09, 0.08, 0.09}
	var cands []*candidate
	for _, p := range raw {
		cands = append(cands, &candidate{linear: regressionWithSlopeP(p)})
	}
	adjust(cands, 0.085)
	for i, c := range cands {
		if math.Abs(c.adjustedP-want[i]) > 1e-12 {
			t.Errorf("adjusted p[%d] = %g, want %g", i, c.adjustedP, want[i])
		}
		if significant := want[i] < 0.085; c.plausible != significant {
			t.Errorf("candidate %d significant = %v, want %v", i, c.plausible, significant)
		}
	}
}

// Multiple testing: a cost that follows no driver must not be pinned on
// whichever of many random series happens to correlate with it. With Holm's
// correction the share of random costs given a driver stays near alpha;
// without it, 30 drivers x 2 lags would find one in most of them.
func TestRandomCostRarelyGetsADriver(t *testing.T) {
	const n, objects, drivers = 36, 300, 30
	r := rand.New(rand.NewPCG(2026, 12))
	var ds []costdrift.DriverSeries
	for d := 0; d < drivers; d++ {
		ds = append(ds, costdrift.DriverSeries{Name: fmt.Sprintf("driver_%02d", d), Values: activity(r, n, 1, 100, 0.5)})
	}
	withDriver := 0
	for o := 0; o < objects; o++ {
		cost := make([]float64, n)
		for i := range cost {
			cost[i] = 1000 + 300*r.NormFloat64()
		}
		p := panelOf(n, cost, ds...)
		if Object(p, &p.Objects[0], defaults).Behaviour.Driver != "" {
			withDriver++
		}
	}
	// Family-wise error at most alpha = 5 % (15 of 300); allow binomial
	// spread up to 8 %.
	rate := float64(withDriver) / objects
	t.Logf("%d of %d random costs given a driver (%.1f %%)", withDriver, objects, 100*rate)
	if rate > 0.08 {
		t.Errorf("%.1f %% of random costs were given a driver, want at most 8 %%", 100*rate)
	}
}

// A panic in one object's analysis is returned as that object's error and
// the other objects are still analysed. A cost-centre driver series
// shorter than the window breaks Panel's precondition for the one object of
// that centre; it stands in for a defect.
func TestPanicInOneObjectIsContained(t *testing.T) {
	const n = 24
	r := rand.New(rand.NewPCG(3, 4))
	cost := make([]float64, n)
	for i := range cost {
		cost[i] = noisy(r, 4200, 0.02)
	}
	p := panelOf(n, cost)
	broken := costdrift.CostObject{Account: "6300", CostCenter: "PAINT"}
	p.Objects = append(p.Objects, costdrift.ObjectSeries{Object: broken, Cost: cost})
	p.Drivers = append(p.Drivers, costdrift.DriverSeries{Name: "paint_hours", CostCenter: "PAINT", Values: []float64{1, 2}})
	results, err := Panel(context.Background(), p, defaults)
	if err != nil || len(results) != 2 {
		t.Fatalf("%d results (%v), want 2", len(results), err)
	}
	if results[0].Err != nil || results[0].Behaviour.Class != costdrift.Fixed {
		t.Errorf("the sound object: err %v, class %q, want fixed", results[0].Err, results[0].Behaviour.Class)
	}
	if err := results[1].Err; err == nil || !strings.HasPrefix(err.Error(), "analyze 6300/PAINT: internal error: ") {
		t.Errorf("the broken object: err %v", err)
	}
	if results[1].Behaviour.Object != broken || len(results[1].Fits) != 0 || !strings.Contains(results[1].Stack, "objectRecovered") {
		t.Errorf("the broken object's result: %+v", results[1].Behaviour)
	}
}

// An object the panel marks unusable (its cost in a period is beyond what
// the store can add up) comes back as that object's error with the reason,
// and the other objects are still analysed.
func TestUnusableObjectIsSkippedWithItsReason(t *testing.T) {
	const n = 24
	r := rand.New(rand.NewPCG(5, 6))
	cost := make([]float64, n)
	for i := range cost {
		cost[i] = noisy(r, 4200, 0.02)
	}
	p := panelOf(n, cost)
	unusable := costdrift.CostObject{Account: "6300", CostCenter: "PAINT"}
	const reason = "its lines in 2025-03 add up to more than an int64 of minor units holds"
	p.Objects = append(p.Objects, costdrift.ObjectSeries{Object: unusable, Cost: cost, Unusable: reason})
	results, err := Panel(context.Background(), p, defaults)
	if err != nil || len(results) != 2 {
		t.Fatalf("%d results (%v), want 2", len(results), err)
	}
	if results[0].Err != nil || results[0].Behaviour.Class != costdrift.Fixed {
		t.Errorf("the sound object: err %v, class %q, want fixed", results[0].Err, results[0].Behaviour.Class)
	}
	if err := results[1].Err; err == nil || err.Error() != reason {
		t.Errorf("the unusable object: err %v, want %q", err, reason)
	}
	if results[1].Behaviour.Object != unusable || results[1].Behaviour.Class != "" || len(results[1].Fits) != 0 || results[1].Stack != "" {
		t.Errorf("the unusable object's result: %+v, stack %q", results[1].Behaviour, results[1].Stack)
	}
}

// A cancelled analysis starts no further object and says so: a stopping
// daemon does not wait for the whole panel.
func TestPanelStopsWhenCancelled(t *testing.T) {
	const n = 24
	r := rand.New(rand.NewPCG(9, 10))
	cost := make([]float64, n)
	for i := range cost {
		cost[i] = noisy(r, 4200, 0.02)
	}
	p := panelOf(n, cost)
	for i := 0; i < 50; i++ {
		p.Objects = append(p.Objects, costdrift.ObjectSeries{Object: costdrift.CostObject{Account: fmt.Sprint(7000 + i)}, Cost: cost})
	}
	ctx, cancel := context.WithCancel(context.Background())
	cancel()
	results, err := Panel(ctx, p, defaults)
	if !errors.Is(err, context.Canceled) || results != nil {
		t.Errorf("Panel after cancel: %d results, %v; want none and context.Canceled", len(results), err)
	}
}
