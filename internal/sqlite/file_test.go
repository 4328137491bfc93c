package sqlite

import (
	"context"
	"errors"
	"fmt"
	"testing"

	"github.com/costdrift/costdrift/internal/costdrift"
)

func loadFile(t *testing.T, db *DB, path string, lines []costdrift.LedgerLine) costdrift.SyncRun {
	t.Helper()
	ctx := context.Background()
	run := costdrift.SyncRun{Source: "gl", Role: costdrift.RoleLedger, Kind: "csv"}
	if err := db.BeginSync(ctx, &run); err != nil {
		t.Fatal(err)
	}
	err := db.LoadFile(ctx, &run, costdrift.SourceFile{Source: "gl", Path: path, Size: int64(len(lines)), SHA256: fmt.Sprint(len(lines))},
		func(w costdrift.SourceWriter) error {
			for _, l := range lines {
				if err := w.LedgerLine(l); err != nil {
					return err
				}
			}
			return nil
		})
	if err != nil {
		t.Fatal(err)
	}
	if err := db.FinishSync(ctx, &run, nil); err != nil {
		t.Fatal(err)
	}
	return run
}

func line(entry string, n int, amount int64) costdrift.LedgerLine {
	return costdrift.LedgerLine{Source: "gl", EntryID: entry, Line: n, PostedOn: "2026-01-05", Period: "2026-01", Account: "6100", AmountMinor: amount}
}

// The batched path of a file load must decide exactly as the row-by-row
// path: first row of a key stored, a repeat inside the file rejected, a key
// another file loaded taken over.
func TestLoadFileBatches(t *testing.T) {
	db, _ := mustOpen(t)
	loadFile(t, db, "/data/old.csv", []costdrift.LedgerLine{line("MOVED", 1, 111)})

	var lines []costdrift.LedgerLine
	for i := 0; i < 250; i++ {
		lines = append(lines, line(fmt.Sprintf("E%03d", i), 1, int64(i)))
	}
	lines[7] = line("E005", 1, 5)      // exact repeat inside the first batch
	lines[150] = line("E010", 1, 999)  // other values, a later batch
	lines[199] = line("MOVED", 1, 222) // loaded before by old.csv
	run := loadFile(t, db, "/data/new.csv", lines)

	if run.RowsLoaded != 248 || run.RowsRejected != 2 || run.RowsRead != 0 {
		t.Errorf("loaded %d, rejected %d; want 248 and 2", run.RowsLoaded, run.RowsRejected)
	}
	var n, amount int64
	db.SQL().QueryRow(`SELECT COUNT(*) FROM gl_lines`).Scan(&n)
	if n != 248 { // MOVED is among the 248: old.csv no longer holds a line
		t.Errorf("gl_lines = %d, want 248", n)
	}
	db.SQL().QueryRow(`SELECT amount_minor FROM gl_lines WHERE entry_id = 'E010'`).Scan(&amount)
	if amount != 10 {
		t.Errorf("E010 = %d, want the first row's 10", amount)
	}
	db.SQL().QueryRow(`SELECT amount_minor FROM gl_lines WHERE entry_id = 'MOVED'`).Scan(&amount)
	if amount != 222 {
		t.Errorf("MOVED = %d, want the new file's 222", amount)
	}
	var reasons []string
	rows, _ := db.SQL().Query(`SELECT location || ': ' || reason FROM rejects ORDER BY id`)
	for rows.Next() {
		var r string
		rows.Scan(&r)
		reasons = append(reasons, r)
	}
	rows.Close()
	want := []string{
		"entry E005 line 1 (key E005/1): duplicate key repeating an earlier row exactly; it was counted once",
		"entry E010 line 1 (key E010/1): duplicate key with different values inside one load; the first row was kept",
	}
	if fmt.Sprint(reasons) != fmt.Sprint(want) {
		t.Errorf("rejects\n got %q\nwant %q", reasons, want)
	}
}

// A source name with a quote in it is stored as written, not as SQL.
func TestLoadFileQuotedSourceName(t *testing.T) {
	db, _ := mustOpen(t)
	ctx := context.Background()
	run := costdrift.SyncRun{Source: "o'brien ledger", Role: costdrift.RoleLedger, Kind: "csv"}
	if err := db.BeginSync(ctx, &run); err != nil {
		t.Fatal(err)
	}
	var lines []costdrift.LedgerLine
	for i := 0; i < 150; i++ {
		lines = append(lines, line(fmt.Sprintf("Q%03d", i), 1, 100))
	}
	err := db.LoadFile(ctx, &run, costdrift.SourceFile{Source: run.Source, Path: "/q.csv", Size: 1, SHA256: "x"}, func(w costdrift.SourceWriter) error {
		for _, l := range lines {
			if err := w.LedgerLine(l); err != nil {
				return err
			}
		}
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	var n int
	db.SQL().QueryRow(`SELECT COUNT(*) FROM gl_lines WHERE source = ?`, "o'brien ledger").Scan(&n)
	if n != 150 {
		t.Errorf("%d lines stored under the quoted source name, want 150", n)
	}
}

// Restatements stack: each file's version of a key waits behind the file
// that took it over, and comes back, in order, as the newer files are
// forgotten, whichever is forgotten first.
func TestRestatementsStack(t *testing.T) {
	ctx := context.Background()
	amount := func(db *DB) int64 {
		t.Helper()
		var v int64
		if err := db.SQL().QueryRow(`SELECT amount_minor FROM gl_lines WHERE entry_id = 'E1'`).Scan(&v); err != nil {
			t.Fatal(err)
		}
		return v
	}
	rows := func(db *DB, path string) int {
		t.Helper()
		return count(t, db, "gl_lines g JOIN source_files f ON f.id = g.source_file_id WHERE f.path = ?", path)
	}
	for _, order := range [][]string{{"/d/t2.csv", "/d/t1.csv"}, {"/d/t1.csv", "/d/t2.csv"}} {
		db, _ := mustOpen(t)
		loadFile(t, db, "/d/f.csv", []costdrift.LedgerLine{line("E1", 1, 100), line("E2", 1, 7)})
		loadFile(t, db, "/d/t1.csv", []costdrift.LedgerLine{line("E1", 1, 200)})
		loadFile(t, db, "/d/t2.csv", []costdrift.LedgerLine{line("E1", 1, 300)})
		if got := amount(db); got != 300 {
			t.Fatalf("E1 = %d with three statements, want the newest 300", got)
		}
		if n := count(t, db, "displaced_gl_lines"); n != 2 {
			t.Errorf("displaced versions = %d, want 2 (f's and t1's)", n)
		}
		if _, _, err := db.ForgetFile(ctx, "gl", order[0]); err != nil {
			t.Fatal(err)
		}
		want := map[string]int64{"/d/t2.csv": 200, "/d/t1.csv": 300}[order[0]]
		if got := amount(db); got != want {
			t.Errorf("forgetting %s first: E1 = %d, want %d", order[0], got, want)
		}
		removed, back, err := db.ForgetFile(ctx, "gl", order[1])
		if err != nil {
			t.Fatal(err)
		}
		if removed != 1 || back != 1 {
			t.Errorf("forgetting %s second: %d removed, %d given back; want 1 and 1", order[1], removed, back)
		}
		if got := amount(db); got != 100 {
			t.Errorf("both restatements forgotten: E1 = %d, want f's 100", got)
		}
		if n := rows(db, "/d/f.csv"); n != 2 {
			t.Errorf("f.csv owns %d lines, want 2", n)
		}
		if n := count(t, db, "source_files WHERE path = '/d/f.csv' AND rows = 2"); n != 1 {
			t.Errorf("f.csv's row count is not 2")
		}
		if n := count(t, db, "displaced_gl_lines"); n != 0 {
			t.Errorf("displaced versions = %d after both forgets, want 0", n)
		}
		if _, _, err := db.ForgetFile(ctx, "gl", "/d/none.csv"); !errors.Is(err, ErrUnknownFile) {
			t.Errorf("forgetting an unknown file: %v, want ErrUnknownFile", err)
		}
	}
}

// Forgetting the older file drops its waiting version: the newer one stays
// and nothing comes back later.
func TestForgetOlderDropsItsVersion(t *testing.T) {
	db, _ := mustOpen(t)
	loadFile(t, db, "/d/a.csv", []costdrift.LedgerLine{line("E1", 1, 100)})
	loadFile(t, db, "/d/b.csv", []costdrift.LedgerLine{line("E1", 1, 200)})
	removed, back, err := db.ForgetFile(context.Background(), "gl", "/d/a.csv")
	if err != nil || removed != 0 || back != 0 {
		t.Fatalf("forget a.csv: %d removed, %d back, %v; want 0, 0, nil", removed, back, err)
	}
	if n := count(t, db, "displaced_gl_lines"); n != 0 {
		t.Errorf("a.csv's displaced version survived its forget")
	}
	if _, _, err := db.ForgetFile(context.Background(), "gl", "/d/b.csv"); err != nil {
		t.Fatal(err)
	}
	if n := count(t, db, "gl_lines"); n != 0 {
		t.Errorf("gl_lines = %d, want 0: no file holds E1 any more", n)
	}
}
