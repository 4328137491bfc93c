package sqlite

import (
	"context"
	"errors"
	"fmt"
	"math"
	"reflect"
	"testing"

	"github.com/costdrift/costdrift/internal/costdrift"
)

// explainFits are the fits of the mixed welding cost: the constant, the
// chosen straight line with its diagnostics, a step and a two-driver fit.
// Numbers that the store keeps only on some fits (diagnostics on the chosen
// one, second-driver numbers on the two-driver one) are NaN elsewhere, as
// they read back.
func explainFits(slope float64) []costdrift.Fit {
	nan := math.NaN()
	base := func(driver string, lag int, model costdrift.Model) costdrift.Fit {
		return costdrift.Fit{Object: weld, Driver: driver, Lag: lag, Model: model, N: 35,
			Intercept: nan, InterceptSE: nan, InterceptP: nan, Slope: nan, SlopeSE: nan, SlopeT: nan, SlopeP: nan, SlopeAdjustedP: nan,
			R2: nan, ResidualSE: nan, PRESS: nan, AICc: nan, RangeMin: nan, RangeMax: nan,
			Slope2: nan, Slope2SE: nan, Slope2P: nan, VIF: nan, DurbinWatson: nan, RobustIntercept: nan, RobustSlope: nan}
	}
	constant := base("", 0, costdrift.ModelConstant)
	constant.N, constant.Intercept, constant.R2, constant.PRESS, constant.AICc = 36, 6100.25, 0, 2975545.85, 512.1
	line := base("machine_hours", 1, costdrift.ModelLinear)
	line.Intercept, line.InterceptSE, line.InterceptP = 4210.5, 40.25, 1e-20
	line.Slope, line.SlopeSE, line.SlopeT, line.SlopeP, line.SlopeAdjustedP = slope, 0.02, 53.5, 1e-28, 1e-27
	line.R2, line.ResidualSE, line.PRESS, line.AICc, line.RangeMin, line.RangeMax = 0.977, 45.5, 72630.3, 368.8, 501.1, 1533.1
	line.Significant, line.Chosen, line.PlausibleRanked = true, true, 1
	line.DurbinWatson, line.RobustIntercept, line.RobustSlope = 1.85, 4200.25, 1.0797
	line.Outliers = []costdrift.Outlier{{Period: "2026-06", CooksD: 0.322, Studentised: -2.62}}
	step := base("machine_hours", 1, costdrift.ModelStep)
	step.R2, step.PRESS, step.AICc, step.RangeMin, step.RangeMax = 0.913, 314921.7, 430.4, 501.1, 1533.1
	step.Levels = []costdrift.StepLevel{{From: 501.1, To: 990, Level: 1700, N: 20}, {From: 1004, To: 1533.1, Level: 2400, N: 15}}
	two := base("machine_hours", 1, costdrift.ModelTwoDriver)
	two.Intercept, two.Slope, two.R2, two.Driver2, two.Lag2, two.Slope2, two.Slope2SE, two.Slope2P, two.VIF = 4000, 1.5, 0.98, "orders", 0, 0.5, 0.1, 0.001, 1.7
	return []costdrift.Fit{constant, line, step, two}
}

// TestObjectAnalysisSettings: the run's settings read back through the
// domain type; settings that cannot be read leave it zero, and the object
// is still explained.
func TestObjectAnalysisSettings(t *testing.T) {
	db, c := mustOpen(t)
	ctx := context.Background()
	want := costdrift.AnalysisSettings{Accounts: []string{"5000-6999"}, Alpha: 0.05, BootstrapReplicates: 999, BreakAlpha: 0.01,
		Currency: "EUR", Grain: costdrift.GrainAccountCostCenter, Lags: []int{0, 1}, MinPeriods: 12, Seed: 7, Window: 36}
	for _, tc := range []struct {
		name, stored string
		want         costdrift.AnalysisSettings
	}{
		{"as analyze stores them", `{"accounts":["5000-6999"],"alpha":0.05,"bootstrap_replicates":999,"break_alpha":0.01,"currency":"EUR",` +
			`"grain":"account_cost_center","lags":[0,1],"min_periods":12,"seed":7,"window":36}`, want},
		{"a key of another version", `{"alpha":0.01,"lags":[0,1,2],"smoothing":"none"}`,
			costdrift.AnalysisSettings{Alpha: 0.01, Lags: []int{0, 1, 2}}},
		{"unreadable", `{"alpha":`, costdrift.AnalysisSettings{}},
	} {
		t.Run(tc.name, func(t *testing.T) {
			run := analysisRun(c)
			run.Settings = tc.stored
			if err := db.SaveAnalysis(ctx, run, explainFits(1.0712), []costdrift.Behaviour{mixed()}); err != nil {
				t.Fatal(err)
			}
			c.t = c.t.AddDate(0, 1, 0)
			got, err := db.ObjectAnalysis(ctx, "6200/WELD")
			if err != nil {
				t.Fatal(err)
			}
			if got.Run.Settings != tc.stored || !reflect.DeepEqual(got.Settings, tc.want) {
				t.Errorf("settings %q read as %+v, want %+v", got.Run.Settings, got.Settings, tc.want)
			}
		})
	}
}

func TestObjectAnalysis(t *testing.T) {
	db, c := mustOpen(t)
	ctx := context.Background()
	if _, err := db.ObjectAnalysis(ctx, "6200/WELD"); !errors.Is(err, ErrNoAnalysis) {
		t.Fatalf("empty store: %v, want ErrNoAnalysis", err)
	}

	b := mixed()
	b.Outliers = []costdrift.Outlier{{Period: "2026-06", CooksD: 0.322, Studentised: -2.62}}
	b.Diagnostics = &costdrift.Diagnostics{Models: []costdrift.ModelSummary{
		{Model: costdrift.ModelConstant, N: 36, AICc: 512.1, PRESS: 2975545.85},
		{Model: costdrift.ModelLinear, Driver: "machine_hours", Lag: 1, N: 35, AICc: 368.8, PRESS: 72630.3, R2: 0.977},
	}, DurbinWatson: 1.85, RobustIntercept: 4200.25, RobustSlope: 1.0797, Candidates: 10}
	run1 := save(t, db, c, explainFits(1.0712), b)

	got, err := db.ObjectAnalysis(ctx, "6200/WELD")
	if err != nil {
		t.Fatal(err)
	}
	if !reflect.DeepEqual(got.Behaviour, b) {
		t.Errorf("behaviour:\n got  %+v\n want %+v", got.Behaviour, b)
	}
	if got.Run.ID != run1.ID || !got.Run.FinishedAt.Equal(run1.FinishedAt) || got.Run.WindowFrom != "2023-07" ||
		got.Run.Grain != costdrift.GrainAccountCostCenter || got.Run.Settings != `{"window":36}` {
		t.Errorf("run %+v, want %+v", got.Run, *run1)
	}
	// NaN prints as NaN on both sides, so the printed forms compare the
	// fits with unknown numbers equal.
	if g, w := fmt.Sprintf("%+v", got.Fits), fmt.Sprintf("%+v", explainFits(1.0712)); g != w {
		t.Errorf("fits:\n got  %s\n want %s", g, w)
	}
	if _, err := db.ObjectAnalysis(ctx, "6200/PAINT"); !errors.Is(err, ErrNotAnalysed) {
		t.Errorf("unknown object: %v, want ErrNotAnalysed", err)
	}
	if objects, err := db.AnalysedObjects(ctx); err != nil || !reflect.DeepEqual(objects, []string{"6200/WELD"}) {
		t.Errorf("AnalysedObjects = %v, %v", objects, err)
	}

	// A second analysis with the same class refreshes the behaviour: the
	// fits are the second run's.
	c.t = c.t.AddDate(0, 1, 0)
	run2 := save(t, db, c, explainFits(1.25), b)
	got, err = db.ObjectAnalysis(ctx, "6200/WELD")
	if err != nil {
		t.Fatal(err)
	}
	if got.Run.ID != run2.ID || got.Fits[1].Slope != 1.25 {
		t.Errorf("after the second run: run %d, slope %v; want run %d, slope 1.25", got.Run.ID, got.Fits[1].Slope, run2.ID)
	}
	// Where object_inputs names the object's latest analysis (latest_fits),
	// its fits are the ones read.
	mustExec(t, db, `INSERT INTO object_inputs (object, input_hash, analysis_run_id) VALUES ('6200/WELD', 'h', ?)`, run1.ID)
	got, err = db.ObjectAnalysis(ctx, "6200/WELD")
	if err != nil {
		t.Fatal(err)
	}
	if got.Fits[1].Slope != 1.0712 {
		t.Errorf("with object_inputs on run %d: slope %v, want run %d's 1.0712", run1.ID, got.Fits[1].Slope, run1.ID)
	}
}

func TestCostPerPeriodAndLedgerLines(t *testing.T) {
	db, _ := mustOpen(t)
	ctx := context.Background()
	load(t, db, "gl", costdrift.RoleLedger, batch{lines: []costdrift.LedgerLine{
		ledgerLine("gl", "JE-1", 1, "2025-01-31", "6200", "WELD", 10000, ""),
		ledgerLine("gl", "JE-1", 2, "2025-01-31", "6200", "WELD", 2345, ""),
		ledgerLine("gl", "JE-1", 3, "2025-01-31", "6200", "PAINT", 5000, ""),
		ledgerLine("gl", "JE-2", 1, "2025-02-28", "6100", "", 420000, ""), // the ledger posts in February, 6200 does not
		ledgerLine("gl", "JE-3", 1, "2025-03-31", "6200", "WELD", -700, "credit note"),
		ledgerLine("gl", "JE-4", 1, "2025-04-30", "6200", "WELD", 9999, "after the range"),
	}})
	tests := []struct {
		name string
		o    costdrift.CostObject
		all  bool
		want map[string]int64
	}{
		{"one cost centre", costdrift.CostObject{Account: "6200", CostCenter: "WELD"}, false, map[string]int64{"2025-01": 12345, "2025-03": -700}},
		{"account grain", costdrift.CostObject{Account: "6200"}, true, map[string]int64{"2025-01": 17345, "2025-03": -700}},
		{"no cost centre", costdrift.CostObject{Account: "6100"}, false, map[string]int64{"2025-02": 420000}},
		{"none", costdrift.CostObject{Account: "6200", CostCenter: "ASSY"}, false, map[string]int64{}},
	}
	for _, tc := range tests {
		costs, ledger, err := db.CostPerPeriod(ctx, tc.o, tc.all, "2025-01", "2025-03")
		if err != nil {
			t.Fatal(err)
		}
		if !reflect.DeepEqual(costs, tc.want) {
			t.Errorf("%s: costs %v, want %v", tc.name, costs, tc.want)
		}
		if want := map[string]bool{"2025-01": true, "2025-02": true, "2025-03": true}; !reflect.DeepEqual(ledger, want) {
			t.Errorf("%s: ledger periods %v, want %v", tc.name, ledger, want)
		}
	}

	for _, tc := range []struct {
		o    costdrift.CostObject
		all  bool
		want bool
	}{
		{costdrift.CostObject{Account: "6200", CostCenter: "WELD"}, false, true},
		{costdrift.CostObject{Account: "6200", CostCenter: "ASSY"}, false, false},
		{costdrift.CostObject{Account: "6200"}, false, false}, // no line of 6200 without a cost centre
		{costdrift.CostObject{Account: "6200"}, true, true},
		{costdrift.CostObject{Account: "6100"}, false, true},
	} {
		if got, err := db.HasLedgerLines(ctx, tc.o, tc.all); err != nil || got != tc.want {
			t.Errorf("HasLedgerLines(%v, all %v) = %v, %v; want %v", tc.o, tc.all, got, err, tc.want)
		}
	}
}

func TestDriverValues(t *testing.T) {
	db, _ := mustOpen(t)
	ctx := context.Background()
	load(t, db, "ops", costdrift.RoleActivity, batch{activity: []costdrift.ActivityValue{
		activityValue("ops", "2025-01", "machine_hours", "WELD", 410.5, "machine hour"),
		activityValue("ops", "2025-02", "machine_hours", "WELD", 420, "machine hour"),
		activityValue("ops", "2025-03", "machine_hours", "WELD", 430, "machine hour"),
		activityValue("ops", "2025-01", "machine_hours", "PAINT", 100, "machine hour"),
		activityValue("ops", "2025-03", "machine_hours", "PAINT", 120, "machine hour"), // PAINT did not report February
		activityValue("ops", "2025-01", "frames_built", "", 700, "frame"),
		activityValue("ops", "2025-02", "frames_built", "", 800, "frame"),
		activityValue("ops", "2024-12", "frames_built", "", 650, "frame"), // before the span
	}})
	// A second source's values of the same series are added, as the analysis adds them.
	load(t, db, "plan", costdrift.RoleActivity, batch{activity: []costdrift.ActivityValue{
		activityValue("plan", "2025-02", "frames_built", "", 5, "frame"),
	}})
	tests := []struct {
		name, driver, costCenter string
		all                      bool
		want                     map[string]float64
		series                   string
	}{
		{"own series", "machine_hours", "WELD", false, map[string]float64{"2025-01": 410.5, "2025-02": 420, "2025-03": 430}, "WELD"},
		{"company-wide, two sources", "frames_built", "WELD", false, map[string]float64{"2025-01": 700, "2025-02": 805}, SeriesCompanyWide},
		{"no series for the cost centre", "machine_hours", "ASSY", false, map[string]float64{}, ""},
		{"account grain total, where every cost centre reported", "machine_hours", "", true, map[string]float64{"2025-01": 510.5, "2025-03": 550}, SeriesTotal},
		{"account grain prefers the company-wide series", "frames_built", "", true, map[string]float64{"2025-01": 700, "2025-02": 805}, SeriesCompanyWide},
		{"unknown driver", "orders", "WELD", false, map[string]float64{}, ""},
	}
	for _, tc := range tests {
		got, series, err := db.DriverValues(ctx, tc.driver, tc.costCenter, tc.all, "2025-01", "2025-03")
		if err != nil {
			t.Fatal(err)
		}
		if !reflect.DeepEqual(got, tc.want) || series != tc.series {
			t.Errorf("%s: %v from %q, want %v from %q", tc.name, got, series, tc.want, tc.series)
		}
	}
}
