package alerts

import (
	"encoding/json"
	"strings"
	"testing"

	"github.com/costdrift/costdrift/internal/costdrift"
)

func lease(fixedAfter float64) costdrift.Behaviour {
	return costdrift.Behaviour{Object: costdrift.CostObject{Account: "6110", CostCenter: "PAINT"}, Class: costdrift.Fixed,
		FixedPerPeriod: fixedAfter, Since: "2025-07",
		Break: &costdrift.Break{Period: "2025-07", Test: "sup-F", Statistic: 120, P: 0.001, FixedBefore: 2800, FixedAfter: fixedAfter, LevelBefore: 2800,
			Periods: 6}}
}

func freight(rateAfter float64) costdrift.Behaviour {
	return costdrift.Behaviour{Object: costdrift.CostObject{Account: "6400", CostCenter: "ASSY"}, Class: costdrift.Variable,
		Driver: "shipments", Unit: "shipment", VariableRate: rateAfter, Since: "2025-02",
		Break: &costdrift.Break{Period: "2025-02", Driver: "shipments", Statistic: 600, P: 0.001, FixedBefore: 20, RateBefore: 14.5,
			FixedAfter: -15, RateAfter: rateAfter, LevelBefore: 14.5 * 800, ActivityBefore: 800, Periods: 6}}
}

// The thresholds are worked by hand (a shift of at least 10 % of the cost per
// period before the change; README, Alerts).
func TestShifts(t *testing.T) {
	tests := []struct {
		name  string
		b     costdrift.Behaviour
		kinds []costdrift.AlertKind
	}{
		// 2,800 -> 3,300: +17.9 % of 2,800.
		{"lease renewed", lease(3300), []costdrift.AlertKind{costdrift.AlertFixedShift}},
		// 2,800 -> 3,000: +7.1 %, under 10 %.
		{"small rise", lease(3000), nil},
		// Rate 14.50 -> 11.90 at 800 shipments: -2,080 of 11,600, -17.9 %; the
		// intercepts' move (35 of 11,600, 0.3 %) is noise and raises nothing.
		{"cheaper carrier", freight(11.9), []costdrift.AlertKind{costdrift.AlertRateShift}},
		// A shift of more than half the cost is critical.
		{"doubled", lease(5700), []costdrift.AlertKind{costdrift.AlertFixedShift}},
	}
	for _, tc := range tests {
		got := Behaviour([]costdrift.Behaviour{tc.b}, nil, map[string]string{"6110": "Equipment lease"}, "")
		if len(got) != len(tc.kinds) {
			t.Fatalf("%s: %d alerts %+v, want %v", tc.name, len(got), got, tc.kinds)
		}
		for i, a := range got {
			if a.Kind != tc.kinds[i] || a.Validate() != nil || a.Period != tc.b.Break.Period {
				t.Errorf("%s: alert %+v", tc.name, a)
			}
			if _, err := json.Marshal(a.Evidence); err != nil {
				t.Errorf("%s: evidence does not encode: %v", tc.name, err)
			}
		}
		if tc.name == "doubled" && got[0].Severity != costdrift.SeverityCritical {
			t.Errorf("doubled: severity %s, want critical", got[0].Severity)
		}
		if tc.name == "lease renewed" && (got[0].Severity != costdrift.SeverityWarning || !strings.Contains(got[0].Message, "6110/PAINT Equipment lease: fixed cost per period rose 18 % from 2025-07, 2,800.00 to 3,300.00")) {
			t.Errorf("lease: %+v", got[0])
		}
	}
	// The same break gives the same fingerprint on every evaluation.
	a, b := Behaviour([]costdrift.Behaviour{lease(3300)}, nil, nil, ""), Behaviour([]costdrift.Behaviour{lease(3310)}, nil, nil, "")
	if a[0].Fingerprint != b[0].Fingerprint {
		t.Error("fingerprint changed between evaluations of the same break")
	}
}

func TestReclassifiedAndDriverChanged(t *testing.T) {
	before := costdrift.Behaviour{Object: costdrift.CostObject{Account: "6200", CostCenter: "WELD"}, Class: costdrift.Fixed, FixedPerPeriod: 3000}
	now := before
	now.Class, now.Driver, now.Since, now.FixedPerPeriod, now.VariableRate = costdrift.Mixed, "machine_hours", "2026-01", 1800, 2.4
	got := Behaviour([]costdrift.Behaviour{now}, map[string]costdrift.Behaviour{"6200/WELD": before}, nil, "")
	if len(got) != 1 || got[0].Kind != costdrift.AlertReclassified || got[0].Severity != costdrift.SeverityWarning ||
		got[0].Message != "6200/WELD is now mixed on machine hours (was fixed) since 2026-01" {
		t.Fatalf("reclassified: %+v", got)
	}
	other := now
	other.Driver, other.Lag = "frames_built", 1
	got = Behaviour([]costdrift.Behaviour{other}, map[string]costdrift.Behaviour{"6200/WELD": now}, nil, "")
	if len(got) != 1 || got[0].Kind != costdrift.AlertDriverChanged || !strings.Contains(got[0].Message, "frames built of the period before now (was machine hours)") {
		t.Fatalf("driver changed: %+v", got)
	}
	// Unchanged behaviour raises nothing, so its alerts resolve.
	if got := Behaviour([]costdrift.Behaviour{now}, map[string]costdrift.Behaviour{}, nil, ""); len(got) != 0 {
		t.Errorf("no previous behaviour: %+v", got)
	}
}

// A shift seen in fewer than ConfirmPeriods periods is a watch (info); the
// analysis a period later that still finds it raises it to a warning under
// the same fingerprint, which the store escalates (README, Alerts).
func TestShiftIsWatchedUntilConfirmed(t *testing.T) {
	early := lease(3300)
	early.Break.Periods = 2
	got := Behaviour([]costdrift.Behaviour{early}, nil, nil, "")
	if len(got) != 1 || got[0].Severity != costdrift.SeverityInfo || got[0].Kind != costdrift.AlertFixedShift {
		t.Fatalf("a shift seen in 2 periods: %+v, want one info fixed_shift", got)
	}
	confirmed := lease(3300)
	confirmed.Break.Periods = 3
	again := Behaviour([]costdrift.Behaviour{confirmed}, nil, nil, "")
	if len(again) != 1 || again[0].Severity != costdrift.SeverityWarning || again[0].Fingerprint != got[0].Fingerprint {
		t.Fatalf("the same shift in 3 periods: %+v, want a warning with the watch's fingerprint", again)
	}
}

// A mixed cost's fixed part that rises 15 % is a shift of its fixed part
// (worked by hand: 2,000 -> 2,300 is +15 % of 2,000 and 7.5 % of the cost of
// 4,000 per period); a rise of 15 % of a fixed part of 300 under a cost of
// 4,000 (45, 1.1 % of the cost) is not worth an alert.
func TestMixedFixedPartShift(t *testing.T) {
	mixed := func(fixedBefore, fixedAfter float64) costdrift.Behaviour {
		return costdrift.Behaviour{Object: costdrift.CostObject{Account: "6300", CostCenter: "SHOP"}, Class: costdrift.Mixed,
			Driver: "machine_hours", FixedPerPeriod: fixedAfter, VariableRate: 2, Since: "2025-09",
			Break: &costdrift.Break{Period: "2025-09", Driver: "machine_hours", P: 0.001, FixedBefore: fixedBefore, FixedAfter: fixedAfter,
				RateBefore: 2, RateAfter: 2, LevelBefore: 4000, ActivityBefore: (4000 - fixedBefore) / 2, Periods: 4}}
	}
	got := Behaviour([]costdrift.Behaviour{mixed(2000, 2300)}, nil, nil, "")
	if len(got) != 1 || got[0].Kind != costdrift.AlertFixedShift || got[0].Severity != costdrift.SeverityWarning ||
		!strings.Contains(got[0].Message, "fixed cost per period rose 15 % from 2025-09, 2,000.00 to 2,300.00") {
		t.Fatalf("fixed part 2,000 -> 2,300: %+v", got)
	}
	if got := Behaviour([]costdrift.Behaviour{mixed(300, 345)}, nil, nil, ""); len(got) != 0 {
		t.Errorf("fixed part 300 -> 345 under a cost of 4,000: %+v, want no alert", got)
	}
}

// A change of class or driver is one alert while the behaviour it replaced
// stays the previous one: the analyses that follow move the window, and with
// it the new behaviour's first period, but not the change.
func TestChangeKeepsItsFingerprintAsTheWindowMoves(t *testing.T) {
	before := costdrift.Behaviour{Object: costdrift.CostObject{Account: "6200", CostCenter: "WELD"}, Class: costdrift.Fixed,
		FixedPerPeriod: 3000, Since: "2023-01"}
	now := costdrift.Behaviour{Object: before.Object, Class: costdrift.Mixed, Driver: "machine_hours", Since: "2023-02",
		FixedPerPeriod: 1800, VariableRate: 2.4}
	later := now
	later.Since = "2023-03"
	previous := map[string]costdrift.Behaviour{"6200/WELD": before}
	a, b := Behaviour([]costdrift.Behaviour{now}, previous, nil, ""), Behaviour([]costdrift.Behaviour{later}, previous, nil, "")
	if len(a) != 1 || len(b) != 1 || a[0].Fingerprint != b[0].Fingerprint {
		t.Errorf("reclassified: fingerprints %v and %v a month apart, want one alert", a, b)
	}
	now.Class, later.Class, before.Class, before.Driver = costdrift.Mixed, costdrift.Mixed, costdrift.Mixed, "labour_hours"
	previous["6200/WELD"] = before
	a, b = Behaviour([]costdrift.Behaviour{now}, previous, nil, ""), Behaviour([]costdrift.Behaviour{later}, previous, nil, "")
	if len(a) != 1 || len(b) != 1 || a[0].Kind != costdrift.AlertDriverChanged || a[0].Fingerprint != b[0].Fingerprint {
		t.Errorf("driver changed: fingerprints %v and %v a month apart, want one alert", a, b)
	}
}

// Two formulas that give the same cost at the activity before the break are
// the same behaviour there: a fixed part 40 % lower under a rate that makes
// up for it at that activity (worked by hand: 5,000 + 2.5 × 2,000 = 10,000
// before, 3,000 + 3.5 × 2,000 = 10,000 after) is the intercept and the rate
// trading off within their noise, and raises no shift.
func TestOffsettingShiftsRaiseNothing(t *testing.T) {
	b := costdrift.Behaviour{Object: costdrift.CostObject{Account: "6300", CostCenter: "SHOP"}, Class: costdrift.Mixed,
		Driver: "machine_hours", FixedPerPeriod: 3000, VariableRate: 3.5, Since: "2024-03",
		Break: &costdrift.Break{Period: "2024-03", Driver: "machine_hours", P: 0.004, FixedBefore: 5000, FixedAfter: 3000,
			RateBefore: 2.5, RateAfter: 3.5, LevelBefore: 10000, ActivityBefore: 2000, Periods: 14}}
	if got := Behaviour([]costdrift.Behaviour{b}, nil, nil, ""); len(got) != 0 {
		t.Errorf("offsetting fixed part and rate: %+v, want no alert", got)
	}
}

// A formula fitted on costs restated by a price index is at its base
// period's prices, and so are the amounts of its shift (README, Prices and
// inflation): the message says so, as the formula does.
func TestShiftAtPrices(t *testing.T) {
	l, f := lease(3300), freight(11.9)
	l.PriceBase, f.PriceBase = "2026-06", "2026-06"
	got := Behaviour([]costdrift.Behaviour{l, f}, nil, nil, "EUR")
	if len(got) != 2 {
		t.Fatalf("%d alerts, want a fixed and a rate shift: %+v", len(got), got)
	}
	for _, a := range got {
		if !strings.HasSuffix(a.Message, ", at prices of 2026-06") {
			t.Errorf("%s: %q does not say the prices it is at", a.Kind, a.Message)
		}
	}
	for _, a := range Behaviour([]costdrift.Behaviour{lease(3300)}, nil, nil, "EUR") {
		if strings.Contains(a.Message, "prices") {
			t.Errorf("a cost fitted as posted: %q speaks of prices", a.Message)
		}
	}
}
