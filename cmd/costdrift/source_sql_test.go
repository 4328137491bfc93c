package main

import (
	"database/sql"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// The sql kind end to end on a SQLite source database: the connection
// string comes from an owner-only dsn_file next to the config, the config
// keys reach the reader, the watermark is kept by the store between syncs,
// and a dsn_file others may read fails its source without showing the
// password. Expected values are worked out by hand from the invented rows
// below (EUR has two decimals, ISO 4217).
func TestSyncSQLSources(t *testing.T) {
	dir := t.TempDir()
	books := filepath.Join(dir, "books.db")
	src, err := sql.Open("sqlite3", books)
	if err != nil {
		t.Fatal(err)
	}
	defer src.Close()
	exec := func(statements ...string) {
		t.Helper()
		for _, s := range statements {
			if _, err := src.Exec(s); err != nil {
				t.Fatalf("%s: %v", s, err)
			}
		}
	}
	exec(`CREATE TABLE journal (id INTEGER PRIMARY KEY, beleg TEXT, pos INTEGER, datum TEXT, konto TEXT, kst TEXT, betrag TEXT)`,
		`INSERT INTO journal VALUES (1, 'B1', 1, '05.01.2026', '6100', 'WELD', '1234,50'), (2, 'B1', 2, '05.01.2026', '2000', NULL, '-1234,50'),
			(3, 'B2', 1, '06.01.2026', '6100', 'WELD', '0,125')`,
		`CREATE TABLE hours (month TEXT, machine_hours REAL)`,
		`INSERT INTO hours VALUES ('2026-01', 412.5)`,
		`CREATE TABLE konten (konto TEXT, bezeichnung TEXT)`,
		`INSERT INTO konten VALUES ('6100', 'Energie')`)
	if err := os.WriteFile(filepath.Join(dir, "books.dsn"), []byte(books+"\n"), 0o600); err != nil {
		t.Fatal(err)
	}
	cfg := filepath.Join(dir, "costdrift.yaml")
	yaml := `store: costdrift.db
currency: EUR
sources:
  ledger:
    - name: gl
      kind: sql
      driver: sqlite
      dsn_file: books.dsn
      query: SELECT id, beleg, pos AS line, datum, konto, kst, betrag FROM journal WHERE id > COALESCE(:watermark, 0)
      refresh: watermark
      watermark_column: id
      date_format: DD.MM.YYYY
      decimal_comma: true
      timeout: 30s
      columns: {entry_id: beleg, date: datum, account: konto, cost_center: kst, amount: betrag}
  activity:
    - name: ops
      kind: sql
      driver: sqlite
      dsn_file: books.dsn
      query: SELECT month AS period, 'machine_hours' AS driver, machine_hours AS value FROM hours
  accounts:
    - name: coa
      kind: sql
      driver: sqlite
      dsn_env: COSTDRIFT_TEST_BOOKS_DSN
      query: SELECT konto AS account, bezeichnung AS name FROM konten
`
	if err := os.WriteFile(cfg, []byte(yaml), 0o600); err != nil {
		t.Fatal(err)
	}
	t.Setenv("COSTDRIFT_TEST_BOOKS_DSN", books)
	store := filepath.Join(dir, "costdrift.db")
	check := func(when string, checks []struct {
		query string
		want  int
	}) {
		t.Helper()
		for _, c := range checks {
			if n := count(t, store, c.query); n != c.want {
				t.Errorf("%s: %s: %d, want %d", when, c.query, n, c.want)
			}
		}
	}

	out := mustRun(t, "--config", cfg, "sync")
	check("first sync", []struct {
		query string
		want  int
	}{
		{"SELECT COUNT(*) FROM gl_lines WHERE source = 'gl' AND entry_id = 'B1' AND line = 1 AND posted_on = '2026-01-05' AND cost_center = 'WELD' AND amount_minor = 123450", 1},
		{"SELECT COUNT(*) FROM gl_lines WHERE source = 'gl' AND entry_id = 'B1' AND line = 2 AND cost_center = '' AND amount_minor = -123450", 1},
		{"SELECT COUNT(*) FROM rejects WHERE location = 'gl row 3 (entry B2, line 1)' AND reason LIKE 'bad amount: amount \"0,125\": more decimals%'", 1},
		{"SELECT COUNT(*) FROM activity WHERE source = 'ops' AND period = '2026-01' AND driver = 'machine_hours' AND value = 412.5", 1},
		{"SELECT COUNT(*) FROM accounts WHERE source = 'coa' AND account = '6100' AND name = 'Energie'", 1},
		{"SELECT COUNT(*) FROM source_watermarks WHERE source = 'gl' AND value = '3'", 1},
	})
	if t.Failed() {
		t.Logf("sync printed:\n%s", out)
	}

	// Only rows past the watermark are read next time.
	exec(`INSERT INTO journal VALUES (4, 'B3', 1, '31.01.2026', '6100', 'PAINT', '10,00')`)
	out = mustRun(t, "--config", cfg, "sync")
	check("second sync", []struct {
		query string
		want  int
	}{
		{"SELECT COUNT(*) FROM gl_lines WHERE source = 'gl'", 3},
		{"SELECT COUNT(*) FROM gl_lines WHERE entry_id = 'B3' AND amount_minor = 1000", 1},
		{"SELECT COUNT(*) FROM source_watermarks WHERE source = 'gl' AND value = '4'", 1},
		{"SELECT rows_read FROM sync_runs WHERE source = 'gl' ORDER BY id DESC LIMIT 1", 1},
	})
	if t.Failed() {
		t.Logf("sync printed:\n%s", out)
	}

	// A connection string file others may read is refused, and the
	// password in it is not shown anywhere.
	const secret = "Pw-7f3a9c-not-for-logs"
	if err := os.WriteFile(filepath.Join(dir, "books.dsn"), []byte(books+"?_auth&_auth_user=u&_auth_pass="+secret+"\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	if err := os.Chmod(filepath.Join(dir, "books.dsn"), 0o644); err != nil {
		t.Fatal(err)
	}
	out, err = run(t, "--config", cfg, "sync")
	t.Logf("sync printed:\n%s\nerror: %v", out, err)
	if err == nil || !strings.Contains(err.Error(), "has mode 0644") || !strings.Contains(err.Error(), "chmod 600") {
		t.Errorf("sync with a readable dsn_file: %v", err)
	}
	if strings.Contains(out, secret) || (err != nil && strings.Contains(err.Error(), secret)) {
		t.Errorf("the password was shown:\n%s\n%v", out, err)
	}
	if n := count(t, store, "SELECT COUNT(*) FROM sync_runs WHERE error LIKE '%"+secret+"%'"); n != 0 {
		t.Errorf("%d sync runs keep the password in their error", n)
	}
}

// TestSyncShowsSourceWarnings: a warning the reader raises about its
// source (here: a SQLite connection string that asks to open the file for
// writing, which costdrift overrides) is printed by sync under the source,
// kept in sync_runs and shown by status; the sync itself succeeds.
func TestSyncShowsSourceWarnings(t *testing.T) {
	dir := t.TempDir()
	books := filepath.Join(dir, "books.db")
	src, err := sql.Open("sqlite3", books)
	if err != nil {
		t.Fatal(err)
	}
	for _, s := range []string{`CREATE TABLE konten (konto TEXT, bezeichnung TEXT)`, `INSERT INTO konten VALUES ('6100', 'Energie')`} {
		if _, err := src.Exec(s); err != nil {
			t.Fatalf("%s: %v", s, err)
		}
	}
	src.Close()
	before, _ := os.ReadFile(books)
	cfg := filepath.Join(dir, "costdrift.yaml")
	yaml := `store: costdrift.db
currency: EUR
sources:
  accounts:
    - name: coa
      kind: sql
      driver: sqlite
      dsn_env: COSTDRIFT_TEST_BOOKS_DSN
      query: SELECT konto AS account, bezeichnung AS name FROM konten
`
	if err := os.WriteFile(cfg, []byte(yaml), 0o600); err != nil {
		t.Fatal(err)
	}
	t.Setenv("COSTDRIFT_TEST_BOOKS_DSN", "file:"+books+"?mode=rwc")
	store := filepath.Join(dir, "costdrift.db")
	const warning = "source coa: its connection string asks for mode=rwc; it is opened read-only (mode=ro), as every SQLite source is"
	out := mustRun(t, "--config", cfg, "sync")
	if !strings.Contains(out, "warning: "+warning) {
		t.Errorf("sync does not print the warning:\n%s", out)
	}
	if n := count(t, store, "SELECT COUNT(*) FROM accounts WHERE source = 'coa' AND account = '6100'"); n != 1 {
		t.Errorf("%d accounts stored, want 1:\n%s", n, out)
	}
	if n := count(t, store, "SELECT COUNT(*) FROM sync_runs WHERE source = 'coa' AND status = 'ok' AND warnings = '"+warning+"'"); n != 1 {
		t.Errorf("%d ok sync runs of coa record the warning, want 1", n)
	}
	status := mustRun(t, "--config", cfg, "status")
	if !strings.Contains(status, "warning: "+warning) {
		t.Errorf("status does not show the warning:\n%s", status)
	}
	if after, _ := os.ReadFile(books); string(after) != string(before) {
		t.Errorf("the sync changed the source database")
	}
}
