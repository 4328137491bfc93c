package main

import (
	"database/sql"
	"encoding/csv"
	"encoding/json"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"sync"
	"testing"

	"github.com/xuri/excelize/v2"

	"github.com/costdrift/costdrift/internal/report"
)

// demoStore runs the demo once per test binary into a shared folder; the
// budget tests read it (budget and variance write only their own tables).
var (
	demoStoreDir string
	demoStore    = sync.OnceValues(func() (string, error) {
		dir, err := os.MkdirTemp("", "costdrift-budget-demo-")
		if err != nil {
			return "", err
		}
		demoStoreDir = dir
		var out strings.Builder
		root := newRoot(&out, &out, today)
		root.SetArgs([]string{"demo", "--dir", dir})
		if err := root.Execute(); err != nil {
			return "", err
		}
		return dir, nil
	})
)

// removeDemoStore removes the shared demo folder after the tests.
func removeDemoStore() {
	if demoStoreDir != "" {
		os.RemoveAll(demoStoreDir)
	}
}

func demoDir(t *testing.T) string {
	t.Helper()
	dir, err := demoStore()
	if err != nil {
		t.Fatal(err)
	}
	return dir
}

func near(got, want float64) bool { return math.Abs(got-want) <= 0.011 } // money rounded to cents

// nearSum allows each of n rounded parts its half cent.
func nearSum(got, want float64, n int) bool { return math.Abs(got-want) <= 0.005*float64(n+1)+1e-9 }

// The demo company's next-quarter plan budgeted: every object and period,
// formulas at the planned activity, totals that add up, the same figures in
// every format and in the store's view.
func TestBudgetOfTheDemoPlan(t *testing.T) {
	dir := demoDir(t)
	cfg := filepath.Join(dir, "costdrift.yaml")
	plan := filepath.Join(dir, "plans", "plan-2026-q3.csv")
	var rows []report.BudgetRow
	if err := json.Unmarshal([]byte(mustRun(t, "--config", cfg, "budget", "--plan", plan, "--format", "json", "--save", "plan-2026-q3")), &rows); err != nil {
		t.Fatal(err)
	}
	// 14 objects, 3 cost centres and a total, for 3 months.
	if len(rows) != 3*(14+3+1) {
		t.Fatalf("%d rows, want 54", len(rows))
	}
	byKey := map[string]report.BudgetRow{}
	for _, r := range rows {
		byKey[r.Period+" "+string(r.Line)+" "+r.Object+" "+r.CostCenter] = r
	}
	// The plan: 2026-07 frames 1,750, shipments 1,280, machine hours WELD
	// 1,610 (read from the file below, not assumed).
	planned := readPlanCSV(t, plan)
	tubing := byKey["2026-07 object 5100/WELD WELD"]
	freight := byKey["2026-07 object 6400/ASSY ASSY"]
	if tubing.Activity == nil || *tubing.Activity != planned["2026-07 frames_built "] || freight.Activity == nil || *freight.Activity != planned["2026-07 shipments "] {
		t.Fatalf("planned activity not used: tubing %v, freight %v, plan %v", tubing.Activity, freight.Activity, planned)
	}
	// Budget = the formula at the planned activity (the report's formula).
	var behaviour []report.Row
	if err := json.Unmarshal([]byte(mustRun(t, "--config", cfg, "report", "--format", "json")), &behaviour); err != nil {
		t.Fatal(err)
	}
	formula := map[string]report.Row{}
	for _, b := range behaviour {
		formula[b.Object] = b
	}
	// The formulas are at prices of 2026-06 (price index 100); a budget is
	// at its period's prices, by the plan's index (README, Prices and
	// inflation). Rent is fixed by contract and fitted as posted.
	if formula["5100/WELD"].PriceBase != "2026-06" || formula["6100/WELD"].PriceBase != "" || planned["2026-07 price_index "] == 0 {
		t.Fatalf("price bases %q and %q, planned index %v", formula["5100/WELD"].PriceBase, formula["6100/WELD"].PriceBase, planned["2026-07 price_index "])
	}
	at := func(period string) float64 { return planned[period+" price_index "] / 100 }
	for _, c := range []struct {
		row  report.BudgetRow
		want float64
	}{
		{tubing, *formula["5100/WELD"].VariableRate * *tubing.Activity * at("2026-07")},
		{freight, *formula["6400/ASSY"].VariableRate * *freight.Activity * at("2026-07")},
		{byKey["2026-08 object 6200/WELD WELD"], (*formula["6200/WELD"].FixedPerPeriod + *formula["6200/WELD"].VariableRate*planned["2026-08 machine_hours WELD"]) * at("2026-08")},
		{byKey["2026-09 object 6100/WELD WELD"], *formula["6100/WELD"].FixedPerPeriod},
		// Maintenance follows machine hours a month later: 2026-08 takes
		// July's planned hours.
		{byKey["2026-08 object 6500/WELD WELD"], (*formula["6500/WELD"].FixedPerPeriod + *formula["6500/WELD"].VariableRate*planned["2026-07 machine_hours WELD"]) * at("2026-08")},
	} {
		if c.row.Budget == nil || !near(*c.row.Budget, c.want) {
			t.Errorf("%s %s: budget %v, want the formula's %.2f", c.row.Period, c.row.Object, c.row.Budget, c.want)
		}
	}
	if w := byKey["2026-07 object 6600/ASSY ASSY"].Warning; !strings.Contains(w, "budgeted at its mean") {
		t.Errorf("the unexplained marketing cost is not flagged: %q", w)
	}
	// July's planned frames (1,750) lie above the observed range.
	if w := tubing.Warning; !strings.Contains(w, "outside the relevant range") {
		t.Errorf("tubing at %v frames: warning %q", *tubing.Activity, w)
	}
	// Totals are the sums of their parts; every interval holds its budget.
	for _, period := range []string{"2026-07", "2026-08", "2026-09"} {
		var all, ccSum float64
		cc := map[string]float64{}
		for _, r := range rows {
			if r.Period != period {
				continue
			}
			if r.Budget == nil || r.Low95 == nil || !(*r.Low95 <= *r.Low80 && *r.Low80 <= *r.Budget && *r.Budget <= *r.High80 && *r.High80 <= *r.High95) {
				t.Errorf("%s %s %s: budget %v, 80 %% %v–%v, 95 %% %v–%v not nested", period, r.Line, r.Object, r.Budget, r.Low80, r.High80, r.Low95, r.High95)
				continue
			}
			switch r.Line {
			case "object":
				all += *r.Budget
				cc[r.CostCenter] += *r.Budget
			case "cost_center":
				ccSum += *r.Budget
				if !nearSum(*r.Budget, cc[r.CostCenter], r.Objects) {
					t.Errorf("%s total %s %.2f, its objects sum to %.2f", period, r.CostCenter, *r.Budget, cc[r.CostCenter])
				}
			case "total":
				if !nearSum(*r.Budget, all, 14) || !nearSum(*r.Budget, ccSum, 3) || !strings.Contains(r.Warning, "independent") {
					t.Errorf("%s total %.2f, objects %.2f, cost centres %.2f; warning %q", period, *r.Budget, all, ccSum, r.Warning)
				}
			}
		}
	}

	// The store keeps it: the view a spreadsheet reads has the same lines.
	store := filepath.Join(dir, "costdrift.db")
	if n := count(t, store, "SELECT COUNT(*) FROM flexible_budget WHERE plan = 'plan-2026-q3'"); n != len(rows) {
		t.Errorf("flexible_budget holds %d lines, want %d", n, len(rows))
	}
	if n := count(t, store, "SELECT COUNT(*) FROM flexible_budget WHERE plan = 'plan-2026-q3' AND object = '5100/WELD' AND account_name = 'Tubing' AND round(budget, 2) = round("+strconv.FormatFloat(*tubing.Budget, 'f', 2, 64)+", 2) AND period = '2026-07'"); n != 1 {
		t.Errorf("flexible_budget does not hold tubing's July budget with its account name")
	}
	if n := count(t, store, "SELECT COUNT(*) FROM plans WHERE plan = 'plan-2026-q3'"); n != len(planned) {
		t.Errorf("plans holds %d values, the file %d", n, len(planned))
	}

	// CSV and XLSX carry the same lines.
	recs, err := csv.NewReader(strings.NewReader(mustRun(t, "--config", cfg, "budget", "--plan", plan, "--format", "csv"))).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	if len(recs) != 1+len(rows) || recs[0][0] != "line" || recs[0][11] != "budget" {
		t.Fatalf("CSV: %d records, header %v", len(recs), recs[0])
	}
	xlsx := filepath.Join(t.TempDir(), "budget.xlsx")
	mustRun(t, "--config", cfg, "budget", "--plan", plan, "--format", "xlsx", "--output", xlsx)
	if st, err := os.Stat(xlsx); err != nil || st.Mode().Perm() != 0o600 {
		t.Fatalf("budget.xlsx: %v, mode %v (want 0600: ledger data is confidential)", err, st.Mode())
	}
	f, err := excelize.OpenFile(xlsx)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	sheet, err := f.GetRows("budget")
	if err != nil {
		t.Fatal(err)
	}
	if len(sheet) < 1+len(rows) || sheet[0][11] != "budget" || sheet[1][2] != "5100/WELD" {
		t.Fatalf("XLSX: %d rows, header %v, first %v", len(sheet), sheet[0], sheet[1])
	}
	v, _ := f.GetCellValue("budget", "L2", excelize.Options{RawCellValue: true}) // the stored number, not as its format shows it
	if got, err := strconv.ParseFloat(v, 64); err != nil || !near(got, *rows[0].Budget) {
		t.Errorf("XLSX L2 = %q, JSON budget %v", v, *rows[0].Budget)
	}
	if !strings.Contains(strings.Join(sheet[len(sheet)-3], " "), "estimates") && !strings.Contains(strings.Join(sheet[len(sheet)-4], " "), "estimates") {
		t.Errorf("XLSX lacks the cautions below the table")
	}

	table := mustRun(t, "--config", cfg, "budget", "--plan", plan)
	for _, want := range []string{"Flexible budget from plan plan-2026-q3 (EUR per period)", "2026-07", "TOTAL", "80 % INTERVAL",
		"assume the objects' deviations from their formulas are independent", "Formulas are statistical estimates"} {
		if !strings.Contains(table, want) {
			t.Errorf("table lacks %q", want)
		}
	}
}

// readPlanCSV is the plan file's values by "period driver cost_center".
func readPlanCSV(t *testing.T, path string) map[string]float64 {
	t.Helper()
	f, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	recs, err := csv.NewReader(f).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	out := map[string]float64{}
	for _, r := range recs[1:] {
		v, _ := strconv.ParseFloat(r[2], 64)
		out[r[0]+" "+r[1]+" "+r[3]] = v
	}
	return out
}

// The demo's last month against its flexible budget and the quarter's
// plan: the variances add up on every line, F and U follow the sign, the
// spending outlier is flagged, and the view has the lines.
func TestVarianceOfTheDemoMonth(t *testing.T) {
	dir := demoDir(t)
	cfg := filepath.Join(dir, "costdrift.yaml")
	plan := filepath.Join(dir, "plans", "plan-2026-q2.csv")
	var rows []report.VarianceRow
	if err := json.Unmarshal([]byte(mustRun(t, "--config", cfg, "variance", "--period", "2026-06", "--plan", plan, "--format", "json", "--save", "2026-06")), &rows); err != nil {
		t.Fatal(err)
	}
	if len(rows) != 14+3+1 {
		t.Fatalf("%d rows, want 18", len(rows))
	}
	outside := map[string]bool{}
	for _, r := range rows {
		if r.Actual == nil || r.FlexibleBudget == nil || r.StaticBudget == nil || r.SpendingVariance == nil || r.ActivityVariance == nil {
			t.Fatalf("%s %s: a figure is missing: %+v", r.Line, r.Object, r)
		}
		if !near(*r.Actual-*r.FlexibleBudget, *r.SpendingVariance) || !near(*r.FlexibleBudget-*r.StaticBudget, *r.ActivityVariance) ||
			!near(*r.Actual-*r.StaticBudget, *r.SpendingVariance+*r.ActivityVariance) {
			t.Errorf("%s %s: actual %v flexible %v static %v spending %v activity %v do not add up", r.Line, r.Object,
				*r.Actual, *r.FlexibleBudget, *r.StaticBudget, *r.SpendingVariance, *r.ActivityVariance)
		}
		wantMark := map[bool]string{true: "U", false: "F"}[*r.SpendingVariance > 0]
		if *r.SpendingVariance == 0 {
			wantMark = ""
		}
		if r.SpendingMark != wantMark {
			t.Errorf("%s: spending variance %v marked %q", r.Object, *r.SpendingVariance, r.SpendingMark)
		}
		if r.Outside95 {
			outside[r.Object] = true
		}
	}
	// The analysis flagged maintenance's 2026-06 as a spending outlier
	// (below its 95 % interval); the variance report agrees.
	if !outside["6500/WELD"] || len(outside) != 1 {
		t.Errorf("outside the 95 %% interval: %v, want only 6500/WELD", outside)
	}
	// The ledger's own June total is the actual total.
	store := filepath.Join(dir, "costdrift.db")
	db, err := sql.Open("sqlite3", "file:"+store+"?mode=ro")
	if err != nil {
		t.Fatal(err)
	}
	defer db.Close()
	var ledger float64
	if err := db.QueryRow(`SELECT SUM(amount_minor) / 100.0 FROM gl_lines WHERE period = '2026-06' AND amount_minor > 0 AND account < '7'`).Scan(&ledger); err != nil {
		t.Fatal(err)
	}
	if total := rows[len(rows)-1]; total.Line != "total" || !nearSum(*total.Actual, ledger, 14) {
		t.Errorf("total actual %v, the ledger's June expense debits %v", *total.Actual, ledger)
	}
	if n := count(t, store, "SELECT COUNT(*) FROM spending_variances WHERE period = '2026-06' AND plan = 'plan-2026-q2'"); n != len(rows) {
		t.Errorf("spending_variances holds %d lines, want %d", n, len(rows))
	}
	// Without a plan: no static budget, no activity variance.
	var bare []report.VarianceRow
	if err := json.Unmarshal([]byte(mustRun(t, "--config", cfg, "variance", "--period", "2026-06", "--format", "json")), &bare); err != nil {
		t.Fatal(err)
	}
	if len(bare) != len(rows) || bare[0].StaticBudget != nil || bare[0].ActivityVariance != nil || bare[0].ActivityMark != "" || *bare[0].SpendingVariance != *rows[0].SpendingVariance {
		t.Errorf("without a plan: %+v", bare[0])
	}
}

// A plan with a problem is an error naming the row, and nothing is stored.
func TestBadPlans(t *testing.T) {
	dir := demoDir(t)
	cfg := filepath.Join(dir, "costdrift.yaml")
	store := filepath.Join(dir, "costdrift.db")
	plans := t.TempDir()
	for _, c := range []struct {
		name, text string
		args       []string
		want       []string
	}{
		{"unknown driver", "period,driver,value\n2026-07,frames_built,1200\n2026-07,widgets,30\n", nil,
			[]string{"unknown-driver.csv:3", `driver "widgets" has no activity in the store`, "frames_built, labour_hours, machine_hours"}},
		{"bad period", "period,driver,value\n2026-07,frames_built,1200\n2026-13,frames_built,1100\n", nil,
			[]string{"bad-period.csv:3", "2026-13"}},
		{"bad value", "period,driver,value\n2026-07,frames_built,lots\n", nil, []string{"bad-value.csv:2", "lots"}},
		{"negative value", "period,driver,value\n2026-07,frames_built,-5\n", nil, []string{"negative-value.csv:2", "cannot be negative"}},
		// A plan has no notation settings: the reason says how to write it.
		{"grouped value", "period,driver,value\n2026-07,frames_built,\"1,750.5\"\n", nil,
			[]string{"grouped-value.csv:2", `bad value "1,750.5": not a number (write it as 1750.5)`}},
		{"twice", "period,driver,value,cost_center\n2026-07,machine_hours,900,WELD\n2026-07,machine_hours,950,WELD\n", nil,
			[]string{"twice.csv:3", "machine_hours 2026-07 for WELD is planned twice (first at twice.csv:2)"}},
		{"wrong header", "month,what,amount\n2026-07,frames_built,5\n", nil, []string{"wrong-header.csv", "period"}},
		{"empty", "period,driver,value\n", nil, []string{"empty.csv holds no planned activity"}},
		{"no plan flag", "", []string{"budget"}, []string{"budget needs --plan FILE"}},
		{"xlsx to the terminal", "period,driver,value\n2026-07,frames_built,1200\n", []string{"--format", "xlsx"}, []string{"--output FILE.xlsx"}},
		{"open period", "period,driver,value\n2026-07,frames_built,1200\n", []string{"variance", "--period", "2026-12"}, []string{"2026-12 is not closed yet"}},
		{"no such period", "", []string{"variance", "--period", "June"}, []string{`--period "June"`}},
	} {
		t.Run(c.name, func(t *testing.T) {
			path := filepath.Join(plans, strings.ReplaceAll(c.name, " ", "-")+".csv")
			writeFile(t, path, c.text)
			args := []string{"--config", cfg}
			switch {
			case len(c.args) > 0 && (c.args[0] == "budget" || c.args[0] == "variance"):
				args = append(args, c.args...)
				if c.args[0] == "variance" && c.text != "" {
					args = append(args, "--plan", path)
				}
			default:
				args = append(append(args, "budget", "--plan", path), c.args...)
			}
			before := count(t, store, "SELECT COUNT(*) FROM plans")
			out, err := run(t, args...)
			if err == nil {
				t.Fatalf("costdrift %s: no error\n%s", strings.Join(args[2:], " "), out)
			}
			for _, w := range c.want {
				if !strings.Contains(err.Error(), w) {
					t.Errorf("error %q lacks %q", err, w)
				}
			}
			if strings.Contains(err.Error(), "\n") {
				t.Errorf("error on more than one line: %q", err)
			}
			if after := count(t, store, "SELECT COUNT(*) FROM plans"); after != before {
				t.Errorf("plans went from %d to %d rows after a refused plan", before, after)
			}
		})
	}
}

// A cost centre fitted on its own machine hours is budgeted only on its own
// planned hours: a company-wide plan figure is another quantity, so the
// line says what is missing; objects on company-wide drivers are budgeted.
func TestPlanFigureMustMatchTheFittedSeries(t *testing.T) {
	dir := demoDir(t)
	cfg := filepath.Join(dir, "costdrift.yaml")
	plan := filepath.Join(t.TempDir(), "company-hours.csv")
	writeFile(t, plan, "period,driver,value\n2026-07,frames_built,1500\n2026-07,machine_hours,2400\n")
	var rows []report.BudgetRow
	if err := json.Unmarshal([]byte(mustRun(t, "--config", cfg, "budget", "--plan", plan, "--format", "json")), &rows); err != nil {
		t.Fatal(err)
	}
	got := map[string]report.BudgetRow{}
	for _, r := range rows {
		got[r.Object] = r
	}
	power := got["6200/WELD"]
	if power.Budget != nil || power.Warning != "no budget: no planned or actual activity for machine_hours in 2026-07" {
		t.Errorf("6200/WELD on a company-wide hours figure: budget %v, warning %q", power.Budget, power.Warning)
	}
	// Maintenance follows WELD's hours of the month before: June's actual.
	if m := got["6500/WELD"]; m.Budget == nil || m.Activity == nil || *m.Activity != 1378.9 {
		t.Errorf("6500/WELD: budget %v on activity %v, want one on June's actual WELD hours 1378.9", m.Budget, m.Activity)
	}
	if tubing := got["5100/WELD"]; tubing.Budget == nil || *tubing.Activity != 1500 {
		t.Errorf("5100/WELD on company-wide frames: %+v", tubing)
	}
}

// A plan without a driver's figure: for a period not yet closed the budget
// cannot be made and says which figure is missing; for a closed period the
// actual activity stands in and the line says so (the test clock's
// 2026-06 is closed and has actual activity, 2027-01 is not closed).
func TestPlanWithoutADriversFigure(t *testing.T) {
	dir := demoDir(t)
	cfg := filepath.Join(dir, "costdrift.yaml")
	plan := func(period string) string {
		path := filepath.Join(t.TempDir(), "plan-"+period+".csv")
		body := "period,driver,value,cost_center\n" + period + ",frames_built,1500,\n" + period + ",machine_hours,1400,WELD\n" + period + ",machine_hours,900,PAINT\n"
		if err := os.WriteFile(path, []byte(body), 0o600); err != nil {
			t.Fatal(err)
		}
		return path
	}
	_, err := run(t, "--config", cfg, "budget", "--plan", plan("2027-01"))
	if err == nil || !strings.Contains(err.Error(), "no shipments for 2027-01") || !strings.Contains(err.Error(), "not closed") {
		t.Errorf("a future period without planned shipments: %v", err)
	}
	var rows []struct {
		Object  string `json:"object"`
		Warning string `json:"warning"`
	}
	if err := json.Unmarshal([]byte(mustRun(t, "--config", cfg, "budget", "--plan", plan("2026-06"), "--format", "json")), &rows); err != nil {
		t.Fatal(err)
	}
	flagged := map[string]bool{}
	for _, r := range rows {
		if strings.Contains(r.Warning, "no planned shipments for 2026-06, a closed period: budgeted at its actual activity") {
			flagged[r.Object] = true
		}
	}
	// The two objects on shipments, freight and packaging, and no other.
	if len(flagged) != 2 || !flagged["6400/ASSY"] || !flagged["6420/ASSY"] {
		t.Errorf("flagged lines %v, want 6400/ASSY and 6420/ASSY", flagged)
	}
}
