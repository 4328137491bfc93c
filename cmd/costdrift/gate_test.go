package main

import (
	"database/sql"
	"fmt"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
)

// partialMonth splits the demo's 2026-06 lines out of gl-2026.csv and
// returns them as a file of their own in which the first `spoil` amounts of
// 1,000 or more are written with a thousands separator ("18,282.97"), as an
// export with grouping would write them.
func partialMonth(t *testing.T, dir string, spoil int) (clean, spoilt string) {
	t.Helper()
	path := filepath.Join(dir, "data", "gl", "gl-2026.csv")
	raw, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	lines := strings.Split(strings.TrimSuffix(string(raw), "\n"), "\n")
	keep := []string{lines[0]}
	var clean_, spoilt_ strings.Builder
	clean_.WriteString(lines[0] + "\n")
	spoilt_.WriteString(lines[0] + "\n")
	for _, l := range lines[1:] {
		if !strings.Contains(l, ",2026-06-") {
			keep = append(keep, l)
			continue
		}
		clean_.WriteString(l + "\n")
		f := strings.SplitN(l, ",", 7) // entry_id,line,date,account,cost_center,amount,description
		v, err := strconv.ParseFloat(f[5], 64)
		if err != nil {
			t.Fatal(err)
		}
		if spoil > 0 && (v >= 1000 || v <= -1000) {
			spoil--
			whole, cents, _ := strings.Cut(strings.TrimPrefix(f[5], "-"), ".")
			grouped := ""
			for len(whole) > 3 {
				grouped = "," + whole[len(whole)-3:] + grouped
				whole = whole[:len(whole)-3]
			}
			sign := ""
			if v < 0 {
				sign = "-"
			}
			f[5] = fmt.Sprintf("%q", sign+whole+grouped+"."+cents)
		}
		spoilt_.WriteString(strings.Join(f, ",") + "\n")
	}
	if err := os.WriteFile(path, []byte(strings.Join(keep, "\n")+"\n"), 0o600); err != nil {
		t.Fatal(err)
	}
	return clean_.String(), spoilt_.String()
}

// The data-quality gate (README, When a sync goes wrong): a clean year is
// analysed; then a month arrives of which 61 % of the rows are rejected
// (amounts with a thousands separator the source does not declare). The
// sync fails naming the file and the reason, the analysis holds every object
// back and raises one data_quality alert instead of the behaviour alerts the
// partial month would cause; once the setting is fixed and the file read
// again, the alert resolves and the objects are analysed over the month.
func TestPartialMonthIsHeldBack(t *testing.T) {
	dir, cfg, store := demoWithoutStore(t)
	_, spoilt := partialMonth(t, dir, 27) // 27 of June's 46 lines: 59 %
	mustRun(t, "--config", cfg, "sync")
	mustRun(t, "--config", cfg, "analyze")
	if n := count(t, store, "SELECT COUNT(*) FROM analysis_runs WHERE window_to = '2026-05'"); n != 1 {
		t.Fatalf("the clean analysis ends at %d runs of 2026-05, want 1", n)
	}
	const behaviourAlerts = `SELECT COUNT(*) FROM alerts WHERE kind IN ('reclassified', 'driver_changed', 'fixed_shift', 'rate_shift', 'spending_outlier', 'out_of_range', 'data_gap')`
	before := count(t, store, behaviourAlerts)
	openBefore := count(t, store, behaviourAlerts+" AND status = 'open'")

	month := filepath.Join(dir, "data", "gl", "gl-2026-06.csv")
	if err := os.WriteFile(month, []byte(spoilt), 0o600); err != nil {
		t.Fatal(err)
	}
	out, err := run(t, "--config", cfg, "sync")
	t.Logf("sync with the partial month:\n%s%v", out, err)
	if err == nil {
		t.Errorf("sync of a file with 61 %% of its rows rejected succeeded; want a non-zero exit")
	} else if msg := err.Error(); !strings.Contains(msg, "gl-2026-06.csv") || !strings.Contains(msg, "27 of 46 rows rejected") ||
		!strings.Contains(msg, "thousands_separator") {
		t.Errorf("sync error = %q, want it to name the file, the 27 of 46 rows rejected and the setting", msg)
	}
	out, err = run(t, "--config", cfg, "analyze")
	t.Logf("analyze with the partial month:\n%s%v", out, err)
	if err != nil {
		t.Fatalf("analyze: %v", err)
	}
	if n := count(t, store, behaviourAlerts); n != before {
		t.Errorf("%d behaviour, spending, range and gap alerts after the partial month, want the %d of the clean year", n, before)
	}
	if n := count(t, store, behaviourAlerts+" AND status = 'open'"); n != openBefore {
		t.Errorf("%d of them open after the partial month, want %d as before", n, openBefore)
	}
	if n := count(t, store, "SELECT COUNT(*) FROM analysis_runs WHERE window_to = '2026-06'"); n != 0 {
		t.Errorf("%d analyses ran over 2026-06 with 61 %% of its ledger rows missing, want 0", n)
	}
	if n := count(t, store, `SELECT COUNT(*) FROM alerts WHERE kind = 'data_quality' AND status = 'open' AND severity = 'warning'
		AND object = 'gl' AND period = '2026-06' AND message LIKE '%gl-2026-06.csv%' AND message LIKE '%27 of 46%'
		AND message LIKE '%thousands_separator%' AND message LIKE '%read again when it or its reading settings change%'`); n != 1 {
		t.Errorf("%d open data_quality alerts on gl 2026-06 naming the file, the share, the setting and the re-read, want 1", n)
	}
	if n := count(t, store, "SELECT COUNT(*) FROM alerts WHERE kind = 'data_quality'"); n != 1 {
		t.Errorf("%d data_quality alerts, want 1 (one per source and period)", n)
	}
	if !strings.Contains(out, "held back") {
		t.Errorf("analyze does not say it held the objects back:\n%s", out)
	}

	// The fix: declare the separator and sync again; the file is read
	// again because the settings it is read with changed.
	raw, err := os.ReadFile(cfg)
	if err != nil {
		t.Fatal(err)
	}
	fixed := strings.Replace(string(raw), "      path: data/gl/*.csv\n", "      path: data/gl/*.csv\n      thousands_separator: \",\"\n", 1)
	if fixed == string(raw) {
		t.Fatal("the demo config has no gl path line to follow")
	}
	if err := os.WriteFile(cfg, []byte(fixed), 0o600); err != nil {
		t.Fatal(err)
	}
	out = mustRun(t, "--config", cfg, "sync")
	t.Logf("sync after the fix:\n%s", out)
	if base := filepath.Base(month); !strings.Contains(out, base+" read again: its reading settings changed (thousands_separator)") {
		t.Errorf("the sync after the fix does not say it read %s again:\n%s", base, out)
	}
	out = mustRun(t, "--config", cfg, "analyze")
	t.Logf("analyze after the fix:\n%s", out)
	if n := count(t, store, "SELECT COUNT(*) FROM alerts WHERE kind = 'data_quality' AND status = 'resolved'"); n != 1 {
		t.Errorf("%d resolved data_quality alerts after the fix, want 1", n)
	}
	if n := count(t, store, "SELECT COUNT(*) FROM analysis_runs WHERE window_to = '2026-06' AND objects > 0"); n != 1 {
		t.Errorf("%d analyses over 2026-06 after the fix, want 1", n)
	}
	if n := count(t, store, "SELECT COUNT(*) FROM gl_lines WHERE period = '2026-06'"); n != 46 {
		t.Errorf("%d lines of 2026-06 stored after the fix, want 46", n)
	}
}

// A month whose every date is in another order is rejected whole: its
// period is not known, so the source as a whole holds the analysis back.
func TestFileRejectedWholeHoldsBack(t *testing.T) {
	dir, cfg, store := demoWithoutStore(t)
	clean, _ := partialMonth(t, dir, 0)
	mustRun(t, "--config", cfg, "sync")
	mustRun(t, "--config", cfg, "analyze")
	var month strings.Builder
	for i, l := range strings.Split(strings.TrimSuffix(clean, "\n"), "\n") {
		if i > 0 {
			f := strings.SplitN(l, ",", 4)
			y, m, d := f[2][:4], f[2][5:7], f[2][8:10]
			f[2] = d + "/" + m + "/" + y
			l = strings.Join(f, ",")
		}
		month.WriteString(l + "\n")
	}
	if err := os.WriteFile(filepath.Join(dir, "data", "gl", "gl-2026-06.csv"), []byte(month.String()), 0o600); err != nil {
		t.Fatal(err)
	}
	out, err := run(t, "--config", cfg, "sync")
	if err == nil || !strings.Contains(err.Error(), "46 of 46 rows rejected") || !strings.Contains(err.Error(), "bad date") {
		t.Errorf("sync of a file rejected whole: %v\n%s", err, out)
	}
	out = mustRun(t, "--config", cfg, "analyze")
	if !strings.Contains(out, "all 14 cost objects held back") {
		t.Errorf("analyze did not hold back:\n%s", out)
	}
	if n := count(t, store, "SELECT COUNT(*) FROM analysis_runs WHERE window_to = '2026-06'"); n != 0 {
		t.Errorf("%d analyses over 2026-06, want 0", n)
	}
	if n := count(t, store, `SELECT COUNT(*) FROM alerts WHERE kind = 'data_quality' AND status = 'open' AND object = 'gl'
		AND message LIKE '%46 of 46 rows rejected%' AND message LIKE '%no row of the file was stored%'`); n != 1 {
		t.Errorf("%d open data_quality alerts on the file rejected whole, want 1", n)
	}
}

// No activity at all: analyze stops and says what to add, rather than
// calling every cost unexplained.
func TestAnalyzeWithoutActivityStops(t *testing.T) {
	dir, cfg, store := demoWithoutStore(t)
	if err := os.WriteFile(filepath.Join(dir, "data", "activity.csv"), []byte("period,driver,value,cost_center,unit\n"), 0o600); err != nil {
		t.Fatal(err)
	}
	mustRun(t, "--config", cfg, "sync")
	out, err := run(t, "--config", cfg, "analyze")
	if err == nil || !strings.Contains(err.Error(), "no activity data") || !strings.Contains(err.Error(), "sources.activity") {
		t.Errorf("analyze without activity: %v\n%s", err, out)
	}
	if n := count(t, store, "SELECT COUNT(*) FROM analysis_runs"); n != 0 {
		t.Errorf("%d analyses stored without activity, want 0", n)
	}
}

// A driver misspelt in one month's rows: sync warns that the new name is
// close to a known one and that it has values in only some periods.
func TestMisspeltDriverIsWarnedAbout(t *testing.T) {
	dir := t.TempDir()
	mustRun(t, "demo", "--dir", dir)
	cfg := filepath.Join(dir, "costdrift.yaml")
	path := filepath.Join(dir, "data", "activity.csv")
	raw, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	spelt := strings.Replace(string(raw), "\n2026-06,machine_hours,", "\n2026-06,machine_hour,", 1)
	if spelt == string(raw) {
		t.Fatal("the demo activity has no 2026-06 machine_hours row")
	}
	if err := os.WriteFile(path, []byte(spelt), 0o600); err != nil {
		t.Fatal(err)
	}
	out := mustRun(t, "--config", cfg, "sync")
	for _, want := range []string{
		"warning: drivers machine_hour and machine_hours differ by 1 letter(s); if they are one driver, correct the name in the file",
		"warning: driver machine_hour has values in 1 of the source's 36 periods (none in 2023-07, 2023-08, 2023-09, …)",
	} {
		if !strings.Contains(out, want) {
			t.Errorf("sync output lacks %q:\n%s", want, out)
		}
	}
	if strings.Contains(out, "driver machine_hours has values") || strings.Contains(out, "driver frames_built") {
		t.Errorf("sync warns of a driver present in every period:\n%s", out)
	}
}

// A database source is gated like a file: a query whose rows are mostly
// rejected fails the sync, raises one data_quality alert that names the
// query, and holds the analysis back; once the source's setting is fixed,
// the next sync reads it again and the alert resolves.
func TestQuerySourceIsGated(t *testing.T) {
	cfg, dir := setup(t, "")
	// 2026-01 clean; in 2026-02 four of five amounts carry a thousands
	// separator the source does not declare.
	querySource(t, dir, "books", `CREATE TABLE journal (entry TEXT, pos INTEGER, day TEXT, account TEXT, amount TEXT);
		INSERT INTO journal VALUES ('J1', 1, '2026-01-05', '6100', '420.00'), ('J2', 1, '2026-01-09', '6200', '310.00'),
			('J3', 1, '2026-02-05', '6100', '4,200.00'), ('J4', 1, '2026-02-06', '6200', '1,310.50'),
			('J5', 1, '2026-02-07', '6300', '2,012.25'), ('J6', 1, '2026-02-09', '6400', '99.00'), ('J7', 1, '2026-02-10', '6400', '5,000.00')`)
	query := "    - {name: gl, kind: sql, driver: sqlite, dsn_file: books.dsn, columns: {entry_id: entry, line: pos, date: day}, " +
		"query: \"SELECT entry, pos, day, account, amount FROM journal\"}\n"
	replaceInConfig(t, cfg, "    - name: gl\n      kind: csv\n      path: data/gl/*.csv\n", query)
	store := filepath.Join(dir, "costdrift.db")
	out, err := run(t, "--config", cfg, "sync")
	if err == nil || !strings.Contains(err.Error(), "source gl: the query: 4 of 7 rows rejected") {
		t.Fatalf("sync of a mostly rejected query: %v\n%s", err, out)
	}
	if n := count(t, store, `SELECT COUNT(*) FROM alerts WHERE kind = 'data_quality' AND status = 'open' AND object = 'gl'
		AND period = '2026-02' AND message LIKE '%the query%'`); n != 1 {
		t.Errorf("%d open data_quality alerts for gl 2026-02 naming the query, want 1", n)
	}
	if n := count(t, store, `SELECT rows_stored * 10 + rows_rejected FROM source_periods WHERE source = 'gl' AND period = '2026-02' AND source_file_id IS NULL`); n != 14 {
		t.Errorf("source_periods for the query in 2026-02: %d, want 1 stored and 4 rejected", n)
	}
	replaceInConfig(t, cfg, query, strings.Replace(query, "dsn_file: books.dsn,", "dsn_file: books.dsn, thousands_separator: \",\",", 1))
	out = mustRun(t, "--config", cfg, "sync")
	if n := count(t, store, "SELECT COUNT(*) FROM alerts WHERE kind = 'data_quality' AND status = 'resolved'"); n != 1 {
		t.Errorf("the data_quality alert is not resolved after the fix:\n%s", out)
	}
	if n := count(t, store, "SELECT SUM(amount_minor) FROM gl_lines WHERE source = 'gl'"); n != 42000+31000+420000+131050+201225+9900+500000 {
		t.Errorf("ledger total after the fix = %d", n)
	}
}

// An activity source read by a query is checked for odd drivers as a file
// is: a name one letter off a known one, seen in one period only.
func TestQueryActivityDriversAreWarnedAbout(t *testing.T) {
	cfg, dir := setup(t, header+"E1,1,2026-01-05,6100,WELD,4200.00\n")
	querySource(t, dir, "ops", `CREATE TABLE hours (month TEXT, name TEXT, qty REAL);
		INSERT INTO hours VALUES ('2026-01', 'machine_hours', 410), ('2026-02', 'machine_hours', 388), ('2026-03', 'machine_hour', 402),
			('2026-01', 'frames_built', 900), ('2026-02', 'frames_built', 950), ('2026-03', 'frames_built', 925)`)
	replaceInConfig(t, cfg, "    - name: ops\n      kind: csv\n      path: data/activity.csv\n",
		"    - {name: ops, kind: sql, driver: sqlite, dsn_file: ops.dsn, columns: {period: month, driver: name, value: qty}, "+
			"query: \"SELECT month, name, qty FROM hours\"}\n")
	out := mustRun(t, "--config", cfg, "sync")
	for _, want := range []string{
		"warning: drivers machine_hour and machine_hours differ by 1 letter(s)",
		"warning: driver machine_hour has values in 1 of the source's 3 periods",
	} {
		if !strings.Contains(out, want) {
			t.Errorf("sync output lacks %q:\n%s", want, out)
		}
	}
}

// querySource makes an SQLite database NAME.db in dir with the statements
// run in it, and the owner-only connection file NAME.dsn a sql source of
// the config names.
func querySource(t *testing.T, dir, name, statements string) {
	t.Helper()
	path := filepath.Join(dir, name+".db")
	db, err := sql.Open("sqlite3", path)
	if err != nil {
		t.Fatal(err)
	}
	defer db.Close()
	if _, err := db.Exec(statements); err != nil {
		t.Fatal(err)
	}
	writeFile(t, filepath.Join(dir, name+".dsn"), path+"\n")
}

// replaceInConfig replaces the text old of the config file by new; old
// must be there.
func replaceInConfig(t *testing.T, cfg, old, new string) {
	t.Helper()
	raw, err := os.ReadFile(cfg)
	if err != nil {
		t.Fatal(err)
	}
	if !strings.Contains(string(raw), old) {
		t.Fatalf("the config has no %q: the starter changed, update this test", old)
	}
	writeFile(t, cfg, strings.Replace(string(raw), old, new, 1))
}

// demoWithoutStore writes the invented company's books and config into a new
// folder, without a store yet, and returns the folder, config and store.
func demoWithoutStore(t *testing.T) (dir, cfg, store string) {
	t.Helper()
	dir = t.TempDir()
	mustRun(t, "demo", "--dir", dir)
	store = filepath.Join(dir, "costdrift.db")
	if err := os.Remove(store); err != nil {
		t.Fatal(err)
	}
	return dir, filepath.Join(dir, "costdrift.yaml"), store
}
