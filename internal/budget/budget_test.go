package budget

import (
	"math"
	"slices"
	"strings"
	"testing"

	"github.com/costdrift/costdrift/internal/costdrift"
	"github.com/costdrift/costdrift/internal/fit"
)

// monthShift is the period n months after p, for periods YYYY-MM.
func monthShift(p string, n int) string {
	y, m := int(p[0]-'0')*1000+int(p[1]-'0')*100+int(p[2]-'0')*10+int(p[3]-'0'), int(p[5]-'0')*10+int(p[6]-'0')
	i := y*12 + m - 1 + n
	return string([]byte{byte('0' + i/12/1000), byte('0' + i/12/100%10), byte('0' + i/12/10%10), byte('0' + i/12%10), '-', byte('0' + (i%12+1)/10), byte('0' + (i%12+1)%10)})
}

func TestMonthShift(t *testing.T) {
	for _, c := range []struct {
		p    string
		n    int
		want string
	}{{"2026-12", 1, "2027-01"}, {"2027-01", -1, "2026-12"}, {"2026-05", 0, "2026-05"}, {"2026-03", -14, "2025-01"}} {
		if got := monthShift(c.p, c.n); got != c.want {
			t.Errorf("monthShift(%s, %d) = %s, want %s", c.p, c.n, got, c.want)
		}
	}
}

// table is a Lookup over driver → period → value, company-wide.
type table map[string]map[string]float64

func (tb table) lookup(period, driver, costCenter string) (float64, bool) {
	v, ok := tb[driver][period]
	return v, ok
}

func obj(account, cc string) costdrift.CostObject {
	return costdrift.CostObject{Account: account, CostCenter: cc}
}

// lineTerms are the prediction terms of a line fitted to x, y.
func lineTerms(t *testing.T, x, y []float64) *costdrift.PredictionTerms {
	t.Helper()
	r, err := fit.Line(x, y)
	if err != nil {
		t.Fatal(err)
	}
	terms := costdrift.PredictionTerms(r.Terms())
	return &terms
}

func near(got, want, rel float64) bool {
	return math.Abs(got-want) <= rel*math.Max(1, math.Abs(want))
}

// Hand-worked flexible budget and variances (common practice formulas):
// power is a mixed cost of 2,000 a month plus 3.50 per machine hour. The
// plan was 1,000 hours; 1,100 were worked and 6,100 spent.
//
//	static budget   = 2,000 + 3.50 × 1,000 = 5,500
//	flexible budget = 2,000 + 3.50 × 1,100 = 5,850
//	spending variance = 6,100 − 5,850 = 250 U
//	activity variance = 5,850 − 5,500 = 350 U
//	actual − static = 600 = 250 + 350
func TestHandWorkedMixed(t *testing.T) {
	b := costdrift.Behaviour{Object: obj("6200", "WELD"), Class: costdrift.Mixed, Driver: "machine_hours",
		FixedPerPeriod: 2000, VariableRate: 3.5, RangeMin: 800, RangeMax: 1300}
	plan := table{"machine_hours": {"2026-11": 1000}}
	actual := table{"machine_hours": {"2026-11": 1100}}
	lines := Variances([]costdrift.Behaviour{b}, "2026-11", map[string]float64{"6200/WELD": 6100}, actual.lookup, plan.lookup, monthShift)
	if len(lines) != 1 {
		t.Fatalf("%d lines", len(lines))
	}
	l := lines[0]
	for _, c := range []struct {
		what      string
		got, want float64
	}{{"static budget", l.Static, 5500}, {"flexible budget", l.Flexible.Value, 5850}, {"spending variance", l.SpendingVariance, 250},
		{"activity variance", l.ActivityVariance, 350}, {"actual activity", l.ActualActivity, 1100}, {"planned activity", l.PlanActivity, 1000},
		{"actual − static", l.Actual - l.Static, l.SpendingVariance + l.ActivityVariance}} {
		if !near(c.got, c.want, 1e-12) {
			t.Errorf("%s = %v, want %v", c.what, c.got, c.want)
		}
	}
	if l.SpendingMark() != "U" || l.ActivityMark() != "U" {
		t.Errorf("marks %q %q, want U U", l.SpendingMark(), l.ActivityMark())
	}
	// Without terms there is no interval, and the line says why.
	if !math.IsNaN(l.Flexible.Low95) || l.Outside95 || !strings.Contains(l.Warning, "run `costdrift analyze --all`") {
		t.Errorf("a formula without terms: low95 %v, outside %v, warning %q", l.Flexible.Low95, l.Outside95, l.Warning)
	}
}

// A variable cost: 12.00 per frame, 500 frames built, 5,800 spent: the
// flexible budget is 6,000 and the spending variance 200 F (common practice).
// A fixed cost of 3,000 with 3,300 spent: 300 U, and no activity variance.
func TestHandWorkedVariableAndFixed(t *testing.T) {
	bs := []costdrift.Behaviour{
		{Object: obj("5100", "WELD"), Class: costdrift.Variable, Driver: "frames_built", VariableRate: 12, RangeMin: 300, RangeMax: 700},
		{Object: obj("6100", "WELD"), Class: costdrift.Fixed, FixedPerPeriod: 3000},
	}
	act := table{"frames_built": {"2026-11": 500}}
	plan := table{"frames_built": {"2026-11": 450}}
	lines := Variances(bs, "2026-11", map[string]float64{"5100/WELD": 5800, "6100/WELD": 3300}, act.lookup, plan.lookup, monthShift)
	v, f := lines[0], lines[1]
	if v.Flexible.Value != 6000 || v.SpendingVariance != -200 || v.SpendingMark() != "F" || v.Static != 5400 || v.ActivityVariance != 600 {
		t.Errorf("variable: flexible %v spending %v %s static %v activity %v", v.Flexible.Value, v.SpendingVariance, v.SpendingMark(), v.Static, v.ActivityVariance)
	}
	if f.Flexible.Value != 3000 || f.SpendingVariance != 300 || f.SpendingMark() != "U" || f.ActivityVariance != 0 || f.ActivityMark() != "" {
		t.Errorf("fixed: flexible %v spending %v %s activity %v %q", f.Flexible.Value, f.SpendingVariance, f.SpendingMark(), f.ActivityVariance, f.ActivityMark())
	}
	// An object with no postings in the period has an actual cost of 0.
	lines = Variances(bs[1:], "2026-11", map[string]float64{}, act.lookup, nil, monthShift)
	if lines[0].Actual != 0 || lines[0].SpendingVariance != -3000 || !math.IsNaN(lines[0].Static) {
		t.Errorf("no postings: %+v", lines[0])
	}
}

// A step cost budgets the level whose activity range holds the plan; between
// two levels' ranges the nearer level; beyond the last, the last level with
// a warning.
func TestStepBudget(t *testing.T) {
	m := fit.StepModel{Levels: []fit.StepLevel{{From: 600, To: 800, Mean: 6000, N: 10}, {From: 850, To: 1200, Mean: 9000, N: 14}, {From: 1250, To: 1600, Mean: 12000, N: 12}}, RSS: 36 * 100 * 100}
	terms, err := fit.StepTerms(m)
	if err != nil {
		t.Fatal(err)
	}
	b := costdrift.Behaviour{Object: obj("6300", "ASSY"), Class: costdrift.Step, Driver: "frames_built", Prediction: new(costdrift.PredictionTerms(terms))}
	for _, l := range m.Levels {
		b.Steps = append(b.Steps, costdrift.StepLevel{From: l.From, To: l.To, Level: l.Mean, N: l.N})
	}
	for _, c := range []struct {
		x       float64
		want    float64
		n       int
		outside bool
	}{{1000, 9000, 14, false}, {820, 6000, 10, false}, {840, 9000, 14, false}, {600, 6000, 10, false}, {1700, 12000, 12, true}, {500, 6000, 10, true}} {
		e, err := Evaluate(&b, c.x, math.NaN())
		if err != nil {
			t.Fatal(err)
		}
		// se² = s²(1 + 1/n_level), s² = RSS/(N − k) = 360000/33.
		se := math.Sqrt(360000.0 / 33 * (1 + 1/float64(c.n)))
		if e.Value != c.want || !near(e.SE, se, 1e-12) || e.DF != 33 || e.OutsideRange != c.outside {
			t.Errorf("step at %v: %v ± %v (df %v, outside %v), want %v ± %v (df 33, outside %v)", c.x, e.Value, e.SE, e.DF, e.OutsideRange, c.want, se, c.outside)
		}
	}
}

// The intervals of one formula: a line fitted to four points, x = 1..4,
// y = 2, 4.1, 5.9, 8.2 (x̄ = 2.5, Sxx = 5, n = 4, df = 2). At x0 = 6,
// se = s·sqrt(1 + 1/4 + 3.5²/5) (common practice); the two-sided t values
// for df 2 are 1.885618 (80 %) and 4.302653 (95 %) (t table, from memory).
func TestIntervalsOfOneFormula(t *testing.T) {
	x, y := []float64{1, 2, 3, 4}, []float64{2, 4.1, 5.9, 8.2}
	terms := lineTerms(t, x, y)
	r, _ := fit.Line(x, y)
	b := costdrift.Behaviour{Object: obj("6200", ""), Class: costdrift.Mixed, Driver: "hours",
		FixedPerPeriod: r.Coef[0], VariableRate: r.Coef[1], RangeMin: 1, RangeMax: 4, Prediction: terms}
	e, err := Evaluate(&b, 6, math.NaN())
	if err != nil {
		t.Fatal(err)
	}
	se := r.ResidualSE * math.Sqrt(1+0.25+3.5*3.5/5)
	value := r.Coef[0] + 6*r.Coef[1]
	if !near(e.Value, value, 1e-12) || !near(e.SE, se, 1e-12) {
		t.Fatalf("at 6: %v ± %v, want %v ± %v", e.Value, e.SE, value, se)
	}
	if !near((e.High80-e.Low80)/2/se, 1.885618, 1e-6) || !near((e.High95-e.Low95)/2/se, 4.302653, 1e-6) {
		t.Errorf("half-widths %v and %v of se, want 1.885618 and 4.302653", (e.High80-e.Low80)/2/se, (e.High95-e.Low95)/2/se)
	}
	if !e.OutsideRange || !strings.Contains(strings.Join(e.Warnings, ";"), "hours 6 is outside the relevant range 1 to 4") {
		t.Errorf("no range warning: %q", e.Warnings)
	}
}

// Budgets over periods with a lagged driver: the period before the plan's
// first comes from actual activity; a missing activity leaves the object
// without a budget and out of the totals, which say so.
func TestFlexibleWithLagAndGaps(t *testing.T) {
	bs := []costdrift.Behaviour{
		{Object: obj("6500", "WELD"), Class: costdrift.Mixed, Driver: "machine_hours", Lag: 1, FixedPerPeriod: 500, VariableRate: 2, RangeMin: 0, RangeMax: 2000},
		{Object: obj("6420", "ASSY"), Class: costdrift.Variable, Driver: "shipments", VariableRate: 4, RangeMin: 0, RangeMax: 2000},
		{Object: obj("6600", "ASSY"), Class: costdrift.Unexplained, FixedPerPeriod: 1500},
		{Object: obj("6999", "ASSY"), Class: costdrift.InsufficientData, Reason: "only 5 closed periods"},
	}
	plan := table{"machine_hours": {"2027-01": 800, "2027-02": 900}, "shipments": {"2027-01": 100, "2027-02": 110}}
	actual := table{"machine_hours": {"2026-12": 700}}
	lookup := func(p, d, cc string) (float64, bool) {
		if v, ok := plan.lookup(p, d, cc); ok {
			return v, true
		}
		return actual.lookup(p, d, cc)
	}
	lines := Flexible(bs, []string{"2027-01", "2027-02"}, lookup, monthShift)
	if len(lines) != 8 {
		t.Fatalf("%d lines, want 8", len(lines))
	}
	want := []float64{500 + 2*700, 400, 1500, math.NaN(), 500 + 2*800, 440, 1500, math.NaN()}
	for i, l := range lines {
		if !(l.Value == want[i] || math.IsNaN(want[i]) && math.IsNaN(l.Value)) {
			t.Errorf("line %d (%s %s): budget %v, want %v", i, l.Object, l.Period, l.Value, want[i])
		}
	}
	if lines[0].Activity != 700 || lines[4].Activity != 800 {
		t.Errorf("lagged activity %v and %v, want 700 (2026-12, actual) and 800 (2027-01, plan)", lines[0].Activity, lines[4].Activity)
	}
	if !strings.Contains(lines[2].Warning, "budgeted at its mean") || !strings.HasPrefix(lines[3].Warning, "no budget: too few periods") {
		t.Errorf("warnings %q / %q", lines[2].Warning, lines[3].Warning)
	}
	tot := Totals(lines)
	// 2027-01: ASSY, WELD, total; 2027-02 the same.
	if len(tot) != 6 {
		t.Fatalf("%d totals, want 6", len(tot))
	}
	if tot[0].Object.CostCenter != "ASSY" || tot[0].Value != 1900 || tot[0].Objects != 3 || !strings.Contains(tot[0].Warning, "1 object(s) without a budget left out") {
		t.Errorf("ASSY 2027-01 total: %+v", tot[0])
	}
	if tot[2].Kind != costdrift.LineTotal || tot[2].Value != 1900+1900 {
		t.Errorf("2027-01 total %v, want 3800", tot[2].Value)
	}
	// A lag whose period has neither plan nor actual: no budget, said.
	lines = Flexible(bs[:1], []string{"2027-04"}, lookup, monthShift)
	if !math.IsNaN(lines[0].Value) || lines[0].Warning != "no budget: no planned or actual activity for machine_hours in 2027-03 (lag 1)" {
		t.Errorf("missing activity: %v %q", lines[0].Value, lines[0].Warning)
	}
}

// Totals equal the sum of their parts, and a total's variance is the sum of
// the parts' (independence), with Welch–Satterthwaite degrees of freedom.
func TestTotalsAddUp(t *testing.T) {
	xs := [][]float64{{1, 2, 3, 4, 5, 6}, {10, 12, 15, 11, 19, 14, 13}, {3, 5, 4, 6, 8, 7, 9, 2}}
	ys := [][]float64{{12, 15, 17, 21, 22, 27}, {110, 118, 131, 117, 150, 127, 125}, {33, 41, 36, 45, 52, 50, 58, 29}}
	var bs []costdrift.Behaviour
	for i := range xs {
		r, _ := fit.Line(xs[i], ys[i])
		cc := []string{"A", "A", "B"}[i]
		bs = append(bs, costdrift.Behaviour{Object: obj([]string{"6100", "6200", "6300"}[i], cc), Class: costdrift.Mixed, Driver: "d",
			FixedPerPeriod: r.Coef[0], VariableRate: r.Coef[1], RangeMin: 0, RangeMax: 100, Prediction: lineTerms(t, xs[i], ys[i])})
	}
	plan := table{"d": {"2027-01": 5, "2027-02": 7}}
	lines := Flexible(bs, []string{"2027-01", "2027-02"}, plan.lookup, monthShift)
	tot := Totals(lines)
	if len(tot) != 6 {
		t.Fatalf("%d totals", len(tot))
	}
	for p, period := range []string{"2027-01", "2027-02"} {
		objs := lines[3*p : 3*p+3]
		a, bb, all := tot[3*p], tot[3*p+1], tot[3*p+2]
		if a.Object.CostCenter != "A" || bb.Object.CostCenter != "B" || all.Kind != costdrift.LineTotal || all.Period != period {
			t.Fatalf("totals out of order: %+v %+v %+v", a, bb, all)
		}
		sumA := objs[0].Value + objs[1].Value
		varA := objs[0].SE*objs[0].SE + objs[1].SE*objs[1].SE
		dfA := varA * varA / (math.Pow(objs[0].SE, 4)/objs[0].DF + math.Pow(objs[1].SE, 4)/objs[1].DF)
		if !near(a.Value, sumA, 1e-12) || !near(a.SE, math.Sqrt(varA), 1e-12) || !near(a.DF, dfA, 1e-12) {
			t.Errorf("%s A: %v ± %v df %v, want %v ± %v df %v", period, a.Value, a.SE, a.DF, sumA, math.Sqrt(varA), dfA)
		}
		if !near(all.Value, a.Value+bb.Value, 1e-12) || !near(all.SE*all.SE, a.SE*a.SE+bb.SE*bb.SE, 1e-12) {
			t.Errorf("%s: total %v ± %v is not the cost centres' %v + %v", period, all.Value, all.SE, a.Value, bb.Value)
		}
		half := tQuantile(0.05, all.DF) * all.SE
		if !near(all.High95-all.Value, half, 1e-12) || !strings.Contains(all.Warning, costdrift.Independence) {
			t.Errorf("%s total interval %v..%v, warning %q", period, all.Low95, all.High95, all.Warning)
		}
	}
}

// Variance totals: sums of actuals, budgets and variances; spending plus
// activity variance is actual minus static budget on every line.
func TestVarianceTotals(t *testing.T) {
	bs := []costdrift.Behaviour{
		{Object: obj("6200", "WELD"), Class: costdrift.Mixed, Driver: "machine_hours", FixedPerPeriod: 2000, VariableRate: 3.5, RangeMin: 0, RangeMax: 5000},
		{Object: obj("5100", "WELD"), Class: costdrift.Variable, Driver: "frames_built", VariableRate: 12, RangeMin: 0, RangeMax: 5000},
		{Object: obj("6100", "PAINT"), Class: costdrift.Fixed, FixedPerPeriod: 3000},
	}
	act := table{"machine_hours": {"2026-11": 1100}, "frames_built": {"2026-11": 500}}
	plan := table{"machine_hours": {"2026-11": 1000}, "frames_built": {"2026-11": 450}}
	actual := map[string]float64{"6200/WELD": 6100, "5100/WELD": 5800, "6100/PAINT": 3300}
	lines := Variances(bs, "2026-11", actual, act.lookup, plan.lookup, monthShift)
	tot := VarianceTotals(lines)
	if len(tot) != 3 || tot[0].Object.CostCenter != "PAINT" || tot[1].Object.CostCenter != "WELD" || tot[2].Kind != costdrift.LineTotal {
		t.Fatalf("totals %+v", tot)
	}
	weld, all := tot[1], tot[2]
	if weld.Actual != 11900 || weld.Flexible.Value != 11850 || weld.Static != 10900 || weld.SpendingVariance != 50 || weld.ActivityVariance != 950 {
		t.Errorf("WELD: actual %v flexible %v static %v spending %v activity %v", weld.Actual, weld.Flexible.Value, weld.Static, weld.SpendingVariance, weld.ActivityVariance)
	}
	if all.Actual != 15200 || all.Flexible.Value != 14850 || all.Static != 13900 || all.SpendingVariance != 350 || all.ActivityVariance != 950 {
		t.Errorf("total: actual %v flexible %v static %v spending %v activity %v", all.Actual, all.Flexible.Value, all.Static, all.SpendingVariance, all.ActivityVariance)
	}
	for _, l := range append(lines, tot...) {
		if !near(l.Actual-l.Static, l.SpendingVariance+l.ActivityVariance, 1e-12) {
			t.Errorf("%s %s: actual − static %v ≠ spending %v + activity %v", l.Kind, l.Object, l.Actual-l.Static, l.SpendingVariance, l.ActivityVariance)
		}
	}
}

// The 95 % flag: an actual outside the flexible budget's interval is
// flagged, one inside is not.
func TestOutside95(t *testing.T) {
	x := []float64{100, 120, 90, 110, 130, 105, 95, 115, 125, 100, 110, 120}
	y := make([]float64, len(x))
	for i, v := range x {
		y[i] = 1000 + 5*v + []float64{10, -12, 8, -5, 3, -9, 11, -4, 6, -7, 2, -3}[i]
	}
	r, _ := fit.Line(x, y)
	b := costdrift.Behaviour{Object: obj("6200", "W"), Class: costdrift.Mixed, Driver: "h", FixedPerPeriod: r.Coef[0], VariableRate: r.Coef[1],
		RangeMin: 90, RangeMax: 130, Prediction: lineTerms(t, x, y)}
	act := table{"h": {"2026-11": 110}}
	e, _ := Evaluate(&b, 110, math.NaN())
	for _, c := range []struct {
		actual float64
		out    bool
	}{{e.Value, false}, {e.High95 - 0.01, false}, {e.High95 + 0.01, true}, {e.Low95 - 0.01, true}} {
		l := Variances([]costdrift.Behaviour{b}, "2026-11", map[string]float64{"6200/W": c.actual}, act.lookup, nil, monthShift)[0]
		if l.Outside95 != c.out {
			t.Errorf("actual %v against %v..%v: outside %v, want %v", c.actual, e.Low95, e.High95, l.Outside95, c.out)
		}
	}
}

// A formula with a negative rate is never budgeted silently (README, Budgets
// and variances): the line says the rate is implausible, and where the
// budget itself falls below zero it says so too; the totals count such
// lines. The formula is the one a provisional refit once stored for a
// freight cost, 11,715.01 − 5.6538 per shipment, fitted on 476 to 910
// shipments; at 3,000 shipments it gives 11,715.01 − 5.6538 × 3,000 =
// −5,246.39 (hand-worked), at 600 shipments 8,322.73.
func TestNegativeRateIsFlagged(t *testing.T) {
	bs := []costdrift.Behaviour{
		{Object: obj("6400", "ASSY"), Class: costdrift.Mixed, Driver: "shipments", Unit: "shipment",
			FixedPerPeriod: 11715.01, VariableRate: -5.6538, RangeMin: 476, RangeMax: 910},
		{Object: obj("6420", "ASSY"), Class: costdrift.Variable, Driver: "shipments", Unit: "shipment",
			VariableRate: 3.2, RangeMin: 0, RangeMax: 5000},
	}
	plan := table{"shipments": {"2026-07": 3000, "2026-08": 600}}
	lines := Flexible(bs, []string{"2026-07", "2026-08"}, plan.lookup, monthShift)
	if len(lines) != 4 {
		t.Fatalf("%d lines, want 4", len(lines))
	}
	high, inside, plain := lines[0], lines[2], lines[1]
	if !near(high.Value, -5246.39, 1e-9) || !near(inside.Value, 8322.73, 1e-9) {
		t.Fatalf("budgets %v and %v, want -5,246.39 and 8,322.73", high.Value, inside.Value)
	}
	for _, l := range []costdrift.BudgetLine{high, inside} {
		if !strings.Contains(l.Warning, "negative rate (-5.6538 per shipment) is implausible for a cost") {
			t.Errorf("%s %s: no warning of the negative rate: %q", l.Object, l.Period, l.Warning)
		}
	}
	if !strings.Contains(high.Warning, "negative budget") || strings.Contains(inside.Warning, "negative budget") {
		t.Errorf("negative budget flagged on %q, and on the positive one %q", high.Warning, inside.Warning)
	}
	if strings.Contains(plain.Warning, "negative") {
		t.Errorf("a positive rate flagged: %q", plain.Warning)
	}
	tot := Totals(lines)
	if !strings.Contains(tot[0].Warning, "1 object(s) with a negative budget") || strings.Contains(tot[2].Warning, "negative budget") {
		t.Errorf("totals' warnings %q (2026-07) and %q (2026-08)", tot[0].Warning, tot[2].Warning)
	}
}

// A cost cannot go below zero: a prediction interval that reaches below
// zero is cut at zero and says so; the budget itself and the upper bound
// are left as the formula gives them. Hand-worked (common practice): a
// fixed cost fitted on 4 periods 100, 300, 100, 300 has mean 200, s² =
// 4·100²/3 and se = s·sqrt(1 + 1/4) = 129.1; t(0.975, 3) = 3.182 puts the
// 95 % interval at 200 ± 410.8, whose lower end −210.8 is cut to 0.
func TestIntervalCutAtZero(t *testing.T) {
	r, err := fit.OLS(nil, []float64{100, 300, 100, 300}, true)
	if err != nil {
		t.Fatal(err)
	}
	terms := costdrift.PredictionTerms(r.Terms())
	b := costdrift.Behaviour{Object: obj("6600", "ASSY"), Class: costdrift.Fixed, FixedPerPeriod: 200, Prediction: &terms}
	e, err := Evaluate(&b, 0, 0)
	if err != nil {
		t.Fatal(err)
	}
	// 200 + 3.182446 · 129.0994 = 610.85 (t from a general statistics
	// package's Student t quantile, 3 df, from memory: 3.182).
	if e.Value != 200 || e.Low95 != 0 || e.Low80 != 0 || !near(e.High95, 610.85, 1e-4) {
		t.Errorf("budget %v, 80 %% %v to %v, 95 %% %v to %v; want the lower ends cut to 0 and 95 %% up to 610.85", e.Value, e.Low80, e.High80, e.Low95, e.High95)
	}
	if !slices.ContainsFunc(e.Warnings, func(w string) bool { return strings.Contains(w, "cut at zero") }) {
		t.Errorf("warnings %q do not say the interval was cut at zero", e.Warnings)
	}
	// An interval above zero is left as it is, and says nothing.
	terms.S /= 10
	e, _ = Evaluate(&b, 0, 0)
	if !(e.Low95 > 0) || slices.ContainsFunc(e.Warnings, func(w string) bool { return strings.Contains(w, "cut at zero") }) {
		t.Errorf("a narrow interval: %v to %v, %q", e.Low95, e.High95, e.Warnings)
	}
}
