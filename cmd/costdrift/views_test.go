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
	// One row per object and ledger period: 13 objects (TestResyncChangesNothing).
	if got, want := count(t, store, `SELECT COUNT(*) FROM cost_series`),
		13*count(t, store, `SELECT COUNT(DISTINCT period) FROM gl_lines`); got != want {
		t.Errorf("cost_series has %d rows, want %d (13 objects x the ledger's periods)", got, want)
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
