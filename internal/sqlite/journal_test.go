package sqlite

import (
	"bufio"
	"context"
	"database/sql"
	"fmt"
	"os"
	"path/filepath"
	"runtime"
	"strconv"
	"strings"
	"testing"

	"github.com/costdrift/costdrift/internal/costdrift"
)

// writtenBytes is what this process has handed to write calls so far
// (/proc/self/io, wchar): files, pipes and sockets alike.
func writtenBytes(t *testing.T) int64 {
	t.Helper()
	f, err := os.Open("/proc/self/io")
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	s := bufio.NewScanner(f)
	for s.Scan() {
		if v, ok := strings.CutPrefix(s.Text(), "wchar: "); ok {
			n, err := strconv.ParseInt(v, 10, 64)
			if err != nil {
				t.Fatal(err)
			}
			return n
		}
	}
	t.Fatal("no wchar in /proc/self/io")
	return 0
}

// An analysis replaces each object's fits with its new ones and refreshes
// its behaviour and input hash. The fits go 25 to an INSERT, and the
// updates move a key to the new run; a statement that may fail part way
// after changing rows makes SQLite journal every page it changes, to undo
// it alone, and beyond 64 KiB (four pages of the store's 16 KiB) that
// journal goes to a temporary file that serves every later statement of
// the transaction. On a store of 10,000 objects a nightly analysis wrote
// some 700 MB to it. With the keys to the run checked at commit and the
// statements failing without undoing their earlier rows (schema 22), none
// needs that journal: what the analysis writes stays within a few times
// the size of the store (its write-ahead log, then the checkpoint).
func TestReplacingFitsKeepsNoStatementJournal(t *testing.T) {
	if runtime.GOOS != "linux" {
		t.Skip("reads the bytes written from /proc/self/io, which only Linux has")
	}
	const objects, perObject, batch = 2000, 8, 250
	ctx := context.Background()
	db, _ := mustOpen(t)
	analyse := func(intercept float64) {
		run := &costdrift.AnalysisRun{Grain: costdrift.GrainAccountCostCenter, WindowFrom: "2023-01", WindowTo: "2025-12", Settings: "{}"}
		w, err := db.BeginAnalysis(ctx, run)
		if err != nil {
			t.Fatal(err)
		}
		for at := 0; at < objects; at += batch {
			var fits []costdrift.Fit
			var behaviours []costdrift.Behaviour
			inputs := map[string]string{}
			for i := at; i < at+batch; i++ {
				o := costdrift.CostObject{Account: fmt.Sprint(6000 + i/40), CostCenter: fmt.Sprintf("CC%02d", i%40)}
				inputs[o.String()] = fmt.Sprintf("inputs %v", intercept)
				behaviours = append(behaviours, costdrift.Behaviour{Object: o, Class: costdrift.Fixed, Reason: "constant over the window", N: 36,
					FixedPerPeriod: intercept, MeanCost: intercept, Since: "2023-01", Until: "2025-12"})
				for k := range perObject {
					fits = append(fits, costdrift.Fit{Object: o, Driver: fmt.Sprintf("driver_%d", k), Lag: k % 2, Model: costdrift.ModelLinear,
						N: 36, Intercept: intercept + float64(k), InterceptSE: 80.25, InterceptP: 0.001, Slope: 3.75, SlopeSE: 0.5, SlopeT: 7.5,
						SlopeP: 1e-6, SlopeAdjustedP: 2e-5, R2: 0.8, ResidualSE: 95.5, PRESS: 41000, AICc: 310.2, RangeMin: 400, RangeMax: 900,
						Significant: true, Chosen: k == 0, PlausibleRanked: k + 1})
				}
			}
			if err := w.Save(ctx, fits, behaviours, inputs); err != nil {
				t.Fatal(err)
			}
		}
		if err := w.Commit(ctx); err != nil {
			t.Fatal(err)
		}
	}
	analyse(1200.5)
	before := writtenBytes(t)
	analyse(1300.5)
	written := writtenBytes(t) - before
	var pages, pageSize int64
	if err := db.db.QueryRowContext(ctx, `SELECT page_count, page_size FROM pragma_page_count, pragma_page_size`).Scan(&pages, &pageSize); err != nil {
		t.Fatal(err)
	}
	t.Logf("the second analysis wrote %d KiB; the store is %d KiB", written>>10, pages*pageSize>>10)
	if written > 4*pages*pageSize {
		t.Errorf("the second analysis wrote %d KiB for a store of %d KiB: more than the write-ahead log and a checkpoint need", written>>10, pages*pageSize>>10)
	}
}

// A store from before schema 22 keeps its analysis as it was, and after the
// upgrade the keys from fits, input hashes and behaviours to their run are
// as binding as before, checked at commit rather than as each row is
// written.
func TestAnalysisKeysCheckedAtCommitAfterUpgrade(t *testing.T) {
	ctx := context.Background()
	db, ms := storeBefore(t, 22)
	mustExec(t, db, `INSERT INTO analysis_runs (id, started_at, finished_at, grain, objects, settings)
		VALUES (1, '2025-06-01T06:00:00Z', '2025-06-01T06:01:00Z', 'account_cost_center', 1, '{}')`)
	mustExec(t, db, `INSERT INTO fits (analysis_run_id, object, account, cost_center, driver, lag, model, n, significant, implausible, chosen)
		VALUES (1, '6100/ASSY', '6100', 'ASSY', '', 0, 'constant', 36, 0, 0, 1)`)
	mustExec(t, db, `INSERT INTO object_inputs (object, input_hash, analysis_run_id) VALUES ('6100/ASSY', 'h1', 1)`)
	mustExec(t, db, `INSERT INTO behaviour_history (object, account, cost_center, class, n, reason, first_run_id, last_run_id, valid_from_run_at)
		VALUES ('6100/ASSY', '6100', 'ASSY', 'fixed', 36, 'constant over the window', 1, 1, '2025-06-01T06:01:00Z')`)
	if err := db.applyMigrations(ctx, ms); err != nil {
		t.Fatal(err)
	}
	for _, table := range []string{"fits", "object_inputs", "behaviour_history"} {
		if got := count(t, db, table); got != 1 {
			t.Errorf("%d rows in %s after the upgrade, want 1", got, table)
		}
		var keys, deferred int
		db.SQL().QueryRow(`SELECT COUNT(*), COUNT(*) FILTER (WHERE s.sql LIKE '%DEFERRABLE INITIALLY DEFERRED%')
			FROM pragma_foreign_key_list(?1) k, sqlite_schema s WHERE k."table" = 'analysis_runs' AND s.name = ?1`, table).Scan(&keys, &deferred)
		if keys == 0 || deferred != keys {
			t.Errorf("%s: %d keys to analysis_runs, %d of them checked at commit; want all", table, keys, deferred)
		}
	}
	if got := dump(t, db, `PRAGMA integrity_check`); got != "\"ok\"\n" {
		t.Errorf("integrity_check after the upgrade: %s", got)
	}

	for _, insert := range []string{
		`INSERT OR FAIL INTO fits (analysis_run_id, object, account, cost_center, driver, lag, model, n, significant, implausible, chosen)
			VALUES (99, '6100/PAINT', '6100', 'PAINT', '', 0, 'constant', 36, 0, 0, 1)`,
		`UPDATE OR FAIL object_inputs SET analysis_run_id = 99 WHERE object = '6100/ASSY'`,
		`UPDATE OR FAIL behaviour_history SET last_run_id = 99 WHERE object = '6100/ASSY'`,
	} {
		tx, err := db.SQL().BeginTx(ctx, nil)
		if err != nil {
			t.Fatal(err)
		}
		if _, err := tx.Exec(insert); err != nil {
			t.Fatalf("a row naming no run is refused as it is written, want at commit: %v", err)
		}
		if err := tx.Commit(); err == nil || !strings.Contains(err.Error(), "FOREIGN KEY") {
			t.Errorf("commit of %q: %v, want a foreign key failure", insert, err)
		}
	}
	if got := dump(t, db, `SELECT analysis_run_id FROM fits UNION ALL SELECT analysis_run_id FROM object_inputs UNION ALL SELECT last_run_id FROM behaviour_history`); got != "int64:1\nint64:1\nint64:1\n" {
		t.Errorf("runs named after the refused commits:\n%s, want 1 three times", got)
	}
}

// An analysis's commit leaves copying its pages from the write-ahead log to
// a checkpoint in the background: the commit returns before any of them
// reaches the store's file, readers see the analysis at once, and Close
// waits for the checkpoint, which flushes the store's file to disk itself
// (flushStore). The connection the analysis wrote on keeps
// checkpointing by itself afterwards, as the others do.
func TestAnalysisCheckpointsAfterItsCommit(t *testing.T) {
	ctx := context.Background()
	path := filepath.Join(t.TempDir(), "costdrift.db")
	db, err := Open(ctx, path, eur)
	if err != nil {
		t.Fatal(err)
	}
	// The hook is the package's: no other test may commit an analysis
	// while this one runs (none of this package's tests runs in parallel).
	held, released := make(chan struct{}), make(chan struct{})
	beforeCheckpoint = func() { close(held); <-released }
	defer func() { beforeCheckpoint = func() {} }()

	run := &costdrift.AnalysisRun{Grain: costdrift.GrainAccountCostCenter, WindowFrom: "2023-01", WindowTo: "2025-12", Settings: "{}"}
	w, err := db.BeginAnalysis(ctx, run)
	if err != nil {
		t.Fatal(err)
	}
	// Without the change, a commit of a single page would checkpoint.
	if _, err := w.tx.ExecContext(ctx, `PRAGMA wal_autocheckpoint = 1`); err != nil {
		t.Fatal(err)
	}
	var fits []costdrift.Fit
	var behaviours []costdrift.Behaviour
	inputs := map[string]string{}
	for i := range 500 {
		o := costdrift.CostObject{Account: fmt.Sprint(6000 + i/40), CostCenter: fmt.Sprintf("CC%02d", i%40)}
		inputs[o.String()] = "inputs"
		behaviours = append(behaviours, costdrift.Behaviour{Object: o, Class: costdrift.Fixed, Reason: "constant over the window", N: 36,
			FixedPerPeriod: 1200.5, MeanCost: 1200.5, Since: "2023-01", Until: "2025-12"})
		fits = append(fits, costdrift.Fit{Object: o, Model: costdrift.ModelConstant, N: 36, Intercept: 1200.5, Chosen: true})
	}
	if err := w.Save(ctx, fits, behaviours, inputs); err != nil {
		t.Fatal(err)
	}
	size := func() int64 {
		fi, err := os.Stat(path)
		if err != nil {
			t.Fatal(err)
		}
		return fi.Size()
	}
	before := size()
	// The checkpoint flushes the store's file itself, once it has copied
	// the analysis's pages into it.
	var flushed []*os.File
	var flushedAt []int64
	syncFile = func(f *os.File) error {
		flushed, flushedAt = append(flushed, f), append(flushedAt, size())
		return f.Sync()
	}
	defer func() { syncFile = (*os.File).Sync }()
	if err := w.Commit(ctx); err != nil {
		t.Fatal(err)
	}
	<-held
	if got := size(); got != before {
		t.Errorf("the store's file went from %d to %d bytes at the commit: the commit checkpointed", before, got)
	}
	var n int
	if err := db.db.QueryRowContext(ctx, `SELECT COUNT(*) FROM fits WHERE analysis_run_id = ?`, run.ID).Scan(&n); err != nil || n != 500 {
		t.Errorf("fits seen after the commit, before the checkpoint: %d, %v; want 500", n, err)
	}
	close(released)
	db.background.Wait()
	if got := size(); got <= before {
		t.Errorf("the store's file is %d bytes after the checkpoint, %d before: the analysis's pages did not reach it", got, before)
	}
	if len(flushed) != 1 || flushedAt[0] <= before || flushed[0].Name() != path {
		t.Fatalf("flushes after the checkpoint: %d, of %v at sizes %v; want one, of %s, after its pages reached it (more than %d bytes)",
			len(flushed), flushed, flushedAt, path, before)
	}
	// Every connection of the pool, the analysis's among them, checkpoints
	// by itself again.
	var conns []*sql.Conn
	for range maxConns {
		c, err := db.db.Conn(ctx)
		if err != nil {
			t.Fatal(err)
		}
		conns = append(conns, c)
	}
	for i, c := range conns {
		var pages int
		if err := c.QueryRowContext(ctx, `PRAGMA wal_autocheckpoint`).Scan(&pages); err != nil || pages != autoCheckpointPages {
			t.Errorf("connection %d: wal_autocheckpoint %d, %v; want %d", i, pages, err, autoCheckpointPages)
		}
		c.Close()
	}
	// The flush's own descriptor of the file stays open while SQLite's
	// are: closing it would drop SQLite's locks on the file.
	if _, err := flushed[0].Stat(); err != nil {
		t.Errorf("the flush's descriptor is closed before the store: %v", err)
	}
	if err := db.Close(); err != nil {
		t.Fatal(err)
	}
	if _, err := flushed[0].Stat(); err == nil {
		t.Error("the flush's descriptor of the store's file is still open after Close")
	}
	if _, err := os.Stat(path + "-wal"); !os.IsNotExist(err) {
		t.Errorf("the write-ahead log is still there after Close: %v", err)
	}
}
