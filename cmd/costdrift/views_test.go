package main

import (
	"database/sql"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// cost_series holds one row per cost object and period as the analysis
// sees them (README "The store", "The method"): a sum over it is the
// ledger's total for the accounts in scope, a period in which the object
// posted nothing while the ledger did is there with 0, and an account
// outside analysis.accounts is absent. The driver values are in
// driver_series and, joined, in cost_with_drivers.
func TestCostSeriesIsTheAnalysedSeries(t *testing.T) {
	dir := t.TempDir()
	mustRun(t, "demo", "--dir", dir)
	store := filepath.Join(dir, "costdrift.db")

	// The demo's scope is 5000-6999 (its costdrift.yaml); its ledger also
	// holds accounts outside it.
	const inScope = `CAST(account AS INTEGER) BETWEEN 5000 AND 6999`
	if n := count(t, store, `SELECT COUNT(DISTINCT account) FROM gl_lines WHERE NOT (`+inScope+`)`); n == 0 {
		t.Fatal("the demo ledger has no account outside the scope; the check below could not fail")
	}
	if got, want := count(t, store, `SELECT SUM(amount_minor) FROM cost_series`),
		count(t, store, `SELECT SUM(amount_minor) FROM gl_lines WHERE `+inScope); got != want {
		t.Errorf("SUM(amount_minor) over cost_series %d, the ledger's total in scope %d", got, want)
	}
	if n := count(t, store, `SELECT COUNT(*) FROM cost_series WHERE NOT (`+inScope+`)`); n != 0 {
		t.Errorf("cost_series holds %d rows of accounts outside the scope", n)
	}
	// One row per object and ledger period: 14 objects (TestResyncChangesNothing).
	if got, want := count(t, store, `SELECT COUNT(*) FROM cost_series`),
		14*count(t, store, `SELECT COUNT(DISTINCT period) FROM gl_lines`); got != want {
		t.Errorf("cost_series has %d rows, want %d (14 objects x the ledger's periods)", got, want)
	}
	if n := count(t, store, `SELECT COUNT(*) FROM (SELECT 1 FROM cost_series GROUP BY account, cost_center, period HAVING COUNT(*) > 1)`); n != 0 {
		t.Errorf("%d object-periods repeated in cost_series", n)
	}

	// The driver values: frames built per period, company-wide, as the
	// activity table holds them, and beside the cost once per driver.
	if got, want := count(t, store, `SELECT COUNT(*) FROM driver_series`),
		count(t, store, `SELECT COUNT(*) FROM (SELECT DISTINCT period, driver, cost_center FROM activity)`); got != want {
		t.Errorf("driver_series has %d rows, want %d", got, want)
	}
	if got, want := count(t, store, `SELECT COUNT(*) FROM cost_with_drivers WHERE driver = 'frames_built'`),
		count(t, store, `SELECT COUNT(*) FROM cost_series`); got != want {
		t.Errorf("cost_with_drivers has %d rows for frames_built, want one per cost_series row (%d)", got, want)
	}
	if n := count(t, store, `SELECT COUNT(*) FROM cost_with_drivers c JOIN driver_series d
		ON d.period = c.period AND d.driver = c.driver AND d.cost_center = ''
		WHERE c.account = '5100' AND c.driver = 'frames_built' AND c.driver_value = d.value`); n == 0 {
		t.Errorf("cost_with_drivers gives 5100 no company-wide frames_built value")
	}

	// Rent in welding posts nothing in 2026-02; the ledger does.
	db, err := sql.Open("sqlite3", "file:"+store)
	if err != nil {
		t.Fatal(err)
	}
	_, err = db.Exec(`DELETE FROM gl_lines WHERE account = '6100' AND cost_center = 'WELD' AND period = '2026-02'`)
	db.Close()
	if err != nil {
		t.Fatal(err)
	}
	if n := count(t, store, `SELECT COUNT(*) FROM cost_series
		WHERE account = '6100' AND cost_center = 'WELD' AND period = '2026-02' AND amount_minor = 0 AND amount = 0`); n != 1 {
		t.Errorf("cost_series has %d rows of 0 for 6100/WELD in 2026-02, want 1", n)
	}
	// Analysed again, the object's constant model (the mean cost over the
	// window) is the mean of its cost_series rows in the window, the zero
	// among them.
	cfg := filepath.Join(dir, "costdrift.yaml")
	mustRun(t, "--config", cfg, "analyze")
	var viewMean, storedMean float64
	row := func(query string, v *float64) {
		t.Helper()
		db, err := sql.Open("sqlite3", "file:"+store+"?mode=ro")
		if err != nil {
			t.Fatal(err)
		}
		defer db.Close()
		if err := db.QueryRow(query).Scan(v); err != nil {
			t.Fatalf("%s: %v", query, err)
		}
	}
	row(`SELECT AVG(c.amount) FROM cost_series c, analysis_runs r
		WHERE c.object = '6100/WELD' AND r.id = (SELECT MAX(id) FROM analysis_runs) AND c.period BETWEEN r.window_from AND r.window_to`, &viewMean)
	row(`SELECT intercept FROM latest_fits WHERE object = '6100/WELD' AND model = 'constant' AND n = 36`, &storedMean)
	if math.Abs(viewMean-storedMean) > 1e-6*math.Abs(storedMean) {
		t.Errorf("6100/WELD: mean of cost_series over the window %v, the analysis's mean cost %v", viewMean, storedMean)
	}

	// A narrower analysis.accounts narrows the view at the next analysis:
	// the objects analysed under the wider scope are no longer in it.
	b, err := os.ReadFile(cfg)
	if err != nil {
		t.Fatal(err)
	}
	scoped := strings.Replace(string(b), `accounts: ["5000-6999"]`, `accounts: ["61*"]`, 1)
	if scoped == string(b) {
		t.Fatal("the demo config has no accounts: [\"5000-6999\"] line")
	}
	if err := os.WriteFile(cfg, []byte(scoped), 0o600); err != nil {
		t.Fatal(err)
	}
	mustRun(t, "--config", cfg, "analyze")
	if n := count(t, store, `SELECT COUNT(*) FROM cost_series WHERE account NOT GLOB '61*'`); n != 0 {
		t.Errorf("after analysis.accounts [61*], cost_series holds %d rows of other accounts", n)
	}
	if got, want := count(t, store, `SELECT SUM(amount_minor) FROM cost_series`),
		count(t, store, `SELECT SUM(amount_minor) FROM gl_lines WHERE account GLOB '61*'`); got != want || got == 0 {
		t.Errorf("after analysis.accounts [61*], SUM(amount_minor) over cost_series %d, the ledger's total of 61* %d", got, want)
	}

}

// A budget or variance report is kept only when saved under a name, and
// saving again under the same name replaces it (README "Budgets and
// variances"); a trial run leaves the store as it was.
func TestBudgetAndVarianceKeptOnlyWhenSaved(t *testing.T) {
	dir := t.TempDir()
	mustRun(t, "demo", "--dir", dir)
	cfg := filepath.Join(dir, "costdrift.yaml")
	store := filepath.Join(dir, "costdrift.db")
	q3 := filepath.Join(dir, "plans", "plan-2026-q3.csv")
	q2 := filepath.Join(dir, "plans", "plan-2026-q2.csv")
	stored := func() string {
		t.Helper()
		db, err := sql.Open("sqlite3", "file:"+store+"?mode=ro")
		if err != nil {
			t.Fatal(err)
		}
		defer db.Close()
		var s string
		if err := db.QueryRow(`SELECT
			(SELECT COUNT(*) || ' ' || COALESCE(group_concat(plan || '|' || period || '|' || line || '|' || object || '|' || cost_center || '|' || computed_at, ';'), '') FROM budget_lines) || ' / ' ||
			(SELECT COUNT(*) || ' ' || COALESCE(group_concat(plan || '|' || period || '|' || driver || '|' || loaded_at, ';'), '') FROM plans) || ' / ' ||
			(SELECT COUNT(*) || ' ' || COALESCE(group_concat(name || '|' || period || '|' || line || '|' || object || '|' || computed_at, ';'), '') FROM variance_lines)`).Scan(&s); err != nil {
			t.Fatal(err)
		}
		return s
	}

	// The demo keeps its budget and its variance report, for the queries it prints.
	demoLines := count(t, store, `SELECT COUNT(*) FROM budget_lines WHERE plan = 'plan-2026-q3'`)
	if demoLines != 3*(14+3+1) || count(t, store, `SELECT COUNT(*) FROM variance_lines WHERE name = '2026-06' AND period = '2026-06'`) != 14+3+1 {
		t.Fatalf("the demo kept %d budget lines under plan-2026-q3 (want 54) and %d variance lines under 2026-06 (want 18)", demoLines,
			count(t, store, `SELECT COUNT(*) FROM variance_lines WHERE name = '2026-06'`))
	}

	// Trial runs: a plan file of a name not stored yet, a period with no
	// report kept.
	trial := filepath.Join(t.TempDir(), "trial.csv")
	b, err := os.ReadFile(q3)
	if err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(trial, b, 0o600); err != nil {
		t.Fatal(err)
	}
	before := stored()
	out := mustRun(t, "--config", cfg, "budget", "--plan", trial)
	if !strings.Contains(out, "budget: a trial run, not kept in the store (--save NAME keeps it)") {
		t.Errorf("a budget without --save does not say it was not kept:\n%s", out)
	}
	mustRun(t, "--config", cfg, "budget", "--plan", trial, "--format", "json")
	mustRun(t, "--config", cfg, "variance", "--period", "2026-05", "--plan", q2)
	mustRun(t, "--config", cfg, "variance", "--period", "2026-04")
	if after := stored(); after != before {
		t.Errorf("runs without --save changed the store:\n before %.300s\n after  %.300s", before, after)
	}

	out = mustRun(t, "--config", cfg, "budget", "--plan", q3, "--save", "draft")
	if !strings.Contains(out, "budget: kept in the store under the name draft (view flexible_budget)") {
		t.Errorf("budget --save draft does not say so:\n%s", out)
	}
	if n := count(t, store, `SELECT COUNT(*) FROM flexible_budget WHERE plan = 'draft'`); n != demoLines {
		t.Errorf("%d budget lines under draft, want %d", n, demoLines)
	}
	if got, want := count(t, store, `SELECT COUNT(*) FROM plans WHERE plan = 'draft'`),
		count(t, store, `SELECT COUNT(*) FROM plans WHERE plan = 'plan-2026-q3'`); got != want || got == 0 {
		t.Errorf("%d planned values under draft, want %d", got, want)
	}
	// Saved again under the same name, the second plan replaces the first.
	mustRun(t, "--config", cfg, "budget", "--plan", q2, "--save", "draft")
	if n := count(t, store, `SELECT COUNT(*) FROM budget_lines WHERE plan = 'draft' AND period NOT BETWEEN '2026-04' AND '2026-06'`); n != 0 {
		t.Errorf("%d lines of the first draft are left", n)
	}
	if n := count(t, store, `SELECT COUNT(*) FROM budget_lines WHERE plan = 'draft'`); n != demoLines {
		t.Errorf("%d lines under draft after saving the second plan, want %d (13 objects, 3 cost centres and the total for 3 months)", n, demoLines)
	}
	if got, want := count(t, store, `SELECT COUNT(*) FROM plans WHERE plan = 'draft' AND location LIKE 'plan-2026-q2.csv:%'`),
		count(t, store, `SELECT COUNT(*) FROM plans WHERE plan = 'draft'`); got != want || got == 0 {
		t.Errorf("%d of the %d planned values under draft come from plan-2026-q2.csv", got, want)
	}
	if n := count(t, store, `SELECT COUNT(*) FROM budget_lines WHERE plan = 'plan-2026-q3'`); n != demoLines {
		t.Errorf("saving draft changed the budget saved as plan-2026-q3: %d lines", n)
	}

	mustRun(t, "--config", cfg, "variance", "--period", "2026-06", "--save", "review")
	if n := count(t, store, `SELECT COUNT(*) FROM spending_variances WHERE name = 'review' AND period = '2026-06' AND plan = ''`); n != 14+3+1 {
		t.Errorf("%d variance lines saved as review, want 18", n)
	}
	mustRun(t, "--config", cfg, "variance", "--period", "2026-05", "--plan", q2, "--save", "review")
	if got := count(t, store, `SELECT COUNT(*) FROM variance_lines WHERE name = 'review' AND period = '2026-05' AND plan = 'plan-2026-q2'`); got != 14+3+1 ||
		count(t, store, `SELECT COUNT(*) FROM variance_lines WHERE name = 'review'`) != got {
		t.Errorf("review saved again for 2026-05: %d lines of 2026-05, %d in all, want 18 and 18", got,
			count(t, store, `SELECT COUNT(*) FROM variance_lines WHERE name = 'review'`))
	}
	if n := count(t, store, `SELECT COUNT(*) FROM variance_lines WHERE name = '2026-06'`); n != 14+3+1 {
		t.Errorf("saving review changed the report saved as 2026-06: %d lines", n)
	}

	if _, err := run(t, "--config", cfg, "budget", "--plan", q3, "--save", ""); err == nil || !strings.Contains(err.Error(), "--save needs a name") {
		t.Errorf("budget --save with an empty name: %v", err)
	}
}
