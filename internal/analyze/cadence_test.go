package analyze

import (
	"math"
	"math/rand/v2"
	"slices"
	"strings"
	"testing"

	"github.com/costdrift/costdrift/internal/costdrift"
	"github.com/costdrift/costdrift/internal/fit"
)

// posted is a cost of amount (times 1 + noise·N(0,1)) in every k-th window
// period from first on, zero in the others.
func posted(r *rand.Rand, n, k, first int, amount, noise float64) []float64 {
	cost := make([]float64, n)
	for i := first; i < n; i += k {
		cost[i] = noisy(r, amount, noise)
	}
	return cost
}

// TestCadenceRecognised: costs posted every quarter, half-year and year,
// with noise in their amounts and a driver beside them, are fixed at their
// cadence, posted at the months designed (the window of periods() starts in
// July 2023), with the posting's level spread per period. The expected
// figures are the designed amount divided by the cadence (invented data,
// ground-truth recovery), within the noise.
func TestCadenceRecognised(t *testing.T) {
	tests := []struct {
		name      string
		n, k      int
		first     int // window position of the first posting
		amount    float64
		months    []int
		reasonHas string
	}{
		{"quarterly", 36, 3, 2, 3000, []int{3, 6, 9, 12}, "once a quarter (Mar, Jun, Sep, Dec)"},
		{"quarterly, first posting in the first period", 24, 3, 0, 4500, []int{1, 4, 7, 10}, "once a quarter (Jan, Apr, Jul, Oct)"},
		{"half-yearly", 36, 6, 3, 12000, []int{4, 10}, "once a half-year (Apr, Oct)"},
		{"yearly, three postings", 36, 12, 5, 24000, []int{12}, "once a year (Dec)"},
		{"yearly, two postings", 24, 12, 9, 6000, []int{4}, "once a year (Apr)"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			r := rand.New(rand.NewPCG(3, 5))
			cost := posted(r, tc.n, tc.k, tc.first, tc.amount, 0.03)
			hours := costdrift.DriverSeries{Name: "machine_hours", Unit: "hour", Values: activity(r, tc.n, 1, 1000, 0.4)}
			res := Object(panelOf(tc.n, cost, hours), &costdrift.ObjectSeries{Object: costdrift.CostObject{Account: "6400"}, Cost: cost},
				Settings{MinPeriods: 12, Lags: []int{0, 1}, Alpha: 0.05, BreakAlpha: 0.01, Replicates: 199, Seed: 1})
			b := res.Behaviour
			if b.Class != costdrift.Fixed || b.Cadence == nil || b.Driver != "" {
				t.Fatalf("class %s, cadence %+v, driver %q: want fixed at a cadence of %d without a driver (%s)", b.Class, b.Cadence, b.Driver, tc.k, b.Reason)
			}
			if b.Cadence.Every != tc.k || !slices.Equal(b.Cadence.Positions(), tc.months) {
				t.Errorf("cadence every %d at %v, want every %d at %v", b.Cadence.Every, b.Cadence.Positions(), tc.k, tc.months)
			}
			// Designed: amount / k per period; 3 % noise on at least two
			// postings leaves the mean within 6 % (2 standard errors of one).
			if want := tc.amount / float64(tc.k); !(math.Abs(b.FixedPerPeriod-want) <= 0.06*want) {
				t.Errorf("fixed per period %.2f, want %.2f within 6 %%", b.FixedPerPeriod, want)
			}
			if !strings.Contains(b.Reason, tc.reasonHas) {
				t.Errorf("reason %q lacks %q", b.Reason, tc.reasonHas)
			}
			if b.Break != nil {
				t.Errorf("stable postings broken at %s: %s", b.Break.Period, b.Reason)
			}
			postings := (tc.n - tc.first + tc.k - 1) / tc.k
			if b.Prediction == nil || b.Prediction.N != postings || !(math.Abs(b.Prediction.Coef[0]-b.FixedPerPeriod) <= 1e-9*b.FixedPerPeriod) {
				t.Fatalf("prediction terms %+v: want the mean of %d postings per period, %.2f", b.Prediction, postings, b.FixedPerPeriod)
			}
		})
	}
}

// TestCadencePredictionTerms: the terms of a cadence cost are those of the
// mean of its postings, divided by the cadence. Postings 2,900, 3,000,
// 3,100 and 3,000 a quarter (hand-worked, common practice): mean 3,000,
// sample standard deviation √(20,000/3) = 81.65, so per period 1,000 with
// s = 27.22 on 3 degrees of freedom.
func TestCadencePredictionTerms(t *testing.T) {
	cost := make([]float64, 12)
	for i, v := range []float64{2900, 3000, 3100, 3000} {
		cost[3*i+1] = v
	}
	cost[5] = 10 // a rounding difference between postings: 0.3 % of the median, not a posting
	res := Object(panelOf(12, cost), &costdrift.ObjectSeries{Object: costdrift.CostObject{Account: "6400"}, Cost: cost}, defaults)
	b := res.Behaviour
	if b.Cadence == nil || b.Cadence.Every != 3 {
		t.Fatalf("cadence %+v, want quarterly (%s)", b.Cadence, b.Reason)
	}
	p := b.Prediction
	if !(math.Abs(p.Coef[0]-1000) <= 1e-9) || !(math.Abs(p.S-math.Sqrt(20000.0/3)/3) <= 1e-9) || p.DF != 3 || p.N != 4 || !(math.Abs(p.Cov[0]-0.25) <= 1e-12) {
		t.Errorf("terms %+v: want coef 1000, s %.4f, df 3, n 4, cov 0.25", p, math.Sqrt(20000.0/3)/3)
	}
	if !(math.Abs(b.FixedPerPeriod-1000) <= 1e-9) || !strings.Contains(b.Reason, "3,000.00 a quarter, 1,000.00 a period spread evenly") {
		t.Errorf("fixed %.2f, reason %q", b.FixedPerPeriod, b.Reason)
	}
	// The check is that the terms give the formula, as for every class
	// (prediction_test.go): ŷ per period is the fixed amount.
	if y, _ := fit.Terms(*p).Predict(nil); !(math.Abs(y-b.FixedPerPeriod) <= 1e-9) {
		t.Errorf("terms predict %.2f, formula %.2f", y, b.FixedPerPeriod)
	}
}

// TestNoCadence: costs that must not be taken for a cadence.
func TestNoCadence(t *testing.T) {
	r := rand.New(rand.NewPCG(9, 4))
	monthly := func() []float64 {
		c := make([]float64, 36)
		for i := range c {
			c[i] = noisy(r, 1000, 0.03)
		}
		return c
	}
	missing := monthly()
	missing[17] = 0 // one month not posted
	missingEvery := monthly()
	for i := 2; i < 36; i += 3 {
		missingEvery[i] = 0 // two months of three posted
	}
	lateOnce := posted(r, 36, 3, 1, 3000, 0.03)
	lateOnce[13], lateOnce[14] = 0, 3000            // one posting a month late
	twoQuarterly := posted(r, 12, 3, 7, 3000, 0.03) // only two postings a quarter apart
	oneYearly := posted(r, 15, 12, 4, 3000, 0.03)   // one posting a year
	between := posted(r, 36, 3, 1, 3000, 0.03)
	between[5] = 150 // 5 % of a posting between postings
	credits := posted(r, 36, 3, 1, -3000, 0.03)
	for _, tc := range []struct {
		name string
		cost []float64
	}{
		{"monthly with one missing month", missing},
		{"monthly with every third month missing", missingEvery},
		{"quarterly with one posting a month late", lateOnce},
		{"two quarterly postings", twoQuarterly},
		{"one yearly posting", oneYearly},
		{"a cost between postings", between},
		{"credits every quarter", credits},
	} {
		t.Run(tc.name, func(t *testing.T) {
			n := len(tc.cost)
			res := Object(panelOf(n, tc.cost), &costdrift.ObjectSeries{Object: costdrift.CostObject{Account: "6400"}, Cost: tc.cost}, defaults)
			if res.Behaviour.Cadence != nil {
				t.Errorf("taken for a cadence %+v: %s", res.Behaviour.Cadence, res.Behaviour.Reason)
			}
		})
	}
	// A calendar of weeks has no quarter of its year's periods.
	weeks := make([]string, 36)
	for i := range weeks {
		weeks[i] = "2025-W" + string(rune('1'+i/10)) + string(rune('0'+i%10))
	}
	if _, ok := findCadence(weeks, posted(r, 36, 3, 1, 3000, 0.03)); ok {
		t.Error("a cadence found in weeks")
	}
}

// TestCadenceBreakInPostings: a quarterly premium that rises by 20 % after
// eight postings is a break in the postings, tested as their own series,
// and the formula since is the new premium; the zeros between postings
// are never a change. Invented data, ground-truth recovery.
func TestCadenceBreakInPostings(t *testing.T) {
	r := rand.New(rand.NewPCG(21, 8))
	cost := posted(r, 36, 3, 0, 3000, 0.02)
	for i := 24; i < 36; i += 3 {
		cost[i] = noisy(r, 3600, 0.02)
	}
	s := Settings{MinPeriods: 12, Lags: []int{0, 1}, Alpha: 0.05, BreakAlpha: 0.01, Replicates: 999, Seed: 1}
	p := panelOf(36, cost)
	res := Object(p, &costdrift.ObjectSeries{Object: costdrift.CostObject{Account: "6400"}, Cost: cost}, s)
	b := res.Behaviour
	if b.Cadence == nil || b.Break == nil {
		t.Fatalf("cadence %+v, break %+v: want a break in the quarterly postings (%s)", b.Cadence, b.Break, b.Reason)
	}
	if b.Break.Period != p.Periods[24] || b.Since != p.Periods[24] {
		t.Errorf("break at %s, since %s: want %s", b.Break.Period, b.Since, p.Periods[24])
	}
	if !(math.Abs(b.FixedPerPeriod-1200) <= 0.03*1200) || !(math.Abs(b.Break.FixedBefore-1000) <= 0.03*1000) {
		t.Errorf("per period %.2f after (want 1,200), %.2f before (want 1,000)", b.FixedPerPeriod, b.Break.FixedBefore)
	}
	if b.Prediction.N != 4 || b.Prediction.DF != 10 {
		t.Errorf("terms n %d df %d: want the 4 postings since, spread pooled over 12 postings (df 10)", b.Prediction.N, b.Prediction.DF)
	}
	if res.Unbroken == nil || res.Unbroken.Behaviour.Break != nil || !res.BreakTested {
		t.Error("the whole window's result is not kept beside the break")
	}
	if !strings.Contains(b.Reason, "break in the postings") {
		t.Errorf("reason %q", b.Reason)
	}
}

// TestCadenceSpendingCheck: the newest posting is checked against the
// postings before it, so a quarterly premium that rose shows at once.
// Postings 3,000, 3,010, 2,990, 3,000 then 3,600 (hand-worked, common
// practice): mean 3,000, s = 8.165, t(0.975, 3) = 3.182, half-width
// 3.182 · 8.165 · √(1 + 1/4) = 29.05.
func TestCadenceSpendingCheck(t *testing.T) {
	cost := make([]float64, 14)
	for i, v := range []float64{3000, 3010, 2990, 3000, 3600} {
		cost[3*i+1] = v
	}
	p := panelOf(14, cost)
	res := Object(p, &costdrift.ObjectSeries{Object: costdrift.CostObject{Account: "6400"}, Cost: cost}, defaults)
	sp := res.Behaviour.Spending
	if len(sp) != 1 || sp[0].Period != p.Periods[13] {
		t.Fatalf("spending checks %+v: want one, of %s", sp, p.Periods[13])
	}
	if !(math.Abs(sp[0].Expected-3000) <= 1e-9) || !(math.Abs(sp[0].High-3029.05) <= 0.01) || !sp[0].Outside() {
		t.Errorf("check %+v: want expected 3,000, high 3,029.05, outside", sp[0])
	}
}

// TestCadenceBreakWithSilentMonth: a month the whole ledger is silent in
// (NaN) after the break leaves the mean cost since the break the mean of
// the months known: 4 postings of 3,600 over 11 known months (hand-worked).
func TestCadenceBreakWithSilentMonth(t *testing.T) {
	cost := make([]float64, 36)
	for i := 0; i < 36; i += 3 {
		cost[i] = 3000 + 10*float64(i%2)
		if i >= 24 {
			cost[i] = 3600 + 10*float64(i%2)
		}
	}
	cost[31] = math.NaN()
	s := Settings{MinPeriods: 12, Lags: []int{0, 1}, Alpha: 0.05, BreakAlpha: 0.01, Replicates: 999, Seed: 1}
	b := Object(panelOf(36, cost), &costdrift.ObjectSeries{Object: costdrift.CostObject{Account: "6400"}, Cost: cost}, s).Behaviour
	if b.Cadence == nil || b.Break == nil {
		t.Fatalf("cadence %+v, break %+v (%s)", b.Cadence, b.Break, b.Reason)
	}
	want := (3600 + 3610 + 3600 + 3610) / 11.0
	if !(math.Abs(b.MeanCost-want) <= 1e-9) {
		t.Errorf("mean cost since the break %v, want %.4f", b.MeanCost, want)
	}
}
