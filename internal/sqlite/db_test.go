package sqlite

import (
	"context"
	"database/sql"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"github.com/costdrift/costdrift/internal/money"
)

var (
	eur = money.Currency{Code: "EUR", Exponent: 2}
	jpy = money.Currency{Code: "JPY", Exponent: 0}
)

// clock is a settable test clock for DB.Now.
type clock struct{ t time.Time }

func (c *clock) now() time.Time { return c.t }

// mustOpen opens a new EUR store in a temporary folder with a test clock
// set to 2025-06-01 06:00 UTC, and closes it when the test ends.
func mustOpen(tb testing.TB) (*DB, *clock) {
	tb.Helper()
	return mustOpenAt(tb, filepath.Join(tb.TempDir(), "costdrift.db"), eur)
}

func mustOpenAt(tb testing.TB, path string, currency money.Currency) (*DB, *clock) {
	tb.Helper()
	db, err := Open(context.Background(), path, currency)
	if err != nil {
		tb.Fatalf("Open: %v", err)
	}
	tb.Cleanup(func() {
		if err := db.Close(); err != nil {
			tb.Errorf("Close: %v", err)
		}
	})
	c := &clock{t: time.Date(2025, 6, 1, 6, 0, 0, 0, time.UTC)}
	db.Now = c.now
	return db, c
}

// mustExec runs a statement on the store and fails the test on error.
func mustExec(tb testing.TB, db *DB, query string, args ...any) {
	tb.Helper()
	if _, err := db.SQL().Exec(query, args...); err != nil {
		tb.Fatalf("%s: %v", query, err)
	}
}

// count returns the number of rows a query's FROM ... WHERE ... selects.
func count(tb testing.TB, db *DB, from string, args ...any) int {
	tb.Helper()
	var n int
	if err := db.SQL().QueryRow("SELECT COUNT(*) FROM "+from, args...).Scan(&n); err != nil {
		tb.Fatalf("count %s: %v", from, err)
	}
	return n
}

// dump renders every row of a query as text, one line a row, so that two
// states of a table can be compared byte for byte.
func dump(tb testing.TB, db *DB, query string) string {
	tb.Helper()
	rows, err := db.SQL().Query(query)
	if err != nil {
		tb.Fatalf("%s: %v", query, err)
	}
	defer rows.Close()
	cols, err := rows.Columns()
	if err != nil {
		tb.Fatal(err)
	}
	var b strings.Builder
	values := make([]any, len(cols))
	ptrs := make([]any, len(cols))
	for i := range values {
		ptrs[i] = &values[i]
	}
	for rows.Next() {
		if err := rows.Scan(ptrs...); err != nil {
			tb.Fatal(err)
		}
		for i, v := range values {
			if i > 0 {
				b.WriteByte('|')
			}
			switch v := v.(type) {
			case nil:
				b.WriteString("NULL")
			case []byte:
				fmt.Fprintf(&b, "%q", v)
			case string:
				fmt.Fprintf(&b, "%q", v)
			default:
				fmt.Fprintf(&b, "%T:%v", v, v)
			}
		}
		b.WriteByte('\n')
	}
	if err := rows.Err(); err != nil {
		tb.Fatal(err)
	}
	return b.String()
}

func TestOpenCreatesOwnerOnlyFile(t *testing.T) {
	// The store holds ledger data that can be personal (payroll by cost
	// centre): owner read and write only, whatever the umask.
	db, _ := mustOpen(t)
	st, err := os.Stat(db.Path())
	if err != nil {
		t.Fatal(err)
	}
	if st.Mode().Perm() != 0o600 {
		t.Errorf("store mode %v, want -rw-------", st.Mode().Perm())
	}
	// SQLite gives its write-ahead log the mode of the database file.
	mustExec(t, db, `INSERT INTO store_meta (key, value) VALUES ('probe', 'x')`)
	wal, err := os.Stat(db.Path() + "-wal")
	if err != nil {
		t.Fatalf("write-ahead log: %v", err)
	}
	if wal.Mode().Perm() != 0o600 {
		t.Errorf("write-ahead log mode %v, want -rw-------", wal.Mode().Perm())
	}
}

func TestOpenRefusesMissingFolder(t *testing.T) {
	dir := filepath.Join(t.TempDir(), "no", "such")
	_, err := Open(context.Background(), filepath.Join(dir, "costdrift.db"), eur)
	if err == nil || !strings.Contains(err.Error(), "folder "+dir+" does not exist") {
		t.Fatalf("error %v, want one saying the folder does not exist", err)
	}
	if _, err := os.Stat(dir); !os.IsNotExist(err) {
		t.Errorf("Open created %s: %v", dir, err)
	}
}

func TestOpenPragmas(t *testing.T) {
	db, _ := mustOpen(t)
	ctx := context.Background()
	// Ask on several pooled connections: each must have the settings.
	conns := make([]*sql.Conn, 3)
	for i := range conns {
		c, err := db.SQL().Conn(ctx)
		if err != nil {
			t.Fatal(err)
		}
		defer c.Close()
		conns[i] = c
	}
	for i, c := range conns {
		var mode string
		var fk int
		if err := c.QueryRowContext(ctx, `PRAGMA journal_mode`).Scan(&mode); err != nil {
			t.Fatal(err)
		}
		if err := c.QueryRowContext(ctx, `PRAGMA foreign_keys`).Scan(&fk); err != nil {
			t.Fatal(err)
		}
		if mode != "wal" || fk != 1 {
			t.Errorf("connection %d: journal_mode %q, foreign_keys %d; want wal and 1", i, mode, fk)
		}
		// Foreign keys are enforced, not just switched on: a ledger line
		// of a sync run that does not exist is refused.
		_, err := c.ExecContext(ctx, `INSERT INTO gl_lines (source, entry_id, line, posted_on, period, account, amount_minor, sync_run_id)
			VALUES ('gl', 'E1', 1, '2025-01-31', '2025-01', '6200', 100, 999)`)
		if err == nil || !strings.Contains(err.Error(), "FOREIGN KEY constraint failed") {
			t.Errorf("connection %d: orphan ledger line: error %v, want a foreign key failure", i, err)
		}
	}
}

func TestOpenCurrency(t *testing.T) {
	path := filepath.Join(t.TempDir(), "costdrift.db")
	db, err := Open(context.Background(), path, eur)
	if err != nil {
		t.Fatal(err)
	}
	meta := dump(t, db, `SELECT key, value FROM store_meta ORDER BY key`)
	// EUR has two decimals (ISO 4217, common practice): 100 cents a euro.
	if want := "\"currency\"|\"EUR\"\n\"minor_per_unit\"|\"100\"\n"; meta != want {
		t.Errorf("store_meta:\n%s\nwant\n%s", meta, want)
	}
	db.Close()

	_, err = Open(context.Background(), path, money.Currency{Code: "USD", Exponent: 2})
	if err == nil || !strings.Contains(err.Error(), "it holds amounts in EUR but the config says currency USD") {
		t.Fatalf("reopen in USD: error %v, want a refusal naming both currencies", err)
	}
	again, _ := mustOpenAt(t, path, eur)
	if again.Currency != eur {
		t.Errorf("currency %+v, want %+v", again.Currency, eur)
	}

	// JPY has no minor unit (ISO 4217, common practice).
	yen, _ := mustOpenAt(t, filepath.Join(t.TempDir(), "yen.db"), jpy)
	if got := dump(t, yen, `SELECT value FROM store_meta WHERE key = 'minor_per_unit'`); got != "\"1\"\n" {
		t.Errorf("JPY minor_per_unit %s, want 1", got)
	}
}

func TestOpenRefusesNewerSchema(t *testing.T) {
	path := filepath.Join(t.TempDir(), "costdrift.db")
	db, err := Open(context.Background(), path, eur)
	if err != nil {
		t.Fatal(err)
	}
	mustExec(t, db, `INSERT INTO schema_migrations (version, name, applied_at) VALUES (999, '0999_future.sql', '2030-01-01T00:00:00Z')`)
	db.Close()
	_, err = Open(context.Background(), path, eur)
	if err == nil {
		t.Fatal("a store from a newer build opened")
	}
	want := fmt.Sprintf("it was written by a newer costdrift (schema 999; this build knows up to %d)", SchemaVersion())
	if !strings.Contains(err.Error(), want) {
		t.Errorf("error %q, want it to contain %q", err, want)
	}
}

func TestOpenPathWithURICharacters(t *testing.T) {
	// SQLite reads the store's name as a URI: '#', '?' and '%' must still
	// name the owner-only file that Open created, and no other.
	for _, name := range []string{"costs#1.db", "costs?x.db", "costs%41.db", "my costs.db"} {
		t.Run(name, func(t *testing.T) {
			dir := t.TempDir()
			db, _ := mustOpenAt(t, filepath.Join(dir, name), eur)
			mustExec(t, db, `INSERT INTO store_meta (key, value) VALUES ('probe', 'x')`)
			if err := db.Close(); err != nil {
				t.Fatal(err)
			}
			entries, err := os.ReadDir(dir)
			if err != nil {
				t.Fatal(err)
			}
			for _, e := range entries {
				if !strings.HasPrefix(e.Name(), name) {
					t.Errorf("Open wrote %s beside %s", e.Name(), name)
				}
			}
			// Reopened, the store has what was written: it is that file.
			again, _ := mustOpenAt(t, filepath.Join(dir, name), eur)
			if n := count(t, again, "store_meta WHERE key = 'probe'"); n != 1 {
				t.Errorf("reopened %s has %d probe rows, want 1", name, n)
			}
			st, err := os.Stat(filepath.Join(dir, name))
			if err != nil {
				t.Fatal(err)
			}
			if st.Size() == 0 || st.Mode().Perm() != 0o600 {
				t.Errorf("%s: size %d, mode %v; want a non-empty -rw------- file", name, st.Size(), st.Mode().Perm())
			}
		})
	}
}

// ReleaseMemory visits every idle connection once, keeps them open and
// leaves the store working.
func TestReleaseMemory(t *testing.T) {
	db, c := mustOpen(t)
	ctx := context.Background()
	save(t, db, c, nil, mixed(), step())
	// The analysis's checkpoint (in the background) gives its connection
	// back to the pool first, so that the pool holds no connection but
	// the three below.
	db.background.Wait()
	// Three connections in use at once, then idle.
	var held []*sql.Conn
	for range 3 {
		conn, err := db.SQL().Conn(ctx)
		if err != nil {
			t.Fatal(err)
		}
		if _, err := conn.ExecContext(ctx, `SELECT COUNT(*) FROM behaviour_history`); err != nil {
			t.Fatal(err)
		}
		held = append(held, conn)
	}
	for _, conn := range held {
		conn.Close()
	}
	before := db.SQL().Stats()
	if err := db.ReleaseMemory(ctx); err != nil {
		t.Fatal(err)
	}
	after := db.SQL().Stats()
	if before.Idle != 3 || after.Idle != 3 || after.OpenConnections != before.OpenConnections {
		t.Errorf("idle connections %d before, %d after (open %d, %d): want all 3 kept", before.Idle, after.Idle, before.OpenConnections, after.OpenConnections)
	}
	if got := current(t, db); len(got) != 2 {
		t.Errorf("after ReleaseMemory the store returns %d behaviours, want 2", len(got))
	}
}
