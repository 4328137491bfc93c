package sqlite

import (
	"context"
	"errors"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"
)

// A store costdrift closed cleanly after a clean quick check is not checked
// again by the next writer within CheckEvery; it is when the file changed
// since (another program wrote it), when a writer did not close it, or when
// the check is older than CheckEvery; and a damaged store is refused then.
func TestQuickCheckOnceForAnUnchangedStore(t *testing.T) {
	ctx := context.Background()
	path := filepath.Join(t.TempDir(), "costdrift.db")
	open := func() *DB {
		t.Helper()
		db, err := Open(ctx, path, eur)
		if err != nil {
			t.Fatal(err)
		}
		return db
	}
	db := open()
	if !db.checkedHere {
		t.Fatal("a new store was not checked")
	}
	mustExec(t, db, `INSERT INTO sync_runs (id, source, role, kind, started_at, status) VALUES (1, 'gl', 'ledger', 'csv', '2026-01-05', 'ok')`)
	for i := range 2000 {
		mustExec(t, db, `INSERT INTO gl_lines (source, entry_id, line, posted_on, period, account, amount_minor, sync_run_id)
			VALUES ('gl', ?, 1, '2026-01-05', '2026-01', '6100', 100, 1)`, i)
	}
	db.Close()

	db = open()
	if db.checkedHere {
		t.Error("a store unchanged since a clean check a moment ago was checked again")
	}
	db.Close()

	// A writer that did not close: its stamp is gone.
	db = open()
	db2 := open()
	if !db2.checkedHere {
		t.Error("a store another writer has open was not checked")
	}
	db2.Close()
	db.Close()

	// A stale check.
	s, ok := readStamp(path)
	if !ok {
		t.Fatal("no stamp after a clean close")
	}
	s.checked = time.Now().Add(-CheckEvery - time.Minute).Unix()
	os.WriteFile(stampPath(path), []byte(stampLine(s)), 0o600)
	db = open()
	if !db.checkedHere {
		t.Error("a store whose last check is older than CheckEvery was not checked")
	}
	var root, pageSize int64
	db.SQL().QueryRow(`SELECT rootpage FROM sqlite_master WHERE type = 'index' AND tbl_name = 'gl_lines' ORDER BY name LIMIT 1`).Scan(&root)
	db.SQL().QueryRow(`PRAGMA page_size`).Scan(&pageSize)
	db.Close()
	if _, ok := readStamp(path); !ok {
		t.Fatal("no stamp after a clean close")
	}

	// Damage from outside, after a clean check a moment ago: the file
	// changed, so it is checked and refused.
	f, err := os.OpenFile(path, os.O_RDWR, 0)
	if err != nil {
		t.Fatal(err)
	}
	if _, err := f.WriteAt([]byte(strings.Repeat("\xff\x00\x13", 300)), (root-1)*pageSize+12); err != nil {
		t.Fatal(err)
	}
	f.Close()
	if _, err := Open(ctx, path, eur); !errors.Is(err, ErrCorrupt) {
		t.Fatalf("opening a store damaged after its last check: %v", err)
	}
}

// A check stopped before it ends (the daemon told to stop while it checks)
// found nothing wrong: its error is the stop, not a damaged store.
func TestCheckStoppedIsNotDamage(t *testing.T) {
	db, _ := mustOpen(t)
	ctx, cancel := context.WithCancel(context.Background())
	cancel()
	err := db.Check(ctx)
	if errors.Is(err, ErrCorrupt) || !errors.Is(err, context.Canceled) {
		t.Errorf("check of an intact store, stopped: %v; want context.Canceled, not %v", err, ErrCorrupt)
	}
}
