package pipeline

import (
	"context"
	"math"
	"testing"

	"github.com/costdrift/costdrift/internal/budget"
	"github.com/costdrift/costdrift/internal/costdrift"
)

// A budget from a pinned mixed formula, worked by hand (common practice:
// the coefficients are taken as known, so a new period's cost varies
// around the formula by the data's scatter about it, s² = Σr²/n with n
// degrees of freedom).
//
// Pin: cost = 100 + 2·hours. Data: hours 10, 20, 30, 40 and cost 121, 139,
// 163, 178, whose residuals from the pin are 1, −1, 3, −2: Σr² = 15,
// s² = 15/4 = 3.75, s = 1.9364917. At 25 hours the budget is 150.
// t quantiles with 4 degrees of freedom, standard t-table values from memory: 2.776445
// (0.975) and 1.533206 (0.90). 95 %: 150 ± 2.776445·1.9364917 = 150 ±
// 5.376563; 80 %: 150 ± 1.533206·1.9364917 = 150 ± 2.969041.
func TestPinnedBudgetByHand(t *testing.T) {
	data := costdrift.Behaviour{Object: costdrift.CostObject{Account: "6200", CostCenter: "WELD"}, Class: costdrift.Mixed,
		Driver: "machine_hours", FixedPerPeriod: 97.5, VariableRate: 2.03, RangeMin: 10, RangeMax: 40, Since: "2025-01", Until: "2025-04"}
	pin := costdrift.Pin{Class: costdrift.Mixed, Driver: "machine_hours", Fixed: 100, Rate: 2}
	b := pinnedBehaviour(data, pin, []float64{10, 20, 30, 40}, []float64{121, 139, 163, 178})
	est, err := budget.Evaluate(&b, 25, 0)
	if err != nil {
		t.Fatal(err)
	}
	for _, c := range []struct {
		name      string
		got, want float64
	}{
		{"budget", est.Value, 150},
		{"se", est.SE, 1.9364917},
		{"df", est.DF, 4},
		{"low95", est.Low95, 150 - 5.376563},
		{"high95", est.High95, 150 + 5.376563},
		{"low80", est.Low80, 150 - 2.969041},
		{"high80", est.High80, 150 + 2.969041},
	} {
		if math.Abs(c.got-c.want) > 1e-5 {
			t.Errorf("%s = %.7f, want %.7f", c.name, c.got, c.want)
		}
	}
	if len(est.Warnings) != 0 {
		t.Errorf("warnings %q inside the relevant range", est.Warnings)
	}

	// A pinned fixed cost: 2,600 against 2,600, 2,600, 2,616.27: Σr² =
	// 16.27² = 264.7129, s = sqrt(264.7129/3) = 9.393489.
	rent := costdrift.Behaviour{Object: costdrift.CostObject{Account: "6100", CostCenter: "ASSY"}, Class: costdrift.Fixed, FixedPerPeriod: 2605.42}
	fixed := pinnedBehaviour(rent, costdrift.Pin{Class: costdrift.Fixed, Fixed: 2600}, []float64{0, 0, 0}, []float64{2600, 2600, 2616.27})
	est, err = budget.Evaluate(&fixed, 0, 0)
	if err != nil {
		t.Fatal(err)
	}
	if est.Value != 2600 || math.Abs(est.SE-9.393489) > 1e-6 || est.DF != 3 {
		t.Errorf("pinned fixed: %.2f, se %.6f, df %g; want 2600, 9.393489, 3", est.Value, est.SE, est.DF)
	}
}

// The chart explain draws and the one an alert's mail carries (both made
// by scatter) mark the periods the accountant left out of the fit.
func TestChartsMarkExcludedPeriods(t *testing.T) {
	cfg, _ := demoStore(t)
	e, db := openDemo(t, cfg)
	ctx := context.Background()
	if err := db.Exclude(ctx, "6200/WELD", []string{"2025-03"}, "ana", "meter fault", today()); err != nil {
		t.Fatal(err)
	}
	oa, err := db.ObjectAnalysis(ctx, "6200/WELD")
	if err != nil {
		t.Fatal(err)
	}
	pts, err := analysedPoints(ctx, e, db, db.CostPerPeriod, oa, 1)
	if err != nil {
		t.Fatal(err)
	}
	s, err := scatter(ctx, e, db, oa, pts, "Power", "formula", 1)
	if err != nil {
		t.Fatal(err)
	}
	if len(s.Excluded) != 1 || s.Excluded[0] != "2025-03" {
		t.Errorf("chart's excluded periods %v, want [2025-03]", s.Excluded)
	}
	al := costdrift.Alert{Kind: costdrift.AlertSpendingOutlier, Object: "6200/WELD"}
	if png := alertChart(ctx, e, db, db.CostPerPeriod, al, oa, map[string]string{}); len(png) == 0 {
		t.Error("no chart for the alert's mail")
	}
}
