package main

import (
	"database/sql"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"syscall"
	"testing"
	"time"
)

const header = "entry_id,line,date,account,cost_center,amount\n"

func writeFile(t *testing.T, path, text string) {
	t.Helper()
	if err := os.WriteFile(path, []byte(text), 0o600); err != nil {
		t.Fatal(err)
	}
}

// A changed file replaces exactly the rows it loaded before; an unchanged
// file is skipped; a file that disappears keeps its rows until forgotten.
func TestIncrementalSync(t *testing.T) {
	cfg, dir := setup(t, "")
	gl := filepath.Join(dir, "data", "gl")
	store := filepath.Join(dir, "costdrift.db")
	writeFile(t, filepath.Join(gl, "2026-01.csv"), header+
		"A1,1,2026-01-05,6100,WELD,4200.00\nA1,2,2026-01-05,2000,,-4200.00\n"+
		"A2,1,2026-01-09,6200,WELD,310.00\nA2,2,2026-01-09,2000,,-310.00\n")
	writeFile(t, filepath.Join(gl, "2026-02.csv"), header+
		"B1,1,2026-02-05,6100,WELD,4200.00\nB1,2,2026-02-05,2000,,-4200.00\n")
	out := mustRun(t, "--config", cfg, "sync")
	if !strings.Contains(out, "files: 2 read, 0 unchanged | rows: 6 read, 6 stored, 0 replaced, 0 rejected") {
		t.Fatalf("first sync:\n%s", out)
	}

	// A late adjustment restates January: A2 changes, A1's second line is
	// dropped and a new entry appears. February is untouched.
	writeFile(t, filepath.Join(gl, "2026-01.csv"), header+
		"A1,1,2026-01-05,6100,WELD,4200.00\nA1,2,2026-01-05,2000,,-4200.00\n"+
		"A2,1,2026-01-09,6200,WELD,355.00\nA2,2,2026-01-09,2000,,-355.00\n"+
		"A3,1,2026-01-31,6200,WELD,12.50\nA3,2,2026-01-31,2000,,-12.50\n")
	out = mustRun(t, "--config", cfg, "sync")
	if !strings.Contains(out, "files: 1 read, 1 unchanged | rows: 6 read, 6 stored, 4 replaced, 0 rejected") {
		t.Fatalf("second sync:\n%s", out)
	}
	if n := count(t, store, "SELECT COUNT(*) FROM gl_lines"); n != 8 {
		t.Errorf("gl_lines = %d, want 8 (6 from January, 2 from February)", n)
	}
	if n := count(t, store, "SELECT amount_minor FROM gl_lines WHERE entry_id = 'A2' AND line = 1"); n != 35500 {
		t.Errorf("restated A2 = %d, want 35500", n)
	}

	// February vanishes: its rows stay, and the operator is told.
	os.Remove(filepath.Join(gl, "2026-02.csv"))
	out = mustRun(t, "--config", cfg, "sync")
	if !strings.Contains(out, "2026-02.csv is gone; its 2 rows are kept (costdrift sync --forget") {
		t.Fatalf("third sync:\n%s", out)
	}
	if n := count(t, store, "SELECT COUNT(*) FROM gl_lines"); n != 8 {
		t.Errorf("gl_lines = %d after the file vanished, want 8", n)
	}
	out = mustRun(t, "--config", cfg, "sync", "--forget", filepath.Join(gl, "2026-02.csv"))
	if !strings.Contains(out, "2 rows removed") {
		t.Fatalf("forget:\n%s", out)
	}
	if n := count(t, store, "SELECT COUNT(*) FROM gl_lines"); n != 6 {
		t.Errorf("gl_lines = %d after forgetting February, want 6", n)
	}
	if _, err := run(t, "--config", cfg, "sync", "--forget", "nope.csv"); err == nil || !strings.Contains(err.Error(), "no source has loaded nope.csv") {
		t.Errorf("forgetting an unknown file: %v", err)
	}
}

// A restated entry may move to another file: the newer file takes it over.
func TestEntryMovesBetweenFiles(t *testing.T) {
	cfg, dir := setup(t, "")
	gl := filepath.Join(dir, "data", "gl")
	writeFile(t, filepath.Join(gl, "a.csv"), header+"A1,1,2026-01-05,6100,WELD,4200.00\n")
	mustRun(t, "--config", cfg, "sync")
	writeFile(t, filepath.Join(gl, "b.csv"), header+"A1,1,2026-01-06,6100,WELD,4300.00\n")
	mustRun(t, "--config", cfg, "sync")
	store := filepath.Join(dir, "costdrift.db")
	if n := count(t, store, "SELECT COUNT(*) FROM gl_lines"); n != 1 {
		t.Fatalf("gl_lines = %d, want 1", n)
	}
	if n := count(t, store, "SELECT amount_minor FROM gl_lines"); n != 430000 {
		t.Errorf("amount = %d, want the newer file's 430000", n)
	}
	if n := count(t, store, "SELECT COUNT(*) FROM gl_lines g JOIN source_files f ON f.id = g.source_file_id WHERE f.path LIKE '%b.csv'"); n != 1 {
		t.Errorf("the line should now belong to b.csv")
	}
}

// Data quality: a key repeated with other values inside one load, a foreign
// currency without a functional amount, and unbalanced entries.
func TestDataQuality(t *testing.T) {
	ledger := "entry_id,line,date,account,cost_center,amount,currency,functional_amount\n" +
		"A1,1,2026-01-05,6100,WELD,4200.00,,\n" +
		"A1,1,2026-01-05,6100,WELD,4300.00,,\n" + // same key, other amount
		"A1,2,2026-01-05,2000,,-4200.00,EUR,\n" +
		"A2,1,2026-01-07,6200,WELD,100.00,USD,\n" + // no functional amount
		"A3,1,2026-01-07,6200,WELD,100.00,USD,92.17\n" + // converted by the ledger
		"A3,2,2026-01-07,2000,,-92.17,,\n" +
		"A4,1,2026-01-08,6300,ASSY,50.00,,\n" // no credit side
	cfg, dir := setup(t, ledger)
	out := mustRun(t, "--config", cfg, "sync")
	if !strings.Contains(out, "rows: 7 read, 5 stored, 0 replaced, 2 rejected") || !strings.Contains(out, "1 entry does not balance") {
		t.Fatalf("sync output:\n%s", out)
	}
	store := filepath.Join(dir, "costdrift.db")
	if n := count(t, store, "SELECT COUNT(*) FROM rejects WHERE reason LIKE 'duplicate key with different values%' AND location = 'entry A1 line 1 (key A1/1)'"); n != 1 {
		t.Errorf("duplicate key not rejected")
	}
	if n := count(t, store, "SELECT COUNT(*) FROM rejects WHERE reason = 'amount in USD with no functional_amount in EUR'"); n != 1 {
		t.Errorf("foreign amount without functional amount not rejected")
	}
	if n := count(t, store, "SELECT amount_minor FROM gl_lines WHERE entry_id = 'A3' AND line = 1"); n != 9217 {
		t.Errorf("A3 = %d, want the functional 9217", n)
	}
	if n := count(t, store, `SELECT COUNT(*) FROM sync_runs WHERE source = 'gl' AND reasons = '{"amount in USD with no functional_amount in EUR":1,"duplicate key with different values inside one load":1}'`); n != 1 {
		t.Errorf("reasons not counted in sync_runs")
	}
	// read = stored + rejected (README, Sources: every row ends in the store or in rejects).
	if n := count(t, store, "SELECT COUNT(*) FROM sync_runs WHERE source = 'gl' AND rows_read = rows_loaded + rows_rejected"); n != 1 {
		t.Errorf("rows read do not equal stored plus rejected")
	}
}

// --dry-run reads and checks everything and writes nothing: no store is
// created, and an existing one is left byte for byte as it was.
func TestDryRunWritesNothing(t *testing.T) {
	cfg, dir := setup(t, header+"A1,1,2026-01-05,6100,WELD,4200.00\nA2,1,2026-13-05,6100,WELD,1.00\n")
	store := filepath.Join(dir, "costdrift.db")
	out := mustRun(t, "--config", cfg, "sync", "--dry-run")
	if !strings.Contains(out, "rows: 2 read, 1 stored, 0 replaced, 1 rejected") || !strings.Contains(out, "dry run: nothing was written") {
		t.Fatalf("dry run output:\n%s", out)
	}
	if _, err := os.Stat(store); err == nil {
		t.Fatal("a dry run created the store")
	}
	mustRun(t, "--config", cfg, "sync")
	before, _ := os.ReadFile(store)
	writeFile(t, filepath.Join(dir, "data", "gl", "gl.csv"), header+"A1,1,2026-01-05,6100,WELD,4900.00\n")
	out = mustRun(t, "--config", cfg, "sync", "--dry-run")
	if !strings.Contains(out, "rows: 1 read, 1 stored, 1 replaced, 0 rejected") {
		t.Fatalf("second dry run:\n%s", out)
	}
	if n := count(t, store, "SELECT amount_minor FROM gl_lines WHERE entry_id = 'A1'"); n != 420000 {
		t.Errorf("dry run changed the stored amount to %d", n)
	}
	if n := count(t, store, "SELECT COUNT(*) FROM sync_runs"); n != 3 {
		t.Errorf("sync_runs = %d, want the 3 of the real sync only", n)
	}
	_ = before
}

// The store remembers its calendar; syncing with another one is refused.
func TestCalendarChangeRefused(t *testing.T) {
	cfg, _ := setup(t, header+"A1,1,2026-01-05,6100,WELD,4200.00\n")
	mustRun(t, "--config", cfg, "sync")
	t.Setenv("COSTDRIFT_CALENDAR_PERIOD", "week")
	_, err := run(t, "--config", cfg, "sync")
	if err == nil || !strings.Contains(err.Error(), "holds month periods but the config says calendar.period week") {
		t.Fatalf("got %v", err)
	}
}

// A file that took a key over from another and is then forgotten gives the
// key back to the file that still holds it: the older statement is stored
// again, in the same transaction, and the older file stays "unchanged".
func TestForgetGivesKeyBack(t *testing.T) {
	cfg, dir := setup(t, "")
	gl := filepath.Join(dir, "data", "gl")
	store := filepath.Join(dir, "costdrift.db")
	writeFile(t, filepath.Join(gl, "a.csv"), header+"E1,1,2026-01-05,6100,WELD,4200.00\nE2,1,2026-01-06,6100,WELD,100.00\n")
	mustRun(t, "--config", cfg, "sync")
	writeFile(t, filepath.Join(gl, "b.csv"), header+"E1,1,2026-01-05,6100,WELD,9999.00\n")
	out := mustRun(t, "--config", cfg, "sync")
	// The restatement overwrote a stored row: it is stored and it replaced one.
	if !strings.Contains(out, "files: 1 read, 1 unchanged | rows: 1 read, 1 stored, 1 replaced, 0 rejected") {
		t.Fatalf("restating sync:\n%s", out)
	}
	if n := count(t, store, "SELECT amount_minor FROM gl_lines WHERE entry_id = 'E1'"); n != 999900 {
		t.Fatalf("E1 = %d after the restatement, want 999900", n)
	}
	if n := count(t, store, "SELECT rows FROM source_files WHERE path LIKE '%a.csv'"); n != 1 {
		t.Errorf("a.csv holds %d rows in source_files, want 1 (E1 went to b.csv)", n)
	}

	os.Remove(filepath.Join(gl, "b.csv"))
	out = mustRun(t, "--config", cfg, "sync", "--forget", filepath.Join(gl, "b.csv"))
	if !strings.Contains(out, "1 rows removed") || !strings.Contains(out, "1 given back to the files that still hold them") {
		t.Fatalf("forget:\n%s", out)
	}
	if n := count(t, store, "SELECT amount_minor FROM gl_lines WHERE entry_id = 'E1'"); n != 420000 {
		t.Errorf("E1 = %d after forgetting b.csv, want a.csv's 420000", n)
	}
	if n := count(t, store, "SELECT COUNT(*) FROM gl_lines g JOIN source_files f ON f.id = g.source_file_id WHERE f.path LIKE '%a.csv'"); n != 2 {
		t.Errorf("a.csv owns %d lines, want 2", n)
	}
	if n := count(t, store, "SELECT rows FROM source_files WHERE path LIKE '%a.csv'"); n != 2 {
		t.Errorf("a.csv holds %d rows in source_files, want 2", n)
	}
	out = mustRun(t, "--config", cfg, "sync")
	if !strings.Contains(out, "files: 0 read, 1 unchanged") {
		t.Fatalf("sync after forget:\n%s", out)
	}
	if n := count(t, store, "SELECT SUM(amount_minor) FROM gl_lines"); n != 430000 {
		t.Errorf("ledger total = %d, want 430000", n)
	}
}

// A file restated again that no longer carries a key it took over gives
// the key back as well; one that still carries it keeps it.
func TestChangedFileGivesKeyBack(t *testing.T) {
	cfg, dir := setup(t, "")
	gl := filepath.Join(dir, "data", "gl")
	store := filepath.Join(dir, "costdrift.db")
	writeFile(t, filepath.Join(gl, "a.csv"), header+"E1,1,2026-01-05,6100,WELD,4200.00\n")
	mustRun(t, "--config", cfg, "sync")
	writeFile(t, filepath.Join(gl, "b.csv"), header+"E1,1,2026-01-05,6100,WELD,9999.00\nE9,1,2026-01-07,6100,WELD,1.00\n")
	mustRun(t, "--config", cfg, "sync")
	writeFile(t, filepath.Join(gl, "b.csv"), header+"E1,1,2026-01-05,6100,WELD,8888.00\nE9,1,2026-01-07,6100,WELD,1.00\n")
	mustRun(t, "--config", cfg, "sync")
	if n := count(t, store, "SELECT amount_minor FROM gl_lines WHERE entry_id = 'E1'"); n != 888800 {
		t.Errorf("E1 = %d while b.csv still restates it, want 888800", n)
	}
	writeFile(t, filepath.Join(gl, "b.csv"), header+"E9,1,2026-01-07,6100,WELD,2.00\n")
	mustRun(t, "--config", cfg, "sync")
	if n := count(t, store, "SELECT amount_minor FROM gl_lines WHERE entry_id = 'E1'"); n != 420000 {
		t.Errorf("E1 = %d after b.csv dropped it, want a.csv's 420000", n)
	}
	if n := count(t, store, "SELECT COUNT(*) FROM gl_lines"); n != 2 {
		t.Errorf("gl_lines = %d, want 2", n)
	}
}

// A renamed file: the new name takes every row over, and the note on the
// old name says nothing of it remains instead of claiming its rows are kept.
func TestRenamedFileNote(t *testing.T) {
	cfg, dir := setup(t, "")
	gl := filepath.Join(dir, "data", "gl")
	text := header + "E1,1,2026-01-05,6100,WELD,4200.00\nE2,1,2026-01-06,6100,WELD,100.00\n"
	writeFile(t, filepath.Join(gl, "a.csv"), text)
	mustRun(t, "--config", cfg, "sync")
	os.Remove(filepath.Join(gl, "a.csv"))
	writeFile(t, filepath.Join(gl, "renamed.csv"), text)
	out := mustRun(t, "--config", cfg, "sync")
	if strings.Contains(out, "its 2 rows are kept") || !strings.Contains(out, "a.csv is gone; other files hold all its rows now") {
		t.Fatalf("sync after a rename:\n%s", out)
	}
	// Forgetting the old name removes nothing the new one holds.
	out = mustRun(t, "--config", cfg, "sync", "--forget", filepath.Join(gl, "a.csv"))
	if !strings.Contains(out, "0 rows removed") {
		t.Fatalf("forget:\n%s", out)
	}
	if n := count(t, filepath.Join(dir, "costdrift.db"), "SELECT COUNT(*) FROM gl_lines"); n != 2 {
		t.Errorf("gl_lines = %d after forgetting the old name, want 2", n)
	}
}

// SIGTERM during the ledger's load: the message says which sources synced
// and which was interrupted, and counts nothing else as a failed source.
func TestSyncStoppedBySignalSaysWhatSynced(t *testing.T) {
	cfg, dir := setup(t, "")
	store := filepath.Join(dir, "costdrift.db")
	for f := 0; f < 6; f++ {
		text, _ := killPart(f, 0, 40000)
		writeFile(t, filepath.Join(dir, "data", "gl", fmt.Sprintf("part-%d.csv", f)), text)
	}
	logs := &logBuffer{}
	cmd := command("--config", cfg, "sync")
	cmd.Stdout, cmd.Stderr = logs, logs
	if err := cmd.Start(); err != nil {
		t.Fatal(err)
	}
	// The accounts and activity sources come first and take milliseconds;
	// the 240,000 ledger rows take most of a second.
	waitFor(t, 10*time.Second, "the activity source to finish and the ledger's to begin", func() bool {
		return tryCount(store, "SELECT COUNT(*) FROM sync_runs WHERE source = 'ops' AND status = 'ok'") == 1 &&
			tryCount(store, "SELECT COUNT(*) FROM sync_runs WHERE source = 'gl' AND status = 'running'") == 1
	}, logs)
	if err := cmd.Process.Signal(syscall.SIGTERM); err != nil {
		t.Fatal(err)
	}
	err := cmd.Wait()
	if err == nil {
		t.Fatalf("sync exited 0 after SIGTERM\n%s", logs)
	}
	if n := count(t, store, "SELECT COUNT(*) FROM sync_runs WHERE source = 'gl' AND status = 'ok'"); n != 0 {
		t.Fatalf("the ledger finished before SIGTERM arrived: the test proves nothing; stop earlier\n%s", logs)
	}
	out := logs.String()
	if strings.Contains(out, "sources failed") || !strings.Contains(out, "sync interrupted: 2 of 3 sources synced; gl stopped part way") {
		t.Errorf("output after SIGTERM:\n%s", out)
	}
}

// tryCount is count for a store that may not exist or be migrated yet: -1
// until it answers.
func tryCount(store, query string) int {
	if _, err := os.Stat(store); err != nil {
		return -1
	}
	db, err := sql.Open("sqlite3", "file:"+store+"?mode=ro")
	if err != nil {
		return -1
	}
	defer db.Close()
	var n int
	if err := db.QueryRow(query).Scan(&n); err != nil {
		return -1
	}
	return n
}

// Another program's SQLite database named as the store is refused, by
// every command, and left as it was.
func TestForeignDatabaseRefusedAsStore(t *testing.T) {
	cfg, dir := setup(t, header+"E1,1,2026-01-05,6100,WELD,4200.00\n")
	store := filepath.Join(dir, "costdrift.db")
	other, err := sql.Open("sqlite3", "file:"+store)
	if err != nil {
		t.Fatal(err)
	}
	if _, err := other.Exec(`CREATE TABLE invoices (id INTEGER PRIMARY KEY, total INTEGER)`); err != nil {
		t.Fatal(err)
	}
	other.Close()
	before, _ := os.ReadFile(store)
	for _, args := range [][]string{{"sync"}, {"analyze"}, {"report"}} {
		_, err := run(t, append([]string{"--config", cfg}, args...)...)
		if err == nil || !strings.Contains(err.Error(), "is not a costdrift store") || !strings.Contains(err.Error(), "invoices") {
			t.Errorf("costdrift %s on a foreign database: %v", args[0], err)
		}
	}
	if after, _ := os.ReadFile(store); string(after) != string(before) {
		t.Errorf("the foreign database changed")
	}
}

// report, explain and alerts list read a store this user may not write.
// Root writes any file, so as root the commands run as the user nobody.
func TestReadOnlyStoreStillReports(t *testing.T) {
	cfg, dir := setup(t, header+"E1,1,2026-01-05,6100,WELD,4200.00\n")
	mustRun(t, "--config", cfg, "sync")
	mustRun(t, "--config", cfg, "analyze")
	store := filepath.Join(dir, "costdrift.db")
	for _, p := range []string{store, cfg, filepath.Join(dir, "data"), filepath.Join(dir, "data", "gl")} {
		os.Chmod(p, 0o555)
	}
	os.Chmod(store, 0o444)
	os.Chmod(cfg, 0o444)
	os.Chmod(dir, 0o555)
	t.Cleanup(func() { os.Chmod(dir, 0o755) })
	for _, args := range [][]string{{"report", "--format", "json"}, {"alerts", "list"}, {"status"}} {
		cmd := command(append([]string{"--config", cfg}, args...)...)
		if os.Geteuid() == 0 {
			bin := copyForNobody(t)
			cmd.Path, cmd.Args[0] = bin, bin
			cmd.SysProcAttr = &syscall.SysProcAttr{Credential: &syscall.Credential{Uid: 65534, Gid: 65534}}
		}
		out, err := cmd.CombinedOutput()
		if err != nil {
			t.Errorf("costdrift %s on a read-only store: %v\n%s", args[0], err, out)
		}
		if args[0] == "report" && !strings.Contains(string(out), `"object": "6100/WELD"`) {
			t.Errorf("report on a read-only store lacks 6100/WELD:\n%s", out)
		}
	}
	_, err := run(t, "--config", cfg, "sync")
	if os.Geteuid() != 0 && (err == nil || !strings.Contains(err.Error(), "cannot be written")) {
		t.Errorf("sync into a read-only store: %v", err)
	}
}

// copyForNobody copies this test binary where the user nobody can run it,
// and opens the way to the test's folders.
func copyForNobody(t *testing.T) string {
	t.Helper()
	dir, err := os.MkdirTemp("", "costdrift-nobody-")
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { os.RemoveAll(dir) })
	self, err := os.ReadFile(os.Args[0])
	if err != nil {
		t.Fatal(err)
	}
	bin := filepath.Join(dir, "costdrift")
	if err := os.WriteFile(bin, self, 0o755); err != nil {
		t.Fatal(err)
	}
	os.Chmod(dir, 0o755)
	// t.TempDir's parents are owner-only; nobody must pass through them.
	for d := filepath.Dir(t.TempDir()); d != os.TempDir() && d != "/"; d = filepath.Dir(d) {
		os.Chmod(d, 0o755)
	}
	return bin
}
