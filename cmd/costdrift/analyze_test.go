package main

import (
	"database/sql"
	"path/filepath"
	"strings"
	"testing"
)

// Lines stored before sync bounded amounts can make one object's cost in a
// period more than an int64 of minor units holds. That object is skipped
// with the reason, naming it and the period; every other object is
// analysed, and the cost_series view still answers.
func TestAnalyzeSkipsAnObjectWhoseTotalOverflows(t *testing.T) {
	dir := t.TempDir()
	mustRun(t, "demo", "--dir", dir)
	cfg := filepath.Join(dir, "costdrift.yaml")
	store := filepath.Join(dir, "costdrift.db")

	// Ten lines of 9,999,999,999,999,999.99 EUR (999,999,999,999,999,999
	// minor units) in one period total 9,999,999,999,999,999,990, beyond
	// 2^63 - 1 = 9,223,372,036,854,775,807. Sync rejects such amounts now,
	// so they go into the store directly, as an older version stored them.
	db, err := sql.Open("sqlite3", "file:"+store)
	if err != nil {
		t.Fatal(err)
	}
	_, err = db.Exec(`INSERT INTO gl_lines (source, entry_id, line, posted_on, period, account, cost_center, amount_minor, description, sync_run_id)
		WITH RECURSIVE n(i) AS (SELECT 1 UNION ALL SELECT i + 1 FROM n WHERE i < 10)
		SELECT 'legacy', 'OLD-1', i, '2026-03-15', '2026-03', '6200', 'WELD', 999999999999999999, 'stored before amounts were bounded',
		       (SELECT MAX(id) FROM sync_runs)
		FROM n`)
	db.Close()
	if err != nil {
		t.Fatal(err)
	}

	out, err := run(t, "--config", cfg, "analyze", "--all")
	if err != nil {
		t.Fatalf("analyze failed for every object: %v\n%s", err, out)
	}
	const skipped = "analyze: 6200/WELD skipped: its lines in 2026-03 add up to more than an int64 of minor units holds; " +
		"they include amounts beyond the bound sync enforces"
	if !strings.Contains(out, skipped) {
		t.Errorf("analyze output does not say which object was skipped and why:\n%s", out)
	}
	// The demo has 14 cost objects (TestResyncChangesNothing).
	if !strings.Contains(out, "analysed 13 cost objects") {
		t.Errorf("analyze output:\n%s", out)
	}
	if n := count(t, store, "SELECT objects FROM analysis_runs ORDER BY id DESC LIMIT 1"); n != 13 {
		t.Errorf("the last analysis stored %d objects, want 13", n)
	}
	// The skipped object keeps the behaviour of the demo's own analysis;
	// every other one comes from this run.
	if n := count(t, store, `SELECT COUNT(*) FROM current_behaviour
		WHERE analysis_run_id = (SELECT MAX(id) FROM analysis_runs) AND object <> '6200/WELD'`); n != 13 {
		t.Errorf("%d objects analysed by the last run, want 13", n)
	}
	if n := count(t, store, `SELECT COUNT(*) FROM current_behaviour
		WHERE analysis_run_id = (SELECT MAX(id) FROM analysis_runs) AND object = '6200/WELD'`); n != 0 {
		t.Errorf("6200/WELD was analysed on a total nobody can add up")
	}

	// The view answers: the period beyond int64 has no amount_minor but an
	// amount; the others are exact, as a plain SUM over the lines gives them.
	if n := count(t, store, `SELECT COUNT(*) FROM cost_series WHERE amount_minor IS NULL`); n != 1 {
		t.Errorf("%d rows of cost_series without amount_minor, want one", n)
	}
	if n := count(t, store, `SELECT COUNT(*) FROM cost_with_drivers WHERE amount_minor IS NULL`); n != count(t, store, `SELECT COUNT(DISTINCT driver) FROM activity`) {
		t.Errorf("%d rows of cost_with_drivers without amount_minor, want one per driver", n)
	}
	if n := count(t, store, `SELECT COUNT(*) FROM cost_series
		WHERE account = '6200' AND cost_center = 'WELD' AND period = '2026-03' AND amount_minor IS NULL AND amount > 9.99e16`); n == 0 {
		t.Errorf("cost_series has no row for 6200/WELD in 2026-03 with its float amount")
	}
	if n := count(t, store, `SELECT COUNT(*) FROM cost_series c
		WHERE c.account = '6200' AND c.cost_center = 'WELD' AND c.period <> '2026-03' AND c.amount_minor IS NOT
		      (SELECT SUM(amount_minor) FROM gl_lines g WHERE g.account = c.account AND g.cost_center = c.cost_center AND g.period = c.period)`); n != 0 {
		t.Errorf("%d rows of cost_series for 6200/WELD differ from the sum of their lines", n)
	}

	// A variance for that period leaves the object out, saying so, and
	// covers the others.
	out, err = run(t, "--config", cfg, "variance", "--period", "2026-03", "--format", "json", "--save", "2026-03")
	if err != nil || !strings.Contains(out, "variance: 6200/WELD left out: its lines in 2026-03 add up to more than an int64 of minor units holds") {
		t.Errorf("variance 2026-03: %v\n%s", err, out)
	}
	if n := count(t, store, `SELECT COUNT(*) FROM variance_lines WHERE period = '2026-03' AND object = '6200/WELD'`); n != 0 {
		t.Errorf("a variance line for 6200/WELD, whose actual cost nobody can add up")
	}
	if n := count(t, store, `SELECT COUNT(*) FROM variance_lines WHERE period = '2026-03' AND line = 'object'`); n != 13 {
		t.Errorf("%d object lines in the 2026-03 variance, want the other 13", n)
	}

	// Explaining the skipped object (power, whose formula has a driver, so
	// explain reads its costs) names the period instead of SQLite's bare
	// "integer overflow".
	if out, err := run(t, "--config", cfg, "explain", "6200/WELD"); err == nil || !strings.Contains(err.Error(), "2026-03") ||
		strings.Contains(err.Error(), "integer overflow") {
		t.Errorf("explain 6200/WELD: %v\n%s", err, out)
	}
}
