package alerts

import (
	"math"
	"strings"
	"testing"

	"github.com/costdrift/costdrift/internal/costdrift"
)

func TestSpendingOutlier(t *testing.T) {
	in := costdrift.SpendingCheck{Period: "2026-05", Actual: 100, Low: 90, High: 110}
	high := costdrift.SpendingCheck{Period: "2026-06", Actual: 130, Expected: 100, Low: 90, High: 110}
	low := costdrift.SpendingCheck{Period: "2026-05", Actual: 70, Low: 90, High: 110}
	b := costdrift.Behaviour{Object: costdrift.CostObject{Account: "6500", CostCenter: "WELD"}}
	tests := []struct {
		name   string
		checks []costdrift.SpendingCheck
		want   costdrift.Severity
	}{
		{"inside", []costdrift.SpendingCheck{in, {Period: "2026-06", Actual: 105, Low: 90, High: 110}}, ""},
		{"a lone outlier is info", []costdrift.SpendingCheck{in, high}, costdrift.SeverityInfo},
		{"a repeat on the same side is a warning", []costdrift.SpendingCheck{{Period: "2026-05", Actual: 120, Low: 90, High: 110}, high}, costdrift.SeverityWarning},
		{"opposite sides are two one-offs", []costdrift.SpendingCheck{low, high}, costdrift.SeverityInfo},
	}
	for _, tc := range tests {
		b.Spending = tc.checks
		got := Spending([]costdrift.Behaviour{b}, nil, "")
		if tc.want == "" {
			if len(got) != 0 {
				t.Errorf("%s: %+v", tc.name, got)
			}
			continue
		}
		if len(got) != 1 || got[0].Severity != tc.want || got[0].Period != "2026-06" || got[0].Validate() != nil {
			t.Errorf("%s: %+v, want one %s alert for 2026-06", tc.name, got, tc.want)
		}
	}
}

func TestOutOfRange(t *testing.T) {
	b := costdrift.Behaviour{Object: costdrift.CostObject{Account: "6200", CostCenter: "WELD"}, Driver: "machine_hours", RangeMin: 500, RangeMax: 1500}
	// 1,600 is 6.7 % above the range: inside the 10 % margin. 1,700 is 13.3 % above.
	for value, want := range map[float64]int{1600: 0, 1700: 1, 460: 0, 400: 1} {
		got := OutOfRange([]costdrift.Behaviour{b}, map[string]NewestActivity{"6200/WELD": {Period: "2026-11", Value: value}}, nil)
		if len(got) != want || (want == 1 && got[0].Severity != costdrift.SeverityInfo) {
			t.Errorf("activity %v: %+v, want %d info alert", value, got, want)
		}
	}
}

func TestDataGap(t *testing.T) {
	cost := make([]float64, 24)
	for i := range cost {
		cost[i] = 1000
	}
	cost[23] = 0                  // no postings in the newest period
	cost[5] = math.NaN()          // the whole ledger silent then: not a gap
	sparse := make([]float64, 24) // posts now and then: zeros are normal
	for i := 0; i < 24; i += 3 {
		sparse[i] = 50
	}
	p := &costdrift.Panel{Periods: make([]string, 24), Objects: []costdrift.ObjectSeries{
		{Object: costdrift.CostObject{Account: "6100", CostCenter: "WELD"}, Cost: cost},
		{Object: costdrift.CostObject{Account: "6900"}, Cost: sparse},
	}}
	for i := range p.Periods {
		p.Periods[i] = string(rune('A' + i))
	}
	got := DataGap(p, map[string]string{"6100": "Rent"})
	if len(got) != 1 || got[0].Object != "6100/WELD" || got[0].Period != "X" || got[0].Severity != costdrift.SeverityWarning {
		t.Fatalf("%+v, want one warning for 6100/WELD in the newest period", got)
	}
}

func TestSourceRules(t *testing.T) {
	states := []SourceState{
		{Name: "gl", Role: costdrift.RoleLedger, Failures: 1, LastError: "no file matches data/gl/*.csv"},
		{Name: "erp", Role: costdrift.RoleLedger, Failures: 3, LastError: "timeout"},
		{Name: "ops", Role: costdrift.RoleActivity},
		{Name: "old", Role: costdrift.RoleLedger, NewestPeriod: "2026-07", PeriodsBehind: 2},
		{Name: "late", Role: costdrift.RoleLedger, NewestPeriod: "2026-08", PeriodsBehind: 1},
	}
	failures := SourceFailure(states)
	if len(failures) != 2 || failures[0].Severity != costdrift.SeverityWarning || failures[1].Severity != costdrift.SeverityCritical {
		t.Errorf("failures %+v", failures)
	}
	stale := StaleSource(states)
	if len(stale) != 1 || stale[0].Object != "old" {
		t.Errorf("stale %+v, want only old", stale)
	}
}

// Messages give money with thousands separators and the currency, and say
// where the expected cost comes from: the formula fitted without the period,
// which is why it differs from the variance's flexible budget (the formula
// fitted with it).
func TestMessagesNameTheCurrency(t *testing.T) {
	b := costdrift.Behaviour{Object: costdrift.CostObject{Account: "6500", CostCenter: "WELD"},
		Spending: []costdrift.SpendingCheck{{Period: "2026-06", Actual: 2251.14, Expected: 2371.67, Low: 2287.14, High: 2456.2}}}
	got := Spending([]costdrift.Behaviour{b}, map[string]string{"6500": "Maintenance"}, "EUR")
	want := "6500/WELD Maintenance: 2026-06 cost 2,251.14 EUR is below the 2,371.67 EUR the formula fitted without that period expects " +
		"(95 % interval 2,287.14 to 2,456.20 EUR)"
	if len(got) != 1 || got[0].Message != want {
		t.Errorf("spending outlier: %+v\nwant %q", got, want)
	}
	shifts := Behaviour([]costdrift.Behaviour{lease(3300), freight(11.92)}, nil, map[string]string{"6110": "Equipment lease", "6400": "Freight out"}, "EUR")
	var messages []string
	for _, a := range shifts {
		messages = append(messages, a.Message)
	}
	all := strings.Join(messages, "\n")
	for _, w := range []string{"fixed cost per period rose 18 % from 2025-07, 2,800.00 to 3,300.00 EUR",
		"rate per shipment fell from 2025-02, 14.50 to 11.92 EUR"} {
		if !strings.Contains(all, w) {
			t.Errorf("messages lack %q:\n%s", w, all)
		}
	}
}
