package report

import (
	"bytes"
	"encoding/json"
	"fmt"
	"math"
	"strings"
	"testing"
	"time"

	"github.com/costdrift/costdrift/internal/costdrift"
)

var maintenance = costdrift.CostObject{Account: "6500", CostCenter: "WELD"}

// explainInput is a mixed cost on machine hours of the period before, with
// four drivers tried: two ranked, one implausible, one not significant.
// The numbers are invented; the expectations below follow from them by
// hand.
func explainInput() ExplainInput {
	nan := math.NaN()
	linear := func(driver string, lag, n int, a, b, p, holm, r2, press, aicc float64) costdrift.Fit {
		return costdrift.Fit{Object: maintenance, Driver: driver, Lag: lag, Model: costdrift.ModelLinear, N: n,
			Intercept: a, Slope: b, SlopeP: p, SlopeAdjustedP: holm, R2: r2, PRESS: press, AICc: aicc}
	}
	mh := linear("machine_hours", 1, 35, 931.18, 1.0712, 1e-28, 4e-28, 0.977, 72630, 368.8)
	mh.Significant, mh.Chosen, mh.PlausibleRanked = true, true, 1
	frames := linear("frames_built", 0, 36, 1039.8, 0.83, 7e-8, 2.1e-7, 0.579, 1325880, 483.4)
	frames.Significant, frames.PlausibleRanked = true, 2
	orders := linear("orders", 0, 36, 2500, -0.4, 0.001, 0.003, 0.3, 3600, 500)
	orders.Implausible = true
	shipments := linear("shipments", 1, 35, 1500, 0.2, 0.4, 1, 0.02, 7000, 510)
	return ExplainInput{
		Behaviour: costdrift.Behaviour{
			Object: maintenance, Class: costdrift.Mixed, Driver: "machine_hours", Unit: "machine hour", Lag: 1,
			FixedPerPeriod: 931.18, VariableRate: 1.0712, R2: 0.977, N: 35, RangeMin: 501.1, RangeMax: 1533.1,
			Since: "2023-08", Until: "2026-06", Reason: "cost moves with machine hours of the period before",
			HighLow: &costdrift.HighLow{HighPeriod: "2025-08", LowPeriod: "2023-12", HighActivity: 1533.1, LowActivity: 501.1,
				HighCost: 2608.09, LowCost: 1451.75, Fixed: 890.28, Rate: 1.1205},
			Outliers: []costdrift.Outlier{{Period: "2026-06", CooksD: 0.322, Studentised: -2.62}},
			Diagnostics: &costdrift.Diagnostics{
				Models: []costdrift.ModelSummary{
					{Model: costdrift.ModelConstant, N: 36, AICc: 512.1, PRESS: 2975545, R2: 0},
					{Model: costdrift.ModelStep, Driver: "machine_hours", Lag: 1, N: 35, AICc: 430.4, PRESS: 314921, R2: 0.913},
					{Model: costdrift.ModelLinear, Driver: "machine_hours", Lag: 1, N: 35, AICc: 368.8, PRESS: 72630, R2: 0.977},
					{Model: costdrift.ModelProportional, Driver: "machine_hours", Lag: 1, N: 35, AICc: 489.2, PRESS: 2252272, R2: 0.985},
				},
				DurbinWatson: 1.85, RobustIntercept: 923.42, RobustSlope: 1.0797, Candidates: 4,
			},
		},
		AccountName: "Maintenance",
		Run: costdrift.AnalysisRun{ID: 7, FinishedAt: time.Date(2026, 7, 11, 6, 0, 5, 0, time.UTC),
			WindowFrom: "2023-07", WindowTo: "2026-06"},
		Alpha: 0.05,
		Fits: []costdrift.Fit{
			{Object: maintenance, Model: costdrift.ModelConstant, N: 36, Intercept: 1969.6, Slope: nan, SlopeP: nan, SlopeAdjustedP: nan, AICc: 512.1},
			shipments, orders, frames, mh,
			{Object: maintenance, Driver: "machine_hours", Lag: 1, Model: costdrift.ModelProportional, N: 35, Intercept: nan, Slope: 1.97},
		},
		ActivityPeriod: previousMonths,
	}
}

// previousMonths shifts a "YYYY-MM" period back by lag months.
func previousMonths(p string, lag int) string {
	t, err := time.Parse("2006-01", p)
	if err != nil {
		panic(err)
	}
	return t.AddDate(0, -lag, 0).Format("2006-01")
}

func TestExplainRanksDriversAndComparesModels(t *testing.T) {
	e := Explain(explainInput())

	// Ranked drivers by rank, then the others by PRESS per period:
	// orders 3600/36 = 100 before shipments 7000/35 = 200 (hand-computed).
	var order []string
	for _, d := range e.Drivers {
		order = append(order, fmt.Sprintf("%s/%d", d.Driver, d.Lag))
	}
	if got := strings.Join(order, " "); got != "machine_hours/1 frames_built/0 orders/0 shipments/1" {
		t.Errorf("driver order %s", got)
	}
	if d := e.Drivers[0]; !d.Chosen || d.Rank != 1 || *d.HolmP != 4e-28 || *d.PRESSPerPeriod != 72630.0/35 {
		t.Errorf("chosen driver line %+v", d)
	}
	if d := e.Drivers[2]; !d.Implausible || d.Chosen || d.Rank != 0 || *d.PRESSPerPeriod != 100 {
		t.Errorf("implausible driver line %+v", d)
	}

	// ΔAICc = AICc − lowest AICc among models on the same periods (common
	// practice: AICc compares models fitted to the same data only); the
	// constant model has 36 periods against the others' 35.
	tests := []struct {
		model      costdrift.Model
		delta      float64
		comparable bool
		tol        float64
	}{
		{costdrift.ModelLinear, 0, true, 0},
		{costdrift.ModelStep, 430.4 - 368.8, true, 1e-9},
		{costdrift.ModelProportional, 489.2 - 368.8, true, 1e-9},
		{costdrift.ModelConstant, math.NaN(), false, 0},
	}
	if len(e.Models) != len(tests) {
		t.Fatalf("%d models, want %d: %+v", len(e.Models), len(tests), e.Models)
	}
	for i, tc := range tests {
		m := e.Models[i]
		if m.Model != tc.model || m.Comparable != tc.comparable {
			t.Errorf("model %d = %s comparable %v, want %s comparable %v", i, m.Model, m.Comparable, tc.model, tc.comparable)
			continue
		}
		switch {
		case !tc.comparable && m.DeltaAICc != nil:
			t.Errorf("%s: ΔAICc %v for a model on other periods, want none", m.Model, *m.DeltaAICc)
		case tc.comparable && (m.DeltaAICc == nil || math.Abs(*m.DeltaAICc-tc.delta) > tc.tol):
			t.Errorf("%s: ΔAICc %v, want %v", m.Model, m.DeltaAICc, tc.delta)
		}
	}
	if !e.Models[0].Best || !e.Models[0].Chosen || e.Models[1].Best {
		t.Errorf("linear must be best and chosen: %+v", e.Models[:2])
	}

	c := e.Comparison
	if c == nil || *c.LeastSquares.Fixed != 931.18 || *c.LeastSquares.Rate != 1.0712 || c.N != 35 ||
		c.High.ActivityPeriod != "2025-07" || c.Low.ActivityPeriod != "2023-11" {
		t.Fatalf("high-low comparison %+v", c)
	}
	// 890.28 − 931.18 = −40.90 and 1.1205 − 1.0712 = 0.0493 (hand-computed).
	if !strings.Contains(c.Explanation, "fixed part 40.90 lower and the rate 0.0493 higher") || !strings.Contains(c.Explanation, "all 35 periods") {
		t.Errorf("explanation %q", c.Explanation)
	}
	d := e.Diagnostics
	if d.CooksLimit == nil || math.Abs(*d.CooksLimit-4.0/35) > 1e-15 || *d.LeastSquares.Rate != 1.0712 || *d.Robust.Rate != 1.0797 || d.Basis != "" {
		t.Errorf("diagnostics %+v", d)
	}
}

func TestExplainStepAndVariableNameTheirModel(t *testing.T) {
	in := explainInput()
	in.Behaviour.Class = costdrift.Step
	in.Behaviour.Steps = []costdrift.StepLevel{{From: 501.1, To: 900, Level: 1500}, {From: 950, To: 1533.1, Level: 2400}}
	e := Explain(in)
	for _, m := range e.Models {
		if m.Chosen != (m.Model == costdrift.ModelStep) {
			t.Errorf("step cost: model %s chosen %v", m.Model, m.Chosen)
		}
	}
	if !strings.Contains(e.Diagnostics.Basis, "straight line on machine hours of the period before, not the step levels") {
		t.Errorf("step basis %q", e.Diagnostics.Basis)
	}
	if !strings.Contains(e.Comparison.Explanation, "neither straight line is the formula") {
		t.Errorf("step explanation %q", e.Comparison.Explanation)
	}

	// The levels on another driver than the best-ranked one, whose step
	// model the stored comparison carries: the stored step fit of the
	// chosen driver stands in for it.
	in = explainInput()
	in.Behaviour.Class = costdrift.Step
	in.Behaviour.Diagnostics.Models[1].Driver, in.Behaviour.Diagnostics.Models[1].Lag = "frames_built", 0
	in.Fits = append(in.Fits,
		costdrift.Fit{Object: maintenance, Driver: "frames_built", Lag: 0, Model: costdrift.ModelStep, N: 36, AICc: 470, PRESS: 36000, R2: 0.8},
		costdrift.Fit{Object: maintenance, Driver: "machine_hours", Lag: 1, Model: costdrift.ModelStep, N: 35, AICc: 350.5, PRESS: 35000, R2: 0.99})
	e = Explain(in)
	for _, m := range e.Models {
		if m.Model == costdrift.ModelStep && (m.Driver != "machine_hours" || m.Lag != 1 || *m.AICc != 350.5 || !m.Best || *m.PRESSPerPeriod != 1000) {
			t.Errorf("step line %+v, want the stored step fit on machine_hours lag 1 (AICc 350.5, PRESS/n 35000/35 = 1000)", m)
		}
	}

	in = explainInput()
	in.Behaviour.Class = costdrift.Variable
	e = Explain(in)
	for _, m := range e.Models {
		if m.Chosen != (m.Model == costdrift.ModelProportional) {
			t.Errorf("variable cost: model %s chosen %v", m.Model, m.Chosen)
		}
	}
}

func TestExplainWithoutDriver(t *testing.T) {
	in := explainInput()
	b := &in.Behaviour
	b.Class, b.Driver, b.Unit, b.Lag, b.HighLow, b.Outliers = costdrift.Unexplained, "", "", 0, nil, nil
	b.Diagnostics.Models = b.Diagnostics.Models[:1]
	e := Explain(in)
	if e.Comparison != nil || e.Diagnostics.DurbinWatson != nil || e.Diagnostics.CooksLimit != nil || len(e.Diagnostics.Outliers) != 0 {
		t.Errorf("no-driver explanation carries driver facts: %+v %+v", e.Comparison, e.Diagnostics)
	}
	for _, d := range e.Drivers {
		if d.Chosen {
			t.Errorf("driver %s chosen for a cost without a driver", d.Driver)
		}
	}
	if len(e.Models) != 1 || !e.Models[0].Chosen || !e.Models[0].Best {
		t.Errorf("models %+v, want the constant, chosen", e.Models)
	}
	var buf bytes.Buffer
	if err := ExplainText(&buf, e, "EUR"); err != nil {
		t.Fatal(err)
	}
	if out := buf.String(); !strings.Contains(out, "Durbin–Watson: not computed") || strings.Contains(out, "High-low") {
		t.Errorf("text:\n%s", out)
	}
}

// The 1.5 and 2.5 marks are a rule of thumb for the Durbin–Watson statistic
// (common practice); 0 means residuals that follow each other, 4 residuals
// that alternate.
func TestDurbinWatsonReading(t *testing.T) {
	tests := []struct {
		d    float64
		want string
	}{
		{0.6, "far below 2"},
		{1.3, "below 1.5: residuals tend to follow each other"},
		{1.5, "near 2"},
		{2.0, "near 2"},
		{2.5, "near 2"},
		{2.9, "above 2.5: residuals tend to alternate"},
		{math.NaN(), "not computed"},
	}
	for _, tc := range tests {
		if got := DurbinWatsonReading(tc.d); !strings.HasPrefix(got, tc.want) {
			t.Errorf("DurbinWatsonReading(%v) = %q, want it to start %q", tc.d, got, tc.want)
		}
	}
}

func TestExplainTextIsAligned(t *testing.T) {
	var buf bytes.Buffer
	if err := ExplainText(&buf, Explain(explainInput()), "EUR"); err != nil {
		t.Fatal(err)
	}
	out := buf.String()
	for _, want := range []string{
		"6500/WELD — Maintenance", "class      mixed", "formula    cost = 931.18 + 1.07 per machine hour of the period before",
		"run 7 of 2026-07-11 06:00:05 UTC", "Holm-corrected at 0.05",
		"implausible: significant negative slope", "not significant", "other n: AICc not comparable",
		"highest activity  2025-08  2025-07", "lowest activity   2023-12  2023-11",
		"Durbin–Watson 1.85, near 2", "2026-06     0.322                 -2.62", "estimates", "judgement", "confidential",
	} {
		if !strings.Contains(out, want) {
			t.Errorf("text lacks %q:\n%s", want, out)
		}
	}
	// In the drivers table every number ends where its header ends.
	lines := strings.Split(out, "\n")
	h := -1
	for i, l := range lines {
		if strings.HasPrefix(l, "  RANK  DRIVER") {
			h = i
		}
	}
	if h < 0 {
		t.Fatalf("no drivers table:\n%s", out)
	}
	header := []rune(lines[h])
	for _, col := range []string{"RATE", "HOLM P", "PRESS/N"} {
		end := strings.Index(string(header), col) // bytes up to the column name
		end = len([]rune(lines[h][:end])) + len(col)
		for _, line := range lines[h+1 : h+5] {
			l := []rune(line)
			if len(l) < end || l[end-1] == ' ' || (len(l) > end && l[end] != ' ') {
				t.Errorf("column %s not right-aligned at %d in %q", col, end, line)
			}
		}
	}
}

func TestExplainJSONCarriesTheReportRow(t *testing.T) {
	in := explainInput()
	var ex, rep bytes.Buffer
	if err := ExplainJSON(&ex, Explain(in)); err != nil {
		t.Fatal(err)
	}
	if err := JSON(&rep, Rows([]costdrift.Behaviour{in.Behaviour}, map[string]string{"6500": "Maintenance"})); err != nil {
		t.Fatal(err)
	}
	var got map[string]any
	var rows []map[string]any
	if err := json.Unmarshal(ex.Bytes(), &got); err != nil {
		t.Fatal(err)
	}
	if err := json.Unmarshal(rep.Bytes(), &rows); err != nil {
		t.Fatal(err)
	}
	for k, v := range rows[0] {
		if fmt.Sprint(got[k]) != fmt.Sprint(v) {
			t.Errorf("%s: explain has %v, the report %v", k, got[k], v)
		}
	}
	for _, k := range []string{"analysis", "drivers", "models", "high_low_comparison", "diagnostics", "notes", "cautions"} {
		if _, ok := got[k]; !ok {
			t.Errorf("explain JSON lacks %q", k)
		}
	}
	models := got["models"].([]any)
	if last := models[len(models)-1].(map[string]any); last["model"] != "constant" || last["delta_aicc"] != nil {
		t.Errorf("a model on other periods must have delta_aicc null: %v", last)
	}
}
