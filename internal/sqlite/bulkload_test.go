package sqlite

import (
	"context"
	"database/sql"
	"fmt"
	"math"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"github.com/costdrift/costdrift/internal/costdrift"
)

// A store from before schema 16 keeps its ledger through the upgrade, and
// a line's foreign keys are then checked when its transaction commits: a
// line naming a file that does not exist is taken by the INSERT and
// refused by the COMMIT, and nothing of the transaction stays.
func TestLedgerKeysCheckedAtCommitAfterUpgrade(t *testing.T) {
	ctx := context.Background()
	db, ms := storeBefore(t, 16)
	syncedFile(t, db)
	for i := range 2 {
		mustExec(t, db, `INSERT INTO gl_lines (source, entry_id, line, posted_on, period, account, amount_minor, sync_run_id, source_file_id)
			VALUES ('gl', 'E1', ?, '2025-05-05', '2025-05', '6100', ?, 1, 7)`, i+1, 100*(1-2*i))
	}
	if err := db.applyMigrations(ctx, ms); err != nil {
		t.Fatal(err)
	}
	if got := count(t, db, "gl_lines"); got != 2 {
		t.Errorf("%d ledger lines after the upgrade, want 2", got)
	}
	if got := dump(t, db, `PRAGMA integrity_check`); got != "\"ok\"\n" {
		t.Errorf("integrity_check after the upgrade: %s", got)
	}
	var deferred int
	db.SQL().QueryRow(`SELECT COUNT(*) FROM pragma_foreign_key_list('gl_lines') WHERE "table" IN ('sync_runs', 'source_files')`).Scan(&deferred)
	if deferred != 2 {
		t.Errorf("gl_lines has %d foreign keys to sync_runs and source_files, want 2", deferred)
	}

	tx, err := db.SQL().BeginTx(ctx, nil)
	if err != nil {
		t.Fatal(err)
	}
	if _, err := tx.Exec(`INSERT INTO gl_lines (source, entry_id, line, posted_on, period, account, amount_minor, sync_run_id, source_file_id)
		VALUES ('gl', 'E2', 1, '2025-05-05', '2025-05', '6100', 5, 1, 99)`); err != nil {
		t.Fatalf("a line naming no file is refused as it is stored, want at commit: %v", err)
	}
	if err := tx.Commit(); err == nil || !strings.Contains(err.Error(), "FOREIGN KEY") {
		t.Errorf("commit of a line naming no file: %v, want a foreign key failure", err)
	}
	if got := count(t, db, "gl_lines"); got != 2 {
		t.Errorf("%d ledger lines after the refused commit, want 2", got)
	}
}

// Every connection's page cache is 8 MiB whatever the store's page size:
// a new store has pages of 16 KiB, and one created with SQLite's 4 KiB
// pages keeps them.
func TestPageCacheFollowsPageSize(t *testing.T) {
	ctx := context.Background()
	old := filepath.Join(t.TempDir(), "old.db")
	bare := bareDBAt(t, old)
	if err := bare.applyMigrations(ctx, nil); err != nil {
		t.Fatal(err)
	}
	bare.db.Close()
	for _, c := range []struct {
		path string
		page int64
	}{{filepath.Join(t.TempDir(), "new.db"), 16384}, {old, 4096}} {
		db, _ := mustOpenAt(t, c.path, eur)
		// Hold several connections at once, so that each is a different one.
		var conns []interface{ Close() error }
		for i := range maxConns {
			conn, err := db.SQL().Conn(ctx)
			if err != nil {
				t.Fatal(err)
			}
			conns = append(conns, conn)
			var page, pages int64
			conn.QueryRowContext(ctx, `PRAGMA page_size`).Scan(&page)
			conn.QueryRowContext(ctx, `PRAGMA cache_size`).Scan(&pages)
			if page != c.page || pages*page != 8<<20 {
				t.Errorf("%s, connection %d: pages of %d bytes, cache of %d pages; want %d-byte pages and 8 MiB",
					filepath.Base(c.path), i, page, pages, c.page)
			}
		}
		for _, conn := range conns {
			conn.Close()
		}
	}
}

// bareDBAt is bareDB at a path of the test's choosing: a file created
// with SQLite's default page size, as stores were before schema 16.
func bareDBAt(t *testing.T, path string) *DB {
	t.Helper()
	sqldb, err := sql.Open("sqlite3", "file:"+path+"?_foreign_keys=on&_txlock=immediate")
	if err != nil {
		t.Fatal(err)
	}
	return &DB{db: sqldb, Now: func() time.Time { return time.Date(2025, 6, 1, 6, 0, 0, 0, time.UTC) }, background: &background{}}
}

// A store whose largest rowid is near the maximum gives new rows rowids at
// random, which a batch cannot tell its own rows by: the load goes row by
// row and decides as the batches do.
func TestLoadFileNearLargestRowid(t *testing.T) {
	db, _ := mustOpen(t)
	loadFile(t, db, "/data/old.csv", []costdrift.LedgerLine{line("MOVED", 1, 111)})
	mustExec(t, db, `INSERT INTO gl_lines (rowid, source, entry_id, line, posted_on, period, account, amount_minor, sync_run_id)
		VALUES (?, 'other', 'X', 1, '2026-01-05', '2026-01', '6100', 1, 1)`, int64(math.MaxInt64-10))

	var lines []costdrift.LedgerLine
	for i := 0; i < 250; i++ {
		lines = append(lines, line(fmt.Sprintf("E%03d", i), 1, int64(i)))
	}
	lines[7] = line("E005", 1, 5)
	lines[150] = line("E010", 1, 999)
	lines[199] = line("MOVED", 1, 222)
	run := loadFile(t, db, "/data/new.csv", lines)
	if run.RowsLoaded != 248 || run.RowsRejected != 2 {
		t.Errorf("loaded %d, rejected %d; want 248 and 2", run.RowsLoaded, run.RowsRejected)
	}
	if got := count(t, db, "gl_lines WHERE source = 'gl'"); got != 248 {
		t.Errorf("gl_lines = %d, want 248", got)
	}
	if got := dump(t, db, `SELECT amount_minor FROM gl_lines WHERE entry_id IN ('E010', 'MOVED') ORDER BY entry_id`); got != "int64:10\nint64:222\n" {
		t.Errorf("E010 and MOVED = %q, want the first row's 10 and the new file's 222", got)
	}
}

// A file of more unbalanced entries than the check follows one by one
// counts them from the runs of lines it stored when every entry's lines
// came together, and asks the store when an unbalanced entry comes back
// later in the file: the count is the file's entries whose lines do not
// sum to zero either way.
func TestBalanceCheckOfManyEntriesThatComeBack(t *testing.T) {
	oneSided := func() []costdrift.LedgerLine {
		var lines []costdrift.LedgerLine
		for i := range maxSuspects + 5 {
			lines = append(lines, ledgerLine("gl", fmt.Sprintf("E%d", i), 1, "2025-01-31", "6200", "PAINT", 100, ""))
		}
		return lines
	}
	together := oneSided()
	// B balances, then comes back unbalanced: one entry that does not
	// balance, counted once.
	together = append(together,
		ledgerLine("gl", "B", 1, "2025-01-31", "6200", "", 70, ""), ledgerLine("gl", "B", 2, "2025-01-31", "2000", "", -70, ""),
		ledgerLine("gl", "X", 1, "2025-01-31", "6200", "", 0, ""),
		ledgerLine("gl", "B", 3, "2025-01-31", "6200", "", 5, ""))
	apart := oneSided()
	// E3 and E4 come back: E3's second line takes its 100 back, E4's adds
	// to it.
	apart = append(apart,
		ledgerLine("gl", "E3", 2, "2025-01-31", "2000", "", -100, ""),
		ledgerLine("gl", "E4", 2, "2025-01-31", "2000", "", 50, ""))
	for _, c := range []struct {
		name  string
		lines []costdrift.LedgerLine
		want  string
	}{
		{"together", together, ": 10006 entries do not balance"},
		{"apart", apart, ": 10004 entries do not balance"},
	} {
		db, _ := mustOpen(t)
		run := loadFile(t, db, "/gl.csv", c.lines)
		if len(run.Warnings) != 1 || !strings.Contains(run.Warnings[0], c.want) {
			t.Errorf("%s: warnings %q, want %q", c.name, run.Warnings, c.want)
		}
	}
}

// The filter of unbalanced entries never forgets one it was given, and with
// a million in it wrongly claims another about 5 times in a billion
// questions (the blocked filter's rate, computed over Poisson-filled
// blocks): a million questions about entries it was not given find none or
// one or two, where four probes spread over the whole filter found about
// one (7·10⁻⁷ a question, from (1 − e^(−4n/m))⁴).
func TestUnbalancedFilter(t *testing.T) {
	var b balance
	const n = 1_000_000
	for i := range n {
		b.markUnbalanced(fmt.Sprintf("JV-%d", i))
	}
	for i := 0; i < n; i += 7 {
		if !b.mayHaveClosedUnbalanced(fmt.Sprintf("JV-%d", i)) {
			t.Fatalf("JV-%d was marked and is not found", i)
		}
	}
	wrong := 0
	for i := range n {
		if b.mayHaveClosedUnbalanced(fmt.Sprintf("AP-%d", i)) {
			wrong++
		}
	}
	t.Logf("%d of %d entries never marked are said to be marked", wrong, n)
	if wrong > 2 {
		t.Errorf("%d of %d entries never marked are said to be marked; want at most 2", wrong, n)
	}
}
