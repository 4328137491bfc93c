package pipeline

import (
	"bytes"
	"context"
	"errors"
	"log/slog"
	"os"
	"strings"
	"testing"

	"github.com/costdrift/costdrift/internal/sqlite"
)

// A page damaged while the daemon holds the store open stops the next
// cycle before it writes anything: the cycle is not even recorded.
func TestCycleRefusesADamagedStore(t *testing.T) {
	cfg, store := demoStore(t)
	e, err := Load(cfg, today)
	if err != nil {
		t.Fatal(err)
	}
	ctx := context.Background()
	// Scribble over an index page of the ledger, as a failing disk would.
	db, err := sqlite.Open(ctx, store, e.Currency)
	if err != nil {
		t.Fatal(err)
	}
	var root, pageSize int64
	db.SQL().QueryRow(`SELECT rootpage FROM sqlite_master WHERE type = 'index' AND tbl_name = 'gl_lines' ORDER BY name LIMIT 1`).Scan(&root)
	db.SQL().QueryRow(`PRAGMA page_size`).Scan(&pageSize)
	db.Close()
	f, err := os.OpenFile(store, os.O_RDWR, 0)
	if err != nil {
		t.Fatal(err)
	}
	if _, err := f.WriteAt([]byte(strings.Repeat("\xff\x00\x13", 300)), (root-1)*pageSize+12); err != nil {
		t.Fatal(err)
	}
	f.Close()
	// Opened as a reading command opens it (no check at open), then run
	// as the daemon's next cycle would.
	db, err = e.OpenToRead(ctx, true)
	if err != nil {
		t.Fatal(err)
	}
	defer db.Close()
	var cyclesBefore int
	db.SQL().QueryRow(`SELECT COUNT(*) FROM cycles`).Scan(&cyclesBefore)
	var log bytes.Buffer
	_, err = RunCycle(ctx, e, db, slog.New(slog.NewTextHandler(&log, nil)), nil)
	if !errors.Is(err, sqlite.ErrCorrupt) || !strings.Contains(log.String(), "cycle not started: the store fails its check") {
		t.Fatalf("cycle on a damaged store: %v\n%s", err, log.String())
	}
	var cyclesAfter int
	db.SQL().QueryRow(`SELECT COUNT(*) FROM cycles`).Scan(&cyclesAfter)
	if cyclesAfter != cyclesBefore {
		t.Errorf("cycles %d -> %d: the refused cycle wrote into the store", cyclesBefore, cyclesAfter)
	}
}

// A cycle stopped before its check of the store ends (the daemon told to
// stop) logs the stop, not a damaged store, and writes nothing.
func TestCycleStoppedDuringItsCheck(t *testing.T) {
	cfg, store := demoStore(t)
	e, err := Load(cfg, today)
	if err != nil {
		t.Fatal(err)
	}
	db, err := sqlite.Open(context.Background(), store, e.Currency)
	if err != nil {
		t.Fatal(err)
	}
	defer db.Close()
	ctx, cancel := context.WithCancel(context.Background())
	cancel()
	var log bytes.Buffer
	_, err = RunCycle(ctx, e, db, slog.New(slog.NewTextHandler(&log, nil)), nil)
	if !errors.Is(err, context.Canceled) || errors.Is(err, sqlite.ErrCorrupt) {
		t.Errorf("cycle stopped during its check: %v, want context.Canceled", err)
	}
	if strings.Contains(log.String(), "level=ERROR") || !strings.Contains(log.String(), "cycle not started: stopped") {
		t.Errorf("the log should say the cycle stopped, with no error:\n%s", log.String())
	}
}
