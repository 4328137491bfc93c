package sqlite

import (
	"context"
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
