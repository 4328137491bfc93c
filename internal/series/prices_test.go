package series

import (
	"errors"
	"math"
	"testing"

	"github.com/costdrift/costdrift/internal/costdrift"
)

// TestRestate: cost × index_base / index_t, hand-worked (common practice).
// A cost rising 5 % a year with the index is constant once restated, at
// the base period's level; an unknown cost stays unknown.
func TestRestate(t *testing.T) {
	activity := []costdrift.ActivityValue{
		{Period: "2024-01", Driver: "cpi", Value: 100},
		{Period: "2024-02", Driver: "cpi", Value: 105},
		{Period: "2024-03", Driver: "cpi", Value: 110.25},
		{Period: "2024-03", Driver: "cpi", CostCenter: "WELD", Value: 999}, // a cost centre's series is not the company's index
		{Period: "2024-03", Driver: "hours", Value: 7},
	}
	p := PriceIndexOf(activity, "cpi")
	periods := []string{"2024-01", "2024-02", "2024-03"}
	if err := p.Check(periods); err != nil {
		t.Fatal(err)
	}
	cost := []float64{2000, 2100, math.NaN()}
	p.Restate(cost, periods, "2024-03")
	// A period the ledger has no postings in has an unknown cost, which
	// needs no index value.
	none := []float64{math.NaN()}
	p.Restate(none, []string{"2023-12"}, "2024-03")
	if !math.IsNaN(none[0]) {
		t.Errorf("unknown cost of a period without an index restated to %g", none[0])
	}
	// 2000 × 110.25 / 100 = 2205; 2100 × 110.25 / 105 = 2205 (hand-worked).
	for i, want := range []float64{2205, 2205} {
		if math.Abs(cost[i]-want) > 1e-9 {
			t.Errorf("restated %s = %.10g, want %g", periods[i], cost[i], want)
		}
	}
	if !math.IsNaN(cost[2]) {
		t.Errorf("unknown cost restated to %g", cost[2])
	}
	if f, ok := p.Factor("2024-01", "2024-02"); !ok || math.Abs(f-1.05) > 1e-15 {
		t.Errorf("factor 2024-01 at 2024-02's prices = %g, %v; want 1.05 (105 / 100)", f, ok)
	}
}

// TestPriceIndexCheck: a period without an index value, or with zero, a
// negative value or NaN, is an error naming the series and the period.
func TestPriceIndexCheck(t *testing.T) {
	p := PriceIndex{Series: "cpi", Values: map[string]float64{"2024-01": 100, "2024-02": 0, "2024-04": -3, "2024-05": math.NaN()}}
	tests := []struct {
		periods []string
		want    string
	}{
		{[]string{"2024-01", "2024-02"}, `price index "cpi" is 0 in 2024-02; an index must be above zero to restate costs by it`},
		{[]string{"2024-01", "2024-03"}, `price index "cpi" has no value for 2024-03, so costs of 2024-03 cannot be restated`},
		{[]string{"2024-04"}, `price index "cpi" is -3 in 2024-04; an index must be above zero to restate costs by it`},
		{[]string{"2024-05"}, `price index "cpi" is NaN in 2024-05; an index must be above zero to restate costs by it`},
	}
	for _, tc := range tests {
		err := p.Check(tc.periods)
		var ie *IndexError
		if !errors.As(err, &ie) || err.Error() != tc.want {
			t.Errorf("Check(%v) = %v, want %s", tc.periods, err, tc.want)
		}
	}
	if err := p.Check([]string{"2024-01"}); err != nil {
		t.Errorf("Check(2024-01) = %v, want nil", err)
	}
}

// TestExempt: an account entry exempts every object of the account, an
// object entry that object alone.
func TestExempt(t *testing.T) {
	e := ExemptOf([]string{"6300/ADMIN", "6400"})
	for _, tc := range []struct {
		o    costdrift.CostObject
		want bool
	}{
		{costdrift.CostObject{Account: "6300", CostCenter: "ADMIN"}, true},
		{costdrift.CostObject{Account: "6300", CostCenter: "WELD"}, false},
		{costdrift.CostObject{Account: "6400", CostCenter: "WELD"}, true},
		{costdrift.CostObject{Account: "6400"}, true},
		{costdrift.CostObject{Account: "6500"}, false},
	} {
		if got := e.Has(tc.o); got != tc.want {
			t.Errorf("Has(%s) = %v, want %v", tc.o, got, tc.want)
		}
	}
}
