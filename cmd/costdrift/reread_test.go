package main

import (
	"database/sql"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// glSourceKeys adds YAML lines of keys to the gl source of a config that
// setup wrote, as a user fixing how a file is read would.
func glSourceKeys(t *testing.T, cfg, keys string) {
	t.Helper()
	text, err := os.ReadFile(cfg)
	if err != nil {
		t.Fatal(err)
	}
	const gl = "      path: data/gl/*.csv\n"
	if !strings.Contains(string(text), gl) {
		t.Fatalf("the config has no %q", gl)
	}
	writeFile(t, cfg, strings.Replace(string(text), gl, gl+keys, 1))
}

// A ledger whose dates are day first is rejected row by row with a reason
// naming date_format; once the source says date_format, the next sync reads
// the unchanged file again and stores every row, and the sync after that
// finds it unchanged (README, Sources: a change to how a file is read reads
// it again).
func TestRereadAfterDateFormat(t *testing.T) {
	cfg, dir := setup(t, header+
		"A1,1,15/01/2026,6100,WELD,4200.00\nA1,2,15/01/2026,2000,,-4200.00\n"+
		"A2,1,05/02/2026,6200,WELD,310.00\nA2,2,05/02/2026,2000,,-310.00\n")
	store := filepath.Join(dir, "costdrift.db")
	// Every row rejected: the sync fails, naming the file (README, When a
	// sync goes wrong).
	out, err := run(t, "--config", cfg, "sync")
	if err == nil || !strings.Contains(err.Error(), "4 of 4 rows rejected") ||
		!strings.Contains(out, "files: 1 read, 0 unchanged | rows: 4 read, 0 stored, 0 replaced, 4 rejected") {
		t.Fatalf("first sync: %v\n%s", err, out)
	}
	want := `bad date "15/01/2026": want YYYY-MM-DD; set date_format (e.g. DD/MM/YYYY)`
	if n := count(t, store, "SELECT COUNT(*) FROM rejects WHERE reason = '"+strings.ReplaceAll(want, "'", "''")+"'"); n != 2 {
		t.Errorf("%d rejects say %q, want 2", n, want)
	}
	t.Logf("before date_format:\n%s", out)

	glSourceKeys(t, cfg, "      date_format: DD/MM/YYYY\n")
	out = mustRun(t, "--config", cfg, "sync")
	t.Logf("after date_format:\n%s", out)
	if !strings.Contains(out, "files: 1 read, 0 unchanged | rows: 4 read, 4 stored, 0 replaced, 0 rejected") {
		t.Fatalf("sync after date_format was set:\n%s", out)
	}
	if !strings.Contains(out, "note: data/gl/gl.csv read again: its reading settings changed (date_format)") {
		t.Errorf("the sync does not say why it read the file again:\n%s", out)
	}
	if n := count(t, store, "SELECT COUNT(*) FROM gl_lines WHERE period IN ('2026-01', '2026-02')"); n != 4 {
		t.Errorf("gl_lines in January and February = %d, want 4", n)
	}
	if n := count(t, store, "SELECT COUNT(*) FROM gl_lines WHERE entry_id = 'A2' AND posted_on = '2026-02-05'"); n != 2 {
		t.Errorf("A2 posted on 2026-02-05: %d lines, want 2 (05/02 is the fifth of February)", n)
	}
	if n := count(t, store, "SELECT rows_rejected FROM sync_runs WHERE source = 'gl' ORDER BY id DESC LIMIT 1"); n != 0 {
		t.Errorf("the latest gl sync rejected %d rows, want 0", n)
	}

	out = mustRun(t, "--config", cfg, "sync")
	if !strings.Contains(out, "files: 0 read, 1 unchanged") || strings.Contains(out, "read again") {
		t.Fatalf("third sync:\n%s", out)
	}
}

// Amounts written with "," thousands are rejected from 1,000 up with a
// reason naming thousands_separator; amounts in decimal-comma notation with
// "." thousands name decimal_comma. Setting the keys reads the files again,
// and each amount is stored as written.
func TestRereadAfterNotation(t *testing.T) {
	t.Run("thousands separator", func(t *testing.T) {
		cfg, dir := setup(t, header+
			"A1,1,2026-01-05,6100,WELD,\"18,282.97\"\nA1,2,2026-01-05,2000,,\"-18,282.97\"\n"+
			"A2,1,2026-01-09,6200,WELD,310.00\nA2,2,2026-01-09,2000,,-310.00\n")
		store := filepath.Join(dir, "costdrift.db")
		out := mustRun(t, "--config", cfg, "sync")
		if !strings.Contains(out, "rows: 4 read, 2 stored, 0 replaced, 2 rejected") {
			t.Fatalf("first sync:\n%s", out)
		}
		want := `bad amount: amount "18,282.97" has a ','; declare decimal_comma or thousands_separator for this source (with thousands_separator "," it reads as 18282.97)`
		if n := count(t, store, "SELECT COUNT(*) FROM rejects WHERE reason = '"+strings.ReplaceAll(want, "'", "''")+"'"); n != 1 {
			t.Errorf("%d rejects say %q, want 1", n, want)
		}
		glSourceKeys(t, cfg, "      thousands_separator: \",\"\n")
		out = mustRun(t, "--config", cfg, "sync")
		if !strings.Contains(out, "files: 1 read, 0 unchanged | rows: 4 read, 4 stored, 2 replaced, 0 rejected") ||
			!strings.Contains(out, "gl.csv read again: its reading settings changed (thousands_separator)") {
			t.Fatalf("sync after thousands_separator was set:\n%s", out)
		}
		if n := count(t, store, "SELECT amount_minor FROM gl_lines WHERE entry_id = 'A1' AND line = 1"); n != 1828297 {
			t.Errorf("A1 line 1 = %d minor units, want 1828297", n)
		}
		if out := mustRun(t, "--config", cfg, "sync"); !strings.Contains(out, "files: 0 read, 1 unchanged") {
			t.Fatalf("third sync:\n%s", out)
		}
	})
	t.Run("decimal comma", func(t *testing.T) {
		cfg, dir := setup(t, strings.ReplaceAll(header, ",", ";")+
			"A1;1;2026-01-05;6100;WELD;1.234,50\nA1;2;2026-01-05;2000;;-1.234,50\n"+
			"A2;1;2026-01-09;6200;WELD;310,25\nA2;2;2026-01-09;2000;;-310,25\n")
		store := filepath.Join(dir, "costdrift.db")
		out, err := run(t, "--config", cfg, "sync")
		if err == nil || !strings.Contains(err.Error(), "4 of 4 rows rejected") || !strings.Contains(out, "rows: 4 read, 0 stored, 0 replaced, 4 rejected") {
			t.Fatalf("first sync: %v\n%s", err, out)
		}
		for _, want := range []string{
			`bad amount: amount "1.234,50" has a ','; declare decimal_comma or thousands_separator for this source (with decimal_comma: true and thousands_separator "." it reads as 1234.50)`,
			`bad amount: amount "310,25" has a ','; declare decimal_comma or thousands_separator for this source (with decimal_comma: true it reads as 310.25)`,
		} {
			if n := count(t, store, "SELECT COUNT(*) FROM rejects WHERE reason = '"+strings.ReplaceAll(want, "'", "''")+"'"); n != 1 {
				t.Errorf("%d rejects say %q, want 1", n, want)
			}
		}
		glSourceKeys(t, cfg, "      decimal_comma: true\n      thousands_separator: \".\"\n")
		out = mustRun(t, "--config", cfg, "sync")
		if !strings.Contains(out, "files: 1 read, 0 unchanged | rows: 4 read, 4 stored, 0 replaced, 0 rejected") ||
			!strings.Contains(out, "gl.csv read again: its reading settings changed (decimal_comma, thousands_separator)") {
			t.Fatalf("sync after decimal_comma was set:\n%s", out)
		}
		if n := count(t, store, "SELECT SUM(amount_minor) FROM gl_lines WHERE amount_minor > 0"); n != 123450+31025 {
			t.Errorf("debits = %d minor units, want %d", n, 123450+31025)
		}
	})
}

// A store synced before files kept the settings they were read with holds
// no settings for them: the upgrade does not read every file again, and
// from then on a change of settings does.
func TestRereadUpgradeKeepsFiles(t *testing.T) {
	cfg, dir := setup(t, header+"A1,1,2026-01-05,6100,WELD,4200.00\nA1,2,2026-01-05,2000,,-4200.00\n")
	store := filepath.Join(dir, "costdrift.db")
	mustRun(t, "--config", cfg, "sync")
	// What the migration leaves for files loaded before it.
	sqldb, err := sql.Open("sqlite3", "file:"+store)
	if err != nil {
		t.Fatal(err)
	}
	if _, err := sqldb.Exec("UPDATE source_files SET reading_settings = NULL"); err != nil {
		t.Fatal(err)
	}
	sqldb.Close()
	out := mustRun(t, "--config", cfg, "sync")
	if !strings.Contains(out, "files: 0 read, 1 unchanged") || strings.Contains(out, "read again") {
		t.Fatalf("first sync after the upgrade:\n%s", out)
	}
	glSourceKeys(t, cfg, "      delimiter: \",\"\n")
	out = mustRun(t, "--config", cfg, "sync")
	if !strings.Contains(out, "gl.csv read again: its reading settings changed (delimiter)") {
		t.Fatalf("sync after a setting changed:\n%s", out)
	}
}

// A database source read by watermark whose query changes is read whole
// again once: rows the new query no longer returns are removed, although
// they lie below the watermark, and the sync says why. Expected rows are
// worked out by hand from the invented journal below.
func TestRereadWatermarkQuery(t *testing.T) {
	dir := t.TempDir()
	books := filepath.Join(dir, "books.db")
	src, err := sql.Open("sqlite3", books)
	if err != nil {
		t.Fatal(err)
	}
	defer src.Close()
	for _, s := range []string{
		`CREATE TABLE journal (id INTEGER PRIMARY KEY, entry_id TEXT, line INTEGER, date TEXT, account TEXT, cost_center TEXT, amount TEXT, kind TEXT)`,
		`INSERT INTO journal VALUES (1, 'B1', 1, '2026-01-05', '6100', 'WELD', '100.00', 'actual'), (2, 'B1', 2, '2026-01-05', '2000', '', '-100.00', 'actual'),
			(3, 'S1', 1, '2026-01-31', '6100', 'WELD', '40.00', 'simulation'), (4, 'S1', 2, '2026-01-31', '2000', '', '-40.00', 'simulation')`,
	} {
		if _, err := src.Exec(s); err != nil {
			t.Fatal(err)
		}
	}
	cfg := filepath.Join(dir, "costdrift.yaml")
	yaml := func(where string) string {
		return `store: costdrift.db
currency: EUR
sources:
  ledger:
    - name: gl
      kind: sql
      driver: sqlite
      dsn_env: COSTDRIFT_TEST_BOOKS_DSN
      query: SELECT id, entry_id, line, date, account, cost_center, amount FROM journal WHERE ` + where + `id > COALESCE(:watermark, 0)
      refresh: watermark
      watermark_column: id
`
	}
	writeFile(t, cfg, yaml(""))
	t.Setenv("COSTDRIFT_TEST_BOOKS_DSN", books)
	store := filepath.Join(dir, "costdrift.db")
	out := mustRun(t, "--config", cfg, "sync")
	if !strings.Contains(out, "rows: 4 read, 4 stored") {
		t.Fatalf("first sync:\n%s", out)
	}

	// The simulation entries should never have been read.
	writeFile(t, cfg, yaml("kind = 'actual' AND "))
	out = mustRun(t, "--config", cfg, "sync")
	if !strings.Contains(out, "note: gl read again in full: its reading settings changed (query)") {
		t.Errorf("sync after the query changed:\n%s", out)
	}
	if n := count(t, store, "SELECT COUNT(*) FROM gl_lines WHERE source = 'gl'"); n != 2 {
		t.Errorf("gl_lines = %d, want 2 (entry B1)", n)
	}
	if n := count(t, store, "SELECT COUNT(*) FROM gl_lines WHERE entry_id = 'S1'"); n != 0 {
		t.Errorf("the simulation entry S1 is still stored: %d lines", n)
	}
	if n := count(t, store, "SELECT COUNT(*) FROM source_watermarks WHERE source = 'gl' AND value = '2'"); n != 1 {
		t.Errorf("the watermark is not 2, the newest id the new query returns")
	}

	out = mustRun(t, "--config", cfg, "sync")
	if strings.Contains(out, "read again") || !strings.Contains(out, "rows: 0 read") {
		t.Errorf("third sync:\n%s", out)
	}
}
