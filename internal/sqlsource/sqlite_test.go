package sqlsource

import (
	"context"
	"database/sql"
	"errors"
	"os"
	"path/filepath"
	"reflect"
	"strings"
	"testing"
	"time"

	"github.com/costdrift/costdrift/internal/costdrift"
	"github.com/costdrift/costdrift/internal/money"
)

// The SQLite tests need no server: a database file in a temporary folder,
// written here with the same driver and read back through the reader.

// sqliteDB creates a database file with the test ledger and returns its
// path, which is the whole connection string.
func sqliteDB(t *testing.T) string {
	t.Helper()
	path := filepath.Join(t.TempDir(), "ledger.db")
	db, err := sql.Open("sqlite3", path)
	if err != nil {
		t.Fatal(err)
	}
	defer db.Close()
	for _, st := range []string{
		// posted_on is declared DATE, so the driver returns a time; booked
		// is text in a local layout. amount is TEXT (exact), amount_real
		// REAL (a double), amount_cents INTEGER.
		`CREATE TABLE gl (id INTEGER PRIMARY KEY, entry_id TEXT, line INTEGER, posted_on DATE, booked TEXT,
			account TEXT, cost_center TEXT, amount TEXT, amount_real REAL, amount_cents INTEGER, changed TEXT)`,
		`INSERT INTO gl VALUES
			(1, 'JE-1001', 1, '2025-01-31', '31.01.2025', '6100', 'WELD', '1234.56', 1234.56, 123456, '2025-02-01 08:00:00'),
			(2, 'JE-1001', 2, '2025-01-31', '31.01.2025', '2100', '', '-1300.00', -1300.0, -130000, '2025-02-01 08:00:00'),
			(3, 'JE-1001', 3, '2025-01-31', '31.01.2025', '6100', 'WELD', '65.44', 65.44, 6544, '2025-02-01 08:00:00'),
			(4, 'JE-1002', 1, '2025-02-28', '28.02.2025', '6200', 'PAINT', '0.30', 0.1 + 0.2, 30, '2025-03-01 09:30:00'),
			(5, 'JE-1002', 2, '2025-02-28', '30.02.2025', '2100', NULL, '-0.30', -0.3, -30, '2025-03-01 09:30:00')`,
		`CREATE TABLE activity (period TEXT, driver TEXT, cost_center TEXT, value REAL, unit TEXT)`,
		`INSERT INTO activity VALUES
			('2025-01', 'machine_hours', 'WELD', 410.5, 'machine hour'),
			('2025-02-15', 'machine_hours', 'WELD', 395, 'machine hour'),
			('2025-13', 'machine_hours', 'WELD', 1, 'machine hour'),
			('2025-03', 'frames_built', NULL, 'many', 'frame')`,
		`CREATE TABLE chart (konto TEXT, name TEXT, type TEXT, "group" TEXT)`,
		`INSERT INTO chart VALUES ('6100', 'Energy', 'expense', 'Production overhead'), ('', 'Nobody', NULL, NULL)`,
	} {
		if _, err := db.Exec(st); err != nil {
			t.Fatalf("%s: %v", st, err)
		}
	}
	return path
}

func sqliteOptions(path, query string) Options {
	return Options{Source: "books", Driver: "sqlite", DSN: path, DSNOrigin: "dsn_file books.dsn", Query: query,
		Currency: eur(), Period: monthly, Timeout: 10 * time.Second}
}

func TestSQLiteLedger(t *testing.T) {
	path := sqliteDB(t)
	ctx := context.Background()

	t.Run("text amounts and a DATE column", func(t *testing.T) {
		rec := &recorder{}
		res, err := ReadLedger(ctx, sqliteOptions(path, `SELECT entry_id, line, posted_on AS date, account, cost_center, amount FROM gl ORDER BY id`), rec)
		if err != nil {
			t.Fatal(err)
		}
		if res.Rows != 5 {
			t.Errorf("read %d rows, want 5", res.Rows)
		}
		checkLines(t, rec.Lines, []costdrift.LedgerLine{
			line("books", "JE-1001", 1, "2025-01-31", "6100", "WELD", 123456, ""),
			line("books", "JE-1001", 2, "2025-01-31", "2100", "", -130000, ""),
			line("books", "JE-1001", 3, "2025-01-31", "6100", "WELD", 6544, ""),
			line("books", "JE-1002", 1, "2025-02-28", "6200", "PAINT", 30, ""),
			line("books", "JE-1002", 2, "2025-02-28", "2100", "", -30, ""),
		})
		checkRejects(t, rec.Rejects, nil)
	})

	t.Run("REAL amounts and dates as text in a layout", func(t *testing.T) {
		opt := sqliteOptions(path, `SELECT entry_id, line, booked, account, amount_real FROM gl ORDER BY id`)
		opt.Columns = map[string]string{"date": "booked", "amount": "amount_real"}
		opt.DateLayout = "02.01.2006"
		rec := &recorder{}
		if _, err := ReadLedger(ctx, opt, rec); err != nil {
			t.Fatal(err)
		}
		// Row 4 holds the double 0.1 + 0.2; row 5 the date 30.02.2025.
		checkLines(t, rec.Lines, []costdrift.LedgerLine{
			line("books", "JE-1001", 1, "2025-01-31", "6100", "", 123456, ""),
			line("books", "JE-1001", 2, "2025-01-31", "2100", "", -130000, ""),
			line("books", "JE-1001", 3, "2025-01-31", "6100", "", 6544, ""),
		})
		checkRejects(t, rec.Rejects, []costdrift.Reject{
			rej("books", "books row 4 (entry JE-1002, line 1)",
				`bad amount: amount "0.30000000000000004": more decimals than the currency's minor unit (EUR has 2) (a floating-point column: store or sum amounts as NUMERIC or DECIMAL)`,
				`entry_id="JE-1002", line=1, booked="28.02.2025", account="6200", amount_real=0.30000000000000004`),
			rej("books", "books row 5 (entry JE-1002, line 2)", `bad date "30.02.2025": want DD.MM.YYYY`,
				`entry_id="JE-1002", line=2, booked="30.02.2025", account="2100", amount_real=-0.3`),
		})
	})

	t.Run("aggregated from integer cents", func(t *testing.T) {
		// printf writes the exact decimal of a whole number of cents / 100
		// (well inside the 2^53 range of a double): 1300.00, not a double.
		opt := sqliteOptions(path, `SELECT strftime('%Y-%m', posted_on) AS period, account, cost_center,
			printf('%.2f', SUM(amount_cents) / 100.0) AS amount FROM gl GROUP BY 1, 2, 3 ORDER BY 1, 2, 3`)
		opt.Aggregated = true
		rec := &recorder{}
		if _, err := ReadLedger(ctx, opt, rec); err != nil {
			t.Fatal(err)
		}
		// 6100/WELD January: 123456 + 6544 = 130000 cents (by hand).
		checkLines(t, rec.Lines, []costdrift.LedgerLine{
			sum("books", "2025-01", "2100", "", "2025-01-31", -130000),
			sum("books", "2025-01", "6100", "WELD", "2025-01-31", 130000),
			sum("books", "2025-02", "2100", "", "2025-02-28", -30),
			sum("books", "2025-02", "6200", "PAINT", "2025-02-28", 30),
		})
		checkRejects(t, rec.Rejects, nil)
	})

	t.Run("a store error stops the read and comes back as it is", func(t *testing.T) {
		rec := &recorder{FailOn: 2}
		res, err := ReadLedger(ctx, sqliteOptions(path, `SELECT entry_id, line, posted_on AS date, account, amount FROM gl ORDER BY id`), rec)
		if err != errWriter || res.Rows != 2 || len(rec.Lines) != 1 {
			t.Errorf("read %d rows, error %v, stored %d lines; want 2, %v, 1", res.Rows, err, len(rec.Lines), errWriter)
		}
	})

	t.Run("whole-query errors", func(t *testing.T) {
		tests := []struct{ name, query, want string }{
			{"no amount", `SELECT entry_id, line, posted_on AS date, account FROM gl`, "neither an amount column nor debit and credit columns"},
			{"no line", `SELECT entry_id, posted_on AS date, account, amount FROM gl`, "has no column line (found: entry_id, date, account, amount)"},
			{"two columns answer to one name", `SELECT entry_id, line, posted_on AS date, account, amount, cost_center AS ACCOUNT FROM gl`, "two columns named account"},
			{"a table that is not there", `SELECT * FROM general_ledger`, "sqlite refused the query: no such table: general_ledger"},
			{"a write", `DELETE FROM gl`, "query refused: it begins with DELETE"},
		}
		for _, tc := range tests {
			t.Run(tc.name, func(t *testing.T) {
				rec := &recorder{}
				_, err := ReadLedger(ctx, sqliteOptions(path, tc.query), rec)
				wantError(t, err, tc.want)
				if !rec.Empty() {
					t.Errorf("wrote %+v", rec)
				}
			})
		}
	})
}

func TestSQLiteActivityAndAccounts(t *testing.T) {
	path := sqliteDB(t)
	ctx := context.Background()
	rec := &recorder{}
	if _, err := ReadActivity(ctx, sqliteOptions(path, `SELECT period, driver, cost_center, value, unit FROM activity`), rec); err != nil {
		t.Fatal(err)
	}
	checkActivity(t, rec.Values, []costdrift.ActivityValue{
		act("books", "2025-01", "machine_hours", "WELD", 410.5, "machine hour"),
		act("books", "2025-02", "machine_hours", "WELD", 395, "machine hour"),
	})
	checkRejects(t, rec.Rejects, []costdrift.Reject{
		rej("books", "books row 3 (driver machine_hours, cost centre WELD)", `bad period "2025-13": want YYYY-MM or a date`,
			`period="2025-13", driver="machine_hours", cost_center="WELD", value=1, unit="machine hour"`),
		rej("books", "books row 4 (period 2025-03, driver frames_built)", `bad value "many": not a number`,
			`period="2025-03", driver="frames_built", cost_center=NULL, value="many", unit="frame"`),
	})

	opt := sqliteOptions(path, `SELECT konto, name, type, "group" FROM chart`)
	opt.Columns = map[string]string{"account": "Konto"}
	rec = &recorder{}
	if _, err := ReadAccounts(ctx, opt, rec); err != nil {
		t.Fatal(err)
	}
	want := []costdrift.Account{{Source: "books", Account: "6100", Name: "Energy", Type: "expense", Group: "Production overhead"}}
	if !reflect.DeepEqual(rec.Accounts, want) {
		t.Errorf("accounts %+v, want %+v", rec.Accounts, want)
	}
	checkRejects(t, rec.Rejects, []costdrift.Reject{rej("books", "books row 2", "missing account", `konto="", name="Nobody", type=NULL, group=NULL`)})
}

func TestSQLiteWatermark(t *testing.T) {
	path := sqliteDB(t)
	ctx := context.Background()
	tests := []struct {
		name, query, column string
		first, second       string // watermarks after the first and second read
		firstRows           int
	}{
		// The largest id, 5, and the largest changed text (by hand from
		// sqliteDB); the second read finds nothing newer and keeps it.
		{"integer key", `SELECT entry_id, line, posted_on AS date, account, amount, id FROM gl WHERE id > COALESCE(:watermark, 0)`,
			"id", "5", "5", 5},
		{"text timestamp", `SELECT entry_id, line, posted_on AS date, account, amount, changed FROM gl WHERE changed > COALESCE(:watermark, '')`,
			"changed", "2025-03-01 09:30:00", "2025-03-01 09:30:00", 5},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			opt := sqliteOptions(path, tc.query)
			opt.WatermarkColumn = tc.column
			res, err := ReadLedger(ctx, opt, &recorder{})
			if err != nil || res.Rows != tc.firstRows || res.Watermark != tc.first {
				t.Fatalf("first read: %d rows, watermark %q, error %v; want %d, %q", res.Rows, res.Watermark, err, tc.firstRows, tc.first)
			}
			opt.Watermark = res.Watermark
			res, err = ReadLedger(ctx, opt, &recorder{})
			if err != nil || res.Rows != 0 || res.Watermark != tc.second {
				t.Errorf("second read: %d rows, watermark %q, error %v; want 0, %q", res.Rows, res.Watermark, err, tc.second)
			}
		})
	}
	t.Run("misuse", func(t *testing.T) {
		opt := sqliteOptions(path, `SELECT entry_id, line, posted_on AS date, account, amount FROM gl`)
		opt.WatermarkColumn = "id"
		_, err := ReadLedger(ctx, opt, &recorder{})
		wantError(t, err, "refresh is watermark but the query does not use :watermark")

		opt.Query = `SELECT entry_id, line, posted_on AS date, account, amount FROM gl WHERE id > COALESCE(:watermark, 0)`
		_, err = ReadLedger(ctx, opt, &recorder{})
		wantError(t, err, "the query result has no column id, the watermark_column")

		opt.WatermarkColumn = ""
		_, err = ReadLedger(ctx, opt, &recorder{})
		wantError(t, err, "the query uses :watermark but refresh is not watermark")
	})
}

func TestSQLiteTimeoutAndMissingFile(t *testing.T) {
	path := sqliteDB(t)
	// A recursive count to a billion takes minutes; the deadline stops it.
	opt := sqliteOptions(path, `WITH RECURSIVE n(i) AS (SELECT 1 UNION ALL SELECT i + 1 FROM n WHERE i < 1000000000)
		SELECT max(i) AS account FROM n`)
	opt.Timeout = 200 * time.Millisecond
	start := time.Now()
	_, err := ReadAccounts(context.Background(), opt, &recorder{})
	wantError(t, err, "the query did not finish within its timeout of 200ms")
	if !errors.Is(err, context.DeadlineExceeded) {
		t.Errorf("errors.Is(%v, context.DeadlineExceeded) is false", err)
	}
	if d := time.Since(start); d > 3*time.Second {
		t.Errorf("took %v to give up, want about 200ms", d)
	}

	missing := filepath.Join(t.TempDir(), "nope.db")
	_, err = ReadAccounts(context.Background(), sqliteOptions(missing, "SELECT 1 AS account"), &recorder{})
	wantError(t, err, "the sqlite database named in dsn_file books.dsn does not exist")
	if _, err := os.Stat(missing); !errors.Is(err, os.ErrNotExist) {
		t.Errorf("the reader created %s", missing)
	}
}

// TestSQLiteOpenedReadOnly: a SQLite source is opened read-only (mode=ro),
// so not even the file's own housekeeping writes to it. A database in WAL
// mode whose log holds a transaction not yet copied into the main file is
// the case that shows it: the last read-write connection to close copies
// the log into the main file (a checkpoint, SQLite's documented behaviour
// on close, https://sqlite.org/wal.html), a read-only one leaves both files
// as they were.
func TestSQLiteOpenedReadOnly(t *testing.T) {
	dir := t.TempDir()
	live := filepath.Join(dir, "live.db")
	w, err := sql.Open("sqlite3", live)
	if err != nil {
		t.Fatal(err)
	}
	defer w.Close()
	w.SetMaxOpenConns(1)
	for _, st := range []string{
		`PRAGMA journal_mode = WAL`,
		`PRAGMA wal_autocheckpoint = 0`,
		`CREATE TABLE chart (account TEXT, name TEXT)`,
		`INSERT INTO chart VALUES ('6100', 'Energy'), ('6200', 'Paint')`,
	} {
		if _, err := w.Exec(st); err != nil {
			t.Fatalf("%s: %v", st, err)
		}
	}
	// A copy of the files while the writer is open: the rows are in the
	// log only.
	copyDir := filepath.Join(dir, "copy")
	if err := os.Mkdir(copyDir, 0o700); err != nil {
		t.Fatal(err)
	}
	for _, suffix := range []string{"", "-wal"} {
		b, err := os.ReadFile(live + suffix)
		if err != nil {
			t.Fatal(err)
		}
		if err := os.WriteFile(filepath.Join(copyDir, "books.db"+suffix), b, 0o600); err != nil {
			t.Fatal(err)
		}
	}
	// A name with characters a file: URI gives a meaning to.
	path := filepath.Join(copyDir, "books #2 100%.db")
	for _, suffix := range []string{"", "-wal"} {
		if err := os.Rename(filepath.Join(copyDir, "books.db"+suffix), path+suffix); err != nil {
			t.Fatal(err)
		}
	}
	before, _ := os.ReadFile(path)
	for _, dsn := range []string{path, "file:" + strings.NewReplacer("%", "%25", "#", "%23", " ", "%20").Replace(path) + "?mode=rw"} {
		rec := &recorder{}
		res, err := ReadAccounts(context.Background(), sqliteOptions(dsn, `SELECT account, name FROM chart ORDER BY account`), rec)
		if err != nil {
			t.Fatalf("%s: %v", dsn, err)
		}
		wantWarnings := 0
		if strings.HasSuffix(dsn, "mode=rw") {
			wantWarnings = 1 // it asked for mode=rw
		}
		if len(rec.Accounts) != 2 || len(res.Warnings) != wantWarnings {
			t.Errorf("%s: read %+v with warnings %q; want both accounts and %d warning(s)", dsn, rec.Accounts, res.Warnings, wantWarnings)
		}
		after, _ := os.ReadFile(path)
		if !reflect.DeepEqual(before, after) {
			t.Errorf("%s: reading changed the database file (%d bytes before, %d after)", dsn, len(before), len(after))
		}
		if _, err := os.Stat(path + "-wal"); err != nil {
			t.Errorf("%s: the log is gone after the read: %v", dsn, err)
		}
	}
}

func TestSQLiteLedgerGroupingAndBound(t *testing.T) {
	// Text amounts follow the source's notation ("," thousands): digits not
	// grouped in threes are rejected, quoted as the query returns them, and
	// so is an amount beyond the bound, whatever the column's type.
	path := sqliteDB(t)
	opt := sqliteOptions(path, `SELECT * FROM (VALUES
		('G1', 1, '2025-01-31', '6100', '1,234.56', NULL),
		('B1', 1, '2025-01-31', '6100', '1,23', NULL),
		('B2', 1, '2025-01-31', '6100', NULL, '12,3456'),
		('B3', 1, '2025-01-31', '6100', '9,999,999,999,999,999.99', NULL),
		('B4', 1, '2025-01-31', '6100', 60000000000000, -60000000000000),
		('B5', 1, '2025-01-31', '6100', 1e16, NULL))`)
	opt.Columns = map[string]string{"entry_id": "column1", "line": "column2", "date": "column3", "account": "column4",
		"debit": "column5", "credit": "column6"}
	opt.Notation = money.Notation{ThousandsSeparator: ","}
	rec := &recorder{}
	if _, err := ReadLedger(context.Background(), opt, rec); err != nil {
		t.Fatal(err)
	}
	// 1,234.56 EUR is 123456 cents (by hand).
	checkLines(t, rec.Lines, []costdrift.LedgerLine{line("books", "G1", 1, "2025-01-31", "6100", "", 123456, "")})
	const grouping = `digits are not grouped in threes by the thousands separator "," (as in 1,234,567)`
	const bound = `is out of range: costdrift stores at most 99,999,999,999,999.99 EUR either side of zero`
	checkRejects(t, rec.Rejects, []costdrift.Reject{
		rej("books", "books row 2 (entry B1, line 1)", `bad debit: amount "1,23": `+grouping,
			`column1="B1", column2=1, column3="2025-01-31", column4="6100", column5="1,23", column6=NULL`),
		rej("books", "books row 3 (entry B2, line 1)", `bad credit: amount "12,3456": `+grouping,
			`column1="B2", column2=1, column3="2025-01-31", column4="6100", column5=NULL, column6="12,3456"`),
		rej("books", "books row 4 (entry B3, line 1)", `bad debit: amount "9,999,999,999,999,999.99" `+bound,
			`column1="B3", column2=1, column3="2025-01-31", column4="6100", column5="9,999,999,999,999,999.99", column6=NULL`),
		rej("books", "books row 5 (entry B4, line 1)", `bad amount: debit "60000000000000" minus credit "-60000000000000" `+bound,
			`column1="B4", column2=1, column3="2025-01-31", column4="6100", column5=60000000000000, column6=-60000000000000`),
		rej("books", "books row 6 (entry B5, line 1)",
			`bad debit: amount "10000000000000000" is out of range: costdrift stores at most 99999999999999.99 EUR either side of zero (a floating-point column: store or sum amounts as NUMERIC or DECIMAL)`,
			`column1="B5", column2=1, column3="2025-01-31", column4="6100", column5=10000000000000000, column6=NULL`),
	})
}
