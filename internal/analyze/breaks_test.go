package analyze

import (
	"math"
	"math/rand/v2"
	"strings"
	"testing"

	"github.com/costdrift/costdrift/internal/budget"
	"github.com/costdrift/costdrift/internal/costdrift"
)

// provisionalPanel is 36 periods (2023-07 to 2026-06) of one freight cost on
// shipments, invented: before period 30 (2026-01) the cost is
// fixedBefore + rateBefore per shipment, from it fixedAfter + rateAfter,
// with 2 % noise; shipments vary ±45 % around 800. With zeroLast the newest
// period has no postings (a zero cost, as the window counts a period the
// ledger has postings in) at 1,200 shipments, which pulls a line fitted on
// the six periods since the break down at high activity.
func provisionalPanel(seed uint64, fixedBefore, rateBefore, fixedAfter, rateAfter float64, zeroLast bool) *costdrift.Panel {
	const n, change = 36, 30
	r := rand.New(rand.NewPCG(seed, 3))
	shipments := make([]float64, n+1) // one lead-in period for lag 1
	for i := range shipments {
		shipments[i] = 800 * (1 + 0.45*(2*r.Float64()-1))
	}
	cost := make([]float64, n)
	for i := range cost {
		fixed, rate := fixedBefore, rateBefore
		if i >= change {
			fixed, rate = fixedAfter, rateAfter
		}
		cost[i] = (fixed + rate*shipments[i+1]) * (1 + 0.02*r.NormFloat64())
	}
	if zeroLast {
		shipments[n] = 1200
		cost[n-1] = 0
	}
	return &costdrift.Panel{Periods: periods(n), MaxLag: 1,
		Objects: []costdrift.ObjectSeries{{Object: costdrift.CostObject{Account: "6400", CostCenter: "ASSY"}, Cost: cost}},
		Drivers: []costdrift.DriverSeries{{Name: "shipments", Unit: "shipment", Values: shipments}}}
}

// A provisional refit whose rate comes out negative does not use it, as the
// main analysis never uses a negative slope (README, The method and Drift):
// the rate from before the break is kept and only the fixed part is
// refitted on the periods since; where that leaves a negative fixed part,
// the cost is taken at its mean since the break; a variable cost keeps the
// formula from before. The budget at an activity far above the range is
// then not negative.
func TestProvisionalRefitNeverUsesANegativeRate(t *testing.T) {
	tests := []struct {
		name  string
		panel *costdrift.Panel
		class costdrift.Class
		// rate is the designed rate before the break, which the provisional
		// formula keeps (tolerance 5 %, the 2 % noise over 30 periods);
		// 0: the formula is the mean since the break.
		rate      float64
		reasonHas string
		// prior, when set, is the behaviour the object had before this
		// analysis, which keeps a mixed cost mixed over the whole window.
		prior *costdrift.Behaviour
	}{
		// Designed 1,500 + 11/shipment, from 2026-01 3,000 + 11/shipment.
		{"mixed: rate kept, fixed part refitted", provisionalPanel(4, 1500, 11, 3000, 11, true),
			costdrift.Mixed, 11, "the rate from before the break", nil},
		// Designed 1,500 + 11/shipment, from 2026-01 800 + 6/shipment: with
		// the old rate the fixed part since would be negative.
		{"mixed: mean since the break", provisionalPanel(6, 1500, 11, 800, 6, true),
			costdrift.Mixed, 0, "mean since the break", nil},
		// Designed 6,000 + 11/shipment, from 2026-01 −2,000 + 12/shipment,
		// the object mixed before this analysis: the refitted rate is
		// positive but its fixed part (about −2,450) is far below zero, and
		// with the old rate the fixed part since would be negative too.
		{"mixed: negative fixed part, mean since the break", provisionalPanel(8, 6000, 11, -2000, 12, false),
			costdrift.Mixed, 0, "too few periods since the change to estimate",
			&costdrift.Behaviour{Class: costdrift.Mixed, Driver: "shipments", FixedPerPeriod: 6000, VariableRate: 11, N: 36}},
		// Designed 12/shipment, from 2026-01 credits of 1/shipment.
		{"variable: formula from before kept", provisionalPanel(2, 0, 12, 0, -1, false),
			costdrift.Variable, 12, "the formula from before the break", nil},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			p := tc.panel
			s := driftSettings
			if tc.prior != nil {
				prior := *tc.prior
				prior.Object = p.Objects[0].Object
				s.Prior = map[string]costdrift.Behaviour{prior.Object.String(): prior}
			}
			b := Object(p, &p.Objects[0], s).Behaviour
			if b.Break == nil || !b.Break.Provisional || b.Break.Period != "2026-01" || b.Break.Periods != 6 {
				t.Fatalf("want a provisional break at 2026-01 with 6 periods since, got %+v (%s)", b.Break, b.Reason)
			}
			if b.Class != tc.class || b.Driver != "shipments" {
				t.Fatalf("the provisional behaviour keeps class %s on shipments, got %s on %q (%s)", tc.class, b.Class, b.Driver, b.Reason)
			}
			if b.VariableRate < 0 || b.FixedPerPeriod < 0 {
				t.Errorf("provisional formula %.2f + %.4f per shipment: a negative part is implausible for a cost (%s)", b.FixedPerPeriod, b.VariableRate, b.Reason)
			}
			if tc.rate > 0 && math.Abs(b.VariableRate-tc.rate) > 0.05*tc.rate {
				t.Errorf("rate %.4f, want the designed rate before the break, %v (±5 %%)", b.VariableRate, tc.rate)
			}
			if tc.rate == 0 {
				since := p.Objects[0].Cost[30:]
				if b.VariableRate != 0 || math.Abs(b.FixedPerPeriod-meanOf(since)) > 1e-9*meanOf(since) {
					t.Errorf("formula %.2f + %.4f per shipment, want the mean of the periods since the break, %.2f", b.FixedPerPeriod, b.VariableRate, meanOf(since))
				}
			}
			// The break's after side is the formula in force after it, and
			// the implausible refit is reported in the reason.
			if b.Break.FixedAfter != b.FixedPerPeriod || b.Break.RateAfter != b.VariableRate {
				t.Errorf("break after side %.2f + %.4f, the formula %.2f + %.4f", b.Break.FixedAfter, b.Break.RateAfter, b.FixedPerPeriod, b.VariableRate)
			}
			if !strings.Contains(b.Reason, "implausible") || !strings.Contains(b.Reason, tc.reasonHas) {
				t.Errorf("reason %q does not report the implausible rate and say %q", b.Reason, tc.reasonHas)
			}
			checkPrediction(t, tc.name, b)

			e, err := budget.Evaluate(&b, 3000, 0)
			if err != nil {
				t.Fatal(err)
			}
			if e.Value < 0 || math.IsNaN(e.Low95) {
				t.Errorf("budget at 3,000 shipments %.2f (95 %% %.2f to %.2f): want a cost of at least zero with its interval", e.Value, e.Low95, e.High95)
			}
		})
	}
}

// The end-of-window test dates a change no later than the third newest
// period, the fewest a warning rests on (alerts.ConfirmPeriods), and tests
// the newest two alone only when nothing else is found, for a watch. Its
// p-value is Chow's predictive test's, Bonferroni-corrected over the four
// splits of EndPeriods. A fixed cost of 100 a period with noise of 1,
// invented.
func TestEndBreakDatesWhatAWarningNeeds(t *testing.T) {
	const n = 36
	r := rand.New(rand.NewPCG(11, 5))
	noise := make([]float64, n)
	for i := range noise {
		noise[i] = r.NormFloat64()
	}
	series := func(newest ...float64) []float64 {
		y := make([]float64, n)
		for i := range y {
			y[i] = 100 + noise[i]
		}
		copy(y[n-len(newest):], newest)
		return y
	}
	s := Settings{MinPeriods: 12, BreakAlpha: 0.01}
	for _, c := range []struct {
		name  string
		y     []float64
		split int // 0: no break
	}{
		{"stable", series(), 0},
		{"the newest three rose", series(115, 114, 116), n - 3},
		// Dated by the fit alone, the newest two would be the change: a
		// watch, where three periods of a rise warrant a warning.
		{"the newest three rose, the newest two further", series(111, 125, 125), n - 3},
		// The third newest is below the level, so no split of three or
		// more periods shifts together; the newest two alone are a watch.
		{"only the newest two rose", series(98, 125, 125), n - 2},
	} {
		split, stat, p, test, ok := endBreak(Result{y: c.y}, s)
		if c.split == 0 {
			if ok {
				t.Errorf("%s: break at %d (t %.2f, p %.3g), want none", c.name, split, stat, p)
			}
			continue
		}
		if !ok || split != c.split {
			t.Errorf("%s: break %v at %d, want one at %d", c.name, ok, split, c.split)
			continue
		}
		wantT, wantP, _, err := predictiveChow(nil, c.y, split)
		if err != nil || stat != wantT || math.Abs(p-math.Min(1, 4*wantP)) > 1e-15 || !strings.HasPrefix(test, "shift of the newest periods") {
			t.Errorf("%s: t %v, p %v, test %q; want t %v, p 4 × %v", c.name, stat, p, test, wantT, wantP)
		}
	}
}

// A sup-F's break moved by least squares towards the end stops at the third
// newest period too: a level that rose three periods ago and further two
// ago is dated three ago, not at the newest two, which would make it a
// watch (invented: a fixed cost of 100 with noise of 1).
func TestRedateStopsAtTheThirdNewest(t *testing.T) {
	const n = 36
	r := rand.New(rand.NewPCG(11, 5))
	y := make([]float64, n)
	for i := range y {
		y[i] = 100 + r.NormFloat64()
	}
	y[n-3], y[n-2], y[n-1] = 111, 125, 125
	if got := redate(nil, y, 28, true); got != n-3 {
		t.Errorf("dated at %d, want %d", got, n-3)
	}
	// Earlier changes are dated where they fit best, as before.
	for i := 20; i < n; i++ {
		y[i] += 20
	}
	if got := redate(nil, y, 18, true); got != 20 {
		t.Errorf("a change at 20 dated at %d", got)
	}
}
