package sqlite

import (
	"context"
	"fmt"
	"math"
	"reflect"
	"strconv"
	"strings"
	"testing"
	"time"

	"github.com/costdrift/costdrift/internal/costdrift"
)

var weld = costdrift.CostObject{Account: "6200", CostCenter: "WELD"}

func analysisRun(c *clock) *costdrift.AnalysisRun {
	return &costdrift.AnalysisRun{StartedAt: c.t, FinishedAt: c.t.Add(3 * time.Second), WindowFrom: "2023-07", WindowTo: "2026-06",
		Grain: costdrift.GrainAccountCostCenter, Objects: 1, Settings: `{"window":36}`}
}

// mixed is a mixed cost of welding on machine hours, the period before.
func mixed() costdrift.Behaviour {
	return costdrift.Behaviour{
		Object: weld, Class: costdrift.Mixed, Driver: "machine_hours", Unit: "machine hour", Lag: 1,
		FixedPerPeriod: 4210.5, VariableRate: 1.875, R2: 0.981, N: 36, RangeMin: 512.5, RangeMax: 1490,
		Since: "2023-07", Until: "2026-06", Reason: "cost moves with machine hours above a significant fixed part",
		HighLow: &costdrift.HighLow{HighPeriod: "2025-11", LowPeriod: "2024-08", HighActivity: 1490, LowActivity: 512.5,
			HighCost: 7000.25, LowCost: 5180.75, Fixed: 4218.1, Rate: 1.86, Warning: "the low end (2024-08) is an outlier"},
		CV: 0.125, MeanCost: 6100.25,
		Prediction: &costdrift.PredictionTerms{Intercept: true, Centre: []float64{900.5}, Coef: []float64{6100.25, 1.875}, Cov: []float64{1.0 / 35, 0, 0, 1.25e-6},
			S: 80.5, N: 35, DF: 33},
	}
}

// step is a step-fixed cost of supervision on orders.
func step() costdrift.Behaviour {
	return costdrift.Behaviour{
		Object: costdrift.CostObject{Account: "6300", CostCenter: "ASSY"}, Class: costdrift.Step, Driver: "orders", Unit: "order",
		FixedPerPeriod: 3000, R2: 0.93, N: 30, RangeMin: 40, RangeMax: 160, Since: "2024-01", Until: "2026-06",
		Steps:  []costdrift.StepLevel{{From: 40, To: 95, Level: 3000}, {From: 96, To: 160, Level: 4500.5}},
		Reason: "a second supervisor above 95 orders", CV: 0.2, MeanCost: 3600,
	}
}

// fixed is a fixed rent: no driver, so no lag, range or R².
// renewedLease is 6110/PAINT's lease, fixed at 3,300.00 from a break at
// 2025-07, 2,800.00 before it.
func renewedLease() costdrift.Behaviour {
	lease := fixed()
	lease.Object = costdrift.CostObject{Account: "6110", CostCenter: "PAINT"}
	lease.FixedPerPeriod, lease.Since = 3300, "2025-07"
	lease.Break = &costdrift.Break{Period: "2025-07", LastBefore: "2025-06", WindowFrom: "2023-07", Statistic: 120, P: 0.001,
		FixedBefore: 2800, FixedAfter: 3300, Test: "sup-F"}
	return lease
}

func fixed() costdrift.Behaviour {
	return costdrift.Behaviour{
		Object: costdrift.CostObject{Account: "6500"}, Class: costdrift.Fixed, FixedPerPeriod: 2500, R2: math.NaN(), N: 36,
		Since: "2023-07", Until: "2026-06", Reason: "no driver explains it", CV: 0.01, MeanCost: 2500,
	}
}

func save(t *testing.T, db *DB, c *clock, fits []costdrift.Fit, bs ...costdrift.Behaviour) *costdrift.AnalysisRun {
	t.Helper()
	run := analysisRun(c)
	if err := db.SaveAnalysis(context.Background(), run, fits, bs); err != nil {
		t.Fatalf("SaveAnalysis: %v", err)
	}
	return run
}

func current(t *testing.T, db *DB) []costdrift.Behaviour {
	t.Helper()
	bs, err := db.CurrentBehaviour(context.Background())
	if err != nil {
		t.Fatal(err)
	}
	return bs
}

func TestCurrentBehaviourRoundTrip(t *testing.T) {
	db, c := mustOpen(t)
	save(t, db, c, nil, mixed(), step())
	got := current(t, db)
	// Ordered by account and cost centre; REAL columns hold float64 exactly.
	want := []costdrift.Behaviour{mixed(), step()}
	if !reflect.DeepEqual(got, want) {
		t.Errorf("CurrentBehaviour:\n got  %+v\n want %+v", got, want)
	}
	if len(got) == 2 && (got[0].HighLow == nil || *got[0].HighLow != *want[0].HighLow) {
		t.Errorf("high-low %+v, want %+v", got[0].HighLow, want[0].HighLow)
	}
	// The JSON columns use the documented names.
	wantJSON := `"[{\"from\":40,\"to\":95,\"level\":3000},{\"from\":96,\"to\":160,\"level\":4500.5}]"` + "\n"
	if got := dump(t, db, `SELECT steps FROM behaviour_history WHERE object = '6300/ASSY'`); got != wantJSON {
		t.Errorf("steps column %s, want %s", got, wantJSON)
	}
	hl := dump(t, db, `SELECT high_low FROM behaviour_history WHERE object = '6200/WELD'`)
	for _, key := range []string{"high_period", "low_period", "high_activity", "low_activity", "high_cost", "low_cost", "fixed", "rate", "warning"} {
		if !strings.Contains(hl, `\"`+key+`\":`) {
			t.Errorf("high_low column %s lacks %q", hl, key)
		}
	}
}

func TestSaveAnalysisNaNAsNull(t *testing.T) {
	// SQLite has no NaN or infinity: they are stored as NULL, and read
	// back as NaN, "unknown", never as a number.
	db, c := mustOpen(t)
	zeroMean := fixed()
	zeroMean.Object = costdrift.CostObject{Account: "6900"}
	zeroMean.MeanCost, zeroMean.FixedPerPeriod, zeroMean.CV = 0, 0, math.Inf(1) // a cost that nets to zero has no CV
	fits := []costdrift.Fit{{Object: weld, Driver: "machine_hours", Model: costdrift.ModelLinear, N: 36, Intercept: 4210.5, InterceptSE: math.NaN(),
		InterceptP: math.NaN(), Slope: 1.875, SlopeSE: 0.1, SlopeT: 18.75, SlopeP: 1e-12, SlopeAdjustedP: math.NaN(), R2: 0.98,
		ResidualSE: 120, PRESS: math.Inf(1), AICc: math.Inf(-1), RangeMin: 512.5, RangeMax: 1490}}
	save(t, db, c, fits, fixed(), zeroMean)

	if got := dump(t, db, `SELECT intercept, intercept_se, intercept_p, slope_adjusted_p, press, aicc FROM fits`); got != "float64:4210.5|NULL|NULL|NULL|NULL|NULL\n" {
		t.Errorf("fit numbers: %s", got)
	}
	want := `"6500"|float64:2500|NULL|NULL|NULL|NULL|float64:0.01` + "\n" + `"6900"|float64:0|NULL|NULL|NULL|NULL|NULL` + "\n"
	if got := dump(t, db, `SELECT object, fixed_per_period, r2, lag, range_min, range_max, cv FROM behaviour_history ORDER BY object`); got != want {
		t.Errorf("behaviour numbers:\n%s\nwant\n%s", got, want)
	}
	bs := current(t, db)
	if len(bs) != 2 {
		t.Fatalf("%d behaviours, want 2", len(bs))
	}
	if !math.IsNaN(bs[0].R2) || !math.IsNaN(bs[0].RangeMin) || !math.IsNaN(bs[0].RangeMax) || bs[0].CV != 0.01 || bs[0].FixedPerPeriod != 2500 {
		t.Errorf("fixed cost read back %+v: want R² and range NaN, CV 0.01, fixed 2500", bs[0])
	}
	if !math.IsNaN(bs[1].CV) || bs[1].MeanCost != 0 {
		t.Errorf("zero-mean cost read back with CV %v and mean %v; want NaN and 0", bs[1].CV, bs[1].MeanCost)
	}
}

func TestSaveAnalysisBehaviourHistory(t *testing.T) {
	// The open row is refreshed while class, driver and lag stay. A change
	// without a break waits for a second analysis to see it: only then does
	// it close the open row and open a new one (no flapping).
	tests := []struct {
		name   string
		first  costdrift.Behaviour
		second func(*costdrift.Behaviour)
		closes bool
	}{
		{"same class, driver and lag", mixed(), func(b *costdrift.Behaviour) { b.FixedPerPeriod, b.N, b.Until = 4300, 37, "2026-07" }, false},
		{"same fixed class without driver", fixed(), func(b *costdrift.Behaviour) { b.FixedPerPeriod = 2600 }, false},
		{"another class", mixed(), func(b *costdrift.Behaviour) { b.Class, b.FixedPerPeriod = costdrift.Variable, 0 }, true},
		{"another driver", mixed(), func(b *costdrift.Behaviour) { b.Driver, b.Unit = "frames_built", "frame" }, true},
		{"another lag", mixed(), func(b *costdrift.Behaviour) { b.Lag = 0 }, true},
		{"a driver found for a fixed cost", fixed(), func(b *costdrift.Behaviour) {
			b.Class, b.Driver, b.Lag, b.R2, b.RangeMin, b.RangeMax = costdrift.Mixed, "orders", 0, 0.9, 10, 20
		}, true},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			db, c := mustOpen(t)
			first := save(t, db, c, nil, tc.first)
			c.t = c.t.AddDate(0, 1, 0) // 2025-07-01T06:00:00Z
			second := tc.first
			tc.second(&second)
			run2 := save(t, db, c, nil, second)
			object := tc.first.Object.String()
			history := func() string {
				return dump(t, db, `SELECT first_run_id, last_run_id, valid_from_run_at, valid_to_run_at FROM behaviour_history
					WHERE object = '`+object+`' ORDER BY id`)
			}
			id1, id2 := strconv.FormatInt(first.ID, 10), strconv.FormatInt(run2.ID, 10)
			// After the second analysis a change is only pending.
			if got, want := history(), "int64:"+id1+"|int64:"+id2+`|"2025-06-01T06:00:00Z"|NULL`+"\n"; got != want {
				t.Errorf("after the second analysis:\n%s\nwant\n%s", got, want)
			}
			bs := current(t, db)
			if tc.closes {
				if len(bs) != 1 || bs[0].Class != tc.first.Class || bs[0].Driver != tc.first.Driver || bs[0].Pending == nil ||
					bs[0].Pending.Class != second.Class || bs[0].Pending.Driver != second.Driver || bs[0].Pending.Lag != second.Lag {
					t.Fatalf("after one sighting the behaviour must stay, with the change pending: %+v", bs)
				}
			} else if len(bs) != 1 || !sameBehaviour(bs[0], second) || bs[0].Pending != nil {
				t.Fatalf("CurrentBehaviour %+v, want %+v", bs, second)
			}
			if !tc.closes {
				return
			}
			c.t = c.t.AddDate(0, 1, 0) // 2025-08-01T06:00:00Z
			run3 := save(t, db, c, nil, second)
			id3 := strconv.FormatInt(run3.ID, 10)
			want := "int64:" + id1 + "|int64:" + id2 + `|"2025-06-01T06:00:00Z"|"2025-08-01T06:00:00Z"` + "\n" +
				"int64:" + id3 + "|int64:" + id3 + `|"2025-08-01T06:00:00Z"|NULL` + "\n"
			if got := history(); got != want {
				t.Errorf("after the third analysis:\n%s\nwant\n%s", got, want)
			}
			bs = current(t, db)
			if len(bs) != 1 || !sameBehaviour(bs[0], second) || bs[0].Pending != nil {
				t.Errorf("CurrentBehaviour %+v, want %+v", bs, second)
			}
		})
	}
}

// A change seen once and then not again is dropped: the behaviour does not
// flap.
func TestPendingChangeDropped(t *testing.T) {
	db, c := mustOpen(t)
	first := mixed()
	save(t, db, c, nil, first)
	other := first
	other.Driver, other.Unit = "frames_built", "frame"
	save(t, db, c, nil, other)
	save(t, db, c, nil, first)
	save(t, db, c, nil, other) // seen again, but not twice in a row
	if n := count(t, db, "behaviour_history"); n != 1 {
		t.Errorf("%d history rows, want 1: nothing was confirmed", n)
	}
	bs := current(t, db)
	if len(bs) != 1 || bs[0].Driver != "machine_hours" || bs[0].Pending == nil || bs[0].Pending.Driver != "frames_built" {
		t.Errorf("current %+v: want machine hours with frames built pending once", bs)
	}
}

// A break dates the change at once: the open row closes the period before
// the break; the first analysis of an object records the periods before a
// break it finds as a closed row.
func TestBreakDatesHistory(t *testing.T) {
	db, c := mustOpen(t)
	lease := renewedLease()
	save(t, db, c, nil, lease)
	want := `"2023-07"|"2025-06"|float64:2800` + "\n" + `"2025-07"|NULL|float64:3300` + "\n"
	if got := dump(t, db, `SELECT valid_from_period, valid_to_period, fixed_per_period FROM behaviour_periods WHERE object = '6110/PAINT' ORDER BY valid_from_period`); got != want {
		t.Errorf("periods:\n%s\nwant\n%s", got, want)
	}
	// What was the formula in 2025-06? One query on the view.
	if got := dump(t, db, `SELECT fixed_per_period FROM behaviour_periods WHERE object = '6110/PAINT'
		AND valid_from_period <= '2025-06' AND (valid_to_period IS NULL OR valid_to_period >= '2025-06')`); got != "float64:2800\n" {
		t.Errorf("formula in 2025-06: %s", got)
	}
	// The same break seen again refreshes the open row; a later break closes it.
	save(t, db, c, nil, lease)
	later := lease
	later.FixedPerPeriod, later.Since = 3600, "2026-03"
	later.Break = &costdrift.Break{Period: "2026-03", LastBefore: "2026-02", WindowFrom: "2023-09", FixedBefore: 3300, FixedAfter: 3600}
	save(t, db, c, nil, later)
	want = `"2023-07"|"2025-06"` + "\n" + `"2025-07"|"2026-02"` + "\n" + `"2026-03"|NULL` + "\n"
	if got := dump(t, db, `SELECT valid_from_period, valid_to_period FROM behaviour_periods WHERE object = '6110/PAINT' ORDER BY valid_from_period`); got != want {
		t.Errorf("periods after a second break:\n%s\nwant\n%s", got, want)
	}
}

// sameBehaviour compares behaviours, NaN equal to NaN and, for a cost
// without a driver, the range (stored as unknown) and the lag ignored.
func sameBehaviour(a, b costdrift.Behaviour) bool {
	if a.Driver == "" {
		a.RangeMin, a.RangeMax, b.RangeMin, b.RangeMax = 0, 0, 0, 0
	}
	for _, p := range []*float64{&a.R2, &b.R2, &a.CV, &b.CV} {
		if math.IsNaN(*p) {
			*p = -1
		}
	}
	return reflect.DeepEqual(a, b)
}

func TestSaveAnalysisStoresRunAndFits(t *testing.T) {
	db, c := mustOpen(t)
	fits := []costdrift.Fit{
		{Object: weld, Model: costdrift.ModelConstant, N: 36, Intercept: 6100.25, R2: 0, AICc: 512.5, RangeMin: math.NaN(), RangeMax: math.NaN()},
		{Object: weld, Driver: "machine_hours", Lag: 1, Model: costdrift.ModelLinear, N: 35, Intercept: 4210.5, Slope: 1.875, SlopeP: 1e-9,
			SlopeAdjustedP: 4e-9, R2: 0.981, RangeMin: 512.5, RangeMax: 1490, Significant: true, Chosen: true, PlausibleRanked: 1},
		{Object: weld, Driver: "orders", Lag: 0, Model: costdrift.ModelLinear, N: 36, Slope: -2.5, SlopeP: 0.001, SlopeAdjustedP: 0.004,
			Implausible: true},
	}
	run := save(t, db, c, fits, mixed())
	if run.ID != 1 {
		t.Errorf("run ID %d, want 1", run.ID)
	}
	wantRun := `int64:1|"2025-06-01T06:00:00Z"|"2025-06-01T06:00:03Z"|"2023-07"|"2026-06"|"account_cost_center"|int64:1|"{\"window\":36}"` + "\n"
	if got := dump(t, db, `SELECT * FROM analysis_runs`); got != wantRun {
		t.Errorf("analysis_runs:\n%s\nwant\n%s", got, wantRun)
	}
	wantFits := `"6200/WELD"|"6200"|"WELD"|""|int64:0|"constant"|int64:0|int64:0|int64:0|NULL|NULL|NULL` + "\n" +
		`"6200/WELD"|"6200"|"WELD"|"machine_hours"|int64:1|"linear"|int64:1|int64:0|int64:1|int64:1|float64:512.5|float64:1490` + "\n" +
		`"6200/WELD"|"6200"|"WELD"|"orders"|int64:0|"linear"|int64:0|int64:1|int64:0|NULL|float64:0|float64:0` + "\n"
	if got := dump(t, db, `SELECT object, account, cost_center, driver, lag, model, significant, implausible, chosen, rank, range_min, range_max
		FROM fits WHERE analysis_run_id = 1 ORDER BY driver`); got != wantFits {
		t.Errorf("fits:\n%s\nwant\n%s", got, wantFits)
	}
}

func TestSaveAnalysisIsAtomic(t *testing.T) {
	// One bad behaviour keeps the whole analysis out: no run, no fits, and
	// the other objects' history as it was.
	db, c := mustOpen(t)
	save(t, db, c, nil, mixed())
	before := dump(t, db, `SELECT * FROM behaviour_history`)
	bad := fixed()
	bad.Class = "unknown_class"
	changed := mixed()
	changed.Class = costdrift.Variable
	err := db.SaveAnalysis(context.Background(), analysisRun(c),
		[]costdrift.Fit{{Object: weld, Model: costdrift.ModelConstant, N: 36}}, []costdrift.Behaviour{changed, bad})
	if err == nil || !strings.Contains(err.Error(), "save behaviour 6500: CHECK constraint failed") {
		t.Fatalf("error %v, want a refusal naming the object", err)
	}
	if n := count(t, db, "analysis_runs"); n != 1 {
		t.Errorf("%d analysis runs, want the first only", n)
	}
	if n := count(t, db, "fits"); n != 0 {
		t.Errorf("%d fits kept from a failed analysis", n)
	}
	if after := dump(t, db, `SELECT * FROM behaviour_history`); after != before {
		t.Errorf("behaviour_history changed:\n%s\nwas\n%s", after, before)
	}
}

// fits keeps each object's latest analysis: a new analysis of an object
// drops the fits of its previous one; an object not analysed again keeps
// its fits.
func TestFitsKeepEachObjectsLatestAnalysis(t *testing.T) {
	db, c := mustOpen(t)
	assy := costdrift.CostObject{Account: "6300", CostCenter: "ASSY"}
	fitsOf := func(objects ...costdrift.CostObject) []costdrift.Fit {
		var out []costdrift.Fit
		for _, o := range objects {
			out = append(out, costdrift.Fit{Object: o, Model: costdrift.ModelConstant, N: 36, Intercept: 100, RangeMin: math.NaN(), RangeMax: math.NaN()},
				costdrift.Fit{Object: o, Driver: "orders", Model: costdrift.ModelLinear, N: 36, Intercept: 50, Slope: 2})
		}
		return out
	}
	for i, objects := range [][]costdrift.CostObject{{weld, assy}, {weld}, {weld}} {
		run := analysisRun(c)
		run.Inputs = map[string]string{}
		for _, o := range objects {
			run.Inputs[o.String()] = fmt.Sprintf("hash %d", i)
		}
		if err := db.SaveAnalysis(context.Background(), run, fitsOf(objects...), nil); err != nil {
			t.Fatal(err)
		}
	}
	want := `"6200/WELD"|int64:3|int64:2` + "\n" + `"6300/ASSY"|int64:1|int64:2` + "\n"
	if got := dump(t, db, `SELECT object, analysis_run_id, COUNT(*) FROM fits GROUP BY object, analysis_run_id ORDER BY object`); got != want {
		t.Errorf("fits by object and run:\n%s\nwant\n%s", got, want)
	}
	if got := dump(t, db, `SELECT COUNT(*) FROM latest_fits`); got != "int64:4\n" {
		t.Errorf("latest_fits holds %s, want the same 4 rows", got)
	}
}

// BehaviourIn gives the formula in force in a period: before a break the
// old one, with its prediction terms; from the break on, and after the
// last analysed period, the new one.
func TestBehaviourIn(t *testing.T) {
	db, c := mustOpen(t)
	ctx := context.Background()
	save(t, db, c, nil, mixed())
	after := mixed()
	after.FixedPerPeriod, after.Since = 3900, "2025-02"
	before := &costdrift.PredictionTerms{Intercept: true, Centre: []float64{880}, Coef: []float64{5900, 1.9}, Cov: []float64{1.0 / 19, 0, 0, 2e-6}, S: 70, N: 19, DF: 17}
	after.Break = &costdrift.Break{Period: "2025-02", LastBefore: "2025-01", WindowFrom: "2023-07", Test: "sup-F", Statistic: 30, P: 0.001,
		Driver: "machine_hours", Lag: 1, FixedBefore: 4210.5, RateBefore: 1.875, FixedAfter: 3900, RateAfter: 1.875, Periods: 17,
		PredictionBefore: before}
	save(t, db, c, nil, after)
	for _, tc := range []struct {
		period string
		fixed  float64
	}{{"2023-07", 4210.5}, {"2024-06", 4210.5}, {"2025-01", 4210.5}, {"2025-02", 3900}, {"2026-06", 3900}, {"2027-01", 3900}} {
		bs, err := db.BehaviourIn(ctx, tc.period)
		if err != nil {
			t.Fatal(err)
		}
		if len(bs) != 1 || bs[0].FixedPerPeriod != tc.fixed || bs[0].Prediction == nil {
			t.Fatalf("%s: %+v, want one behaviour with fixed %v and prediction terms", tc.period, bs, tc.fixed)
		}
	}
	bs, _ := db.BehaviourIn(ctx, "2023-06")
	if len(bs) != 0 {
		t.Errorf("2023-06, before any behaviour: %d behaviours", len(bs))
	}
}

func TestTotalsBeyondInt64(t *testing.T) {
	// Lines stored before sync bounded amounts can add up to more than int64
	// holds (2^63 - 1 = 9,223,372,036,854,775,807): ten lines of
	// 999,999,999,999,999,999 minor units (9,999,999,999,999,999.99 EUR)
	// make 9,999,999,999,999,999,990. The store says so for that total,
	// still sums every other one exactly, and never fails the whole query.
	db, _ := mustOpen(t)
	const big = 999_999_999_999_999_999
	var lines []costdrift.LedgerLine
	for i := 1; i <= 10; i++ {
		lines = append(lines, ledgerLine("gl", "BIG", i, "2025-01-31", "6200", "WELD", big, ""))
	}
	lines = append(lines,
		ledgerLine("gl", "E1", 1, "2025-01-31", "6200", "PAINT", 50000, ""),
		// A running int64 sum overflows after two lines, yet the total,
		// 2^63 - 1, fits.
		ledgerLine("gl", "C", 1, "2025-01-31", "6300", "", math.MaxInt64, ""),
		ledgerLine("gl", "C", 2, "2025-01-31", "6300", "", math.MaxInt64, ""),
		ledgerLine("gl", "C", 3, "2025-01-31", "6300", "", -math.MaxInt64, ""),
		ledgerLine("gl", "M", 1, "2025-01-31", "6400", "", math.MinInt64, ""),
		// 2 x (2^63 - 1) + 2 = 2^64, which a wrapping int64 sum makes 0.
		ledgerLine("gl", "W", 1, "2025-01-31", "6500", "", math.MaxInt64, ""),
		ledgerLine("gl", "W", 2, "2025-01-31", "6500", "", math.MaxInt64, ""),
		ledgerLine("gl", "W", 3, "2025-01-31", "6500", "", 2, ""),
	)
	lines = append(lines, balancedAcrossTheLimit()...)
	run := loadFile(t, db, "/gl.csv", lines)
	// Every entry but Z is one-sided: BIG, E1, C, M and W, W's 2^64
	// included.
	if len(run.Warnings) != 1 || !strings.Contains(run.Warnings[0], ": 5 entries do not balance") {
		t.Errorf("warnings %q, want 5 entries that do not balance", run.Warnings)
	}

	totals, err := db.CostTotals(context.Background())
	if err != nil {
		t.Fatalf("CostTotals: %v", err)
	}
	want := []costdrift.CostTotal{
		{Period: "2025-01", Account: "6200", CostCenter: "PAINT", AmountMinor: 50000},
		{Period: "2025-01", Account: "6200", CostCenter: "WELD", Overflow: true},
		{Period: "2025-01", Account: "6300", AmountMinor: math.MaxInt64},
		{Period: "2025-01", Account: "6400", AmountMinor: math.MinInt64},
		{Period: "2025-01", Account: "6500", Overflow: true},
	}
	want = append(want, costdrift.CostTotal{Period: "2025-01", Account: "6600"}) // Z: zero
	if !reflect.DeepEqual(totals, want) {
		t.Errorf("CostTotals:\n got  %+v\n want %+v", totals, want)
	}

	// The view answers: amount_minor is NULL where no integer holds the
	// total, amount (currency units, a float) is there for every row.
	if got := dump(t, db, `SELECT account, cost_center, amount_minor FROM cost_series ORDER BY account, cost_center`); got !=
		`"6200"|"PAINT"|int64:50000`+"\n"+`"6200"|"WELD"|NULL`+"\n"+`"6300"|""|int64:9223372036854775807`+"\n"+
			`"6400"|""|int64:-9223372036854775808`+"\n"+`"6500"|""|NULL`+"\n"+`"6600"|""|int64:0`+"\n" {
		t.Errorf("cost_series amount_minor:\n%s", got)
	}
	rows, err := db.SQL().Query(`SELECT amount FROM cost_series ORDER BY account, cost_center`)
	if err != nil {
		t.Fatal(err)
	}
	defer rows.Close()
	// Minor units / 100 (EUR); the float totals carry a double's 16 digits,
	// so the tolerance is relative.
	wantAmount := []float64{500, 10 * big / 100.0, math.MaxInt64 / 100.0, math.MinInt64 / 100.0, 2 * (1 << 63) / 100.0, 0}
	const relTol = 1e-15
	for i := 0; rows.Next(); i++ {
		var a float64
		if err := rows.Scan(&a); err != nil {
			t.Fatal(err)
		}
		if i >= len(wantAmount) || math.Abs(a-wantAmount[i]) > relTol*math.Abs(wantAmount[i]) {
			t.Errorf("cost_series row %d: amount %v, want %v", i, a, wantAmount[min(i, len(wantAmount)-1)])
		}
	}
	if err := rows.Err(); err != nil {
		t.Fatal(err)
	}

	// One object's costs for explain: exact where the total fits, an error
	// naming the period where it does not.
	costs, _, err := db.CostPerPeriod(context.Background(), costdrift.CostObject{Account: "6300"}, false, "2025-01", "2025-01")
	if err != nil || costs["2025-01"] != math.MaxInt64 {
		t.Errorf("CostPerPeriod 6300: %v, %v; want 2025-01 at %d", costs, err, int64(math.MaxInt64))
	}
	_, _, err = db.CostPerPeriod(context.Background(), weld, false, "2025-01", "2025-01")
	if err == nil || !strings.Contains(err.Error(), "2025-01") || !strings.Contains(err.Error(), "int64") {
		t.Errorf("CostPerPeriod 6200/WELD: %v; want an error naming 2025-01 and int64", err)
	}
}

// balancedAcrossTheLimit is entry Z: 2^63 - 1 twice, then taken back twice.
// Its running sum leaves int64, yet the entry balances.
func balancedAcrossTheLimit() []costdrift.LedgerLine {
	return []costdrift.LedgerLine{
		ledgerLine("gl", "Z", 1, "2025-01-31", "6600", "", math.MaxInt64, ""),
		ledgerLine("gl", "Z", 2, "2025-01-31", "6600", "", math.MaxInt64, ""),
		ledgerLine("gl", "Z", 3, "2025-01-31", "6600", "", -math.MaxInt64, ""),
		ledgerLine("gl", "Z", 4, "2025-01-31", "6600", "", -math.MaxInt64, ""),
	}
}

func TestBalanceCheckOfManyEntriesBeyondInt64(t *testing.T) {
	// More unbalanced entries than the check follows one by one
	// (maxSuspects): the whole file is checked in one query, which must
	// neither fail on an entry beyond int64 nor count one that balances.
	db, _ := mustOpen(t)
	var lines []costdrift.LedgerLine
	for i := 1; i <= 10; i++ {
		lines = append(lines, ledgerLine("gl", "BIG", i, "2025-01-31", "6200", "WELD", 999_999_999_999_999_999, ""))
	}
	for i := range maxSuspects {
		lines = append(lines, ledgerLine("gl", fmt.Sprintf("E%d", i), 1, "2025-01-31", "6200", "PAINT", 100, ""))
	}
	lines = append(lines, balancedAcrossTheLimit()...)
	run := loadFile(t, db, "/gl.csv", lines)
	// BIG and the 10,000 one-line entries; not Z.
	if len(run.Warnings) != 1 || !strings.Contains(run.Warnings[0], ": 10001 entries do not balance") {
		t.Errorf("warnings %q, want 10001 entries that do not balance", run.Warnings)
	}
}
