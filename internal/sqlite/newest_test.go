package sqlite

import (
	"context"
	"path/filepath"
	"testing"
)

// NewestPeriods reads the newest period of each source from the counts its
// loads recorded, and from the lines of a file loaded before the store kept
// them; a period whose file stored nothing does not count. The answer is the
// maximum over the lines themselves, which the test also computes.
func TestNewestPeriodsFromCounts(t *testing.T) {
	ctx := context.Background()
	db, err := Open(ctx, filepath.Join(t.TempDir(), "costdrift.db"), eur)
	if err != nil {
		t.Fatal(err)
	}
	defer db.Close()
	mustExec(t, db, `INSERT INTO sync_runs (id, source, role, kind, started_at, status) VALUES (1, 'gl', 'ledger', 'csv', '2026-01-05', 'ok'), (2, 'ops', 'activity', 'csv', '2026-01-05', 'ok')`)
	mustExec(t, db, `INSERT INTO source_files (id, source, path, size, sha256, rows, loaded_at, sync_run_id) VALUES
		(1, 'gl', '/books/gl-2025.csv', 1, 'a', 2, '2026-01-05', 1),
		(2, 'gl', '/books/gl-old.csv', 1, 'b', 1, '2026-01-05', 1),
		(3, 'ops', '/books/ops.csv', 1, 'c', 2, '2026-01-05', 2),
		(4, 'gl', '/books/gl-rejected.csv', 1, 'd', 0, '2026-01-05', 1)`)
	mustExec(t, db, `INSERT INTO gl_lines (source, entry_id, line, posted_on, period, account, amount_minor, sync_run_id, source_file_id) VALUES
		('gl', 'e1', 1, '2025-11-03', '2025-11', '6100', 100, 1, 1),
		('gl', 'e2', 1, '2025-12-03', '2025-12', '6100', 100, 1, 1),
		('gl', 'e0', 1, '2024-06-03', '2024-06', '6100', 100, 1, 2)`)
	mustExec(t, db, `INSERT INTO activity (source, period, driver, value, sync_run_id, source_file_id) VALUES
		('ops', '2025-12', 'orders', 5, 2, 3), ('ops', '2026-01', 'orders', 6, 2, 3)`)
	// File 2 was loaded before the counts were kept: it has none.
	mustExec(t, db, `INSERT INTO source_periods (source_file_id, source, period, rows_stored, rows_rejected, reason, sync_run_id) VALUES
		(1, 'gl', '2025-11', 1, 0, '', 1), (1, 'gl', '2025-12', 1, 0, '', 1),
		(3, 'ops', '2025-12', 1, 0, '', 2), (3, 'ops', '2026-01', 1, 0, '', 2),
		(4, 'gl', '2027-01', 0, 3, 'bad date', 1)`)
	want := map[string]string{"gl": "2025-12", "ops": "2026-01"}
	check := func(label string) {
		t.Helper()
		got, err := db.NewestPeriods(ctx)
		if err != nil {
			t.Fatal(err)
		}
		if len(got) != len(want) || got["gl"] != want["gl"] || got["ops"] != want["ops"] {
			t.Errorf("%s: NewestPeriods = %v, want %v", label, got, want)
		}
		var gl, ops string
		db.SQL().QueryRow(`SELECT MAX(period) FROM gl_lines WHERE source = 'gl'`).Scan(&gl)
		db.SQL().QueryRow(`SELECT MAX(period) FROM activity WHERE source = 'ops'`).Scan(&ops)
		if gl != want["gl"] || ops != want["ops"] {
			t.Fatalf("%s: the lines' newest periods are %s and %s; the test's expectation is wrong", label, gl, ops)
		}
	}
	check("counted")
	// An old file, uncounted, holds the newest ledger period.
	mustExec(t, db, `INSERT INTO gl_lines (source, entry_id, line, posted_on, period, account, amount_minor, sync_run_id, source_file_id) VALUES
		('gl', 'e9', 1, '2026-02-03', '2026-02', '6100', 100, 1, 2)`)
	want["gl"] = "2026-02"
	check("uncounted file")
}
