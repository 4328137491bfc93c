package sqlsource

import (
	"context"
	"crypto/rand"
	"database/sql"
	"encoding/hex"
	"errors"
	"fmt"
	"net"
	"os"
	"os/exec"
	"os/user"
	"path/filepath"
	"reflect"
	"sort"
	"strconv"
	"strings"
	"syscall"
	"testing"
	"time"

	"github.com/costdrift/costdrift/internal/costdrift"
)

// The PostgreSQL tests run against a real server: a throwaway cluster made
// with Debian's server binaries in a temporary folder, listening only on
// 127.0.0.1 at a free port, with its socket inside that folder, stopped and
// removed when the test ends. Without the binaries the tests fail when
// CI=true (nothing may be skipped in CI) and are skipped otherwise.

// pgBinGlob is where Debian's postgresql-NN packages put initdb and pg_ctl.
const pgBinGlob = "/usr/lib/postgresql/*/bin"

// pgServer is a running throwaway cluster.
type pgServer struct {
	bin      string // folder of initdb, pg_ctl
	dir      string // temporary folder: data/, the socket, the log
	port     int
	password string // of the superuser costdrift
	cred     *syscall.Credential
}

// dsn is a URL connection string for the superuser with its password.
func (s *pgServer) dsn() string {
	return fmt.Sprintf("postgres://costdrift:%s@127.0.0.1:%d/postgres?sslmode=disable", s.password, s.port)
}

// findPGBin returns the newest folder that holds both initdb and pg_ctl.
func findPGBin() string {
	dirs, _ := filepath.Glob(pgBinGlob)
	version := func(d string) int {
		n, _ := strconv.Atoi(filepath.Base(filepath.Dir(d)))
		return n
	}
	sort.Slice(dirs, func(i, j int) bool { return version(dirs[i]) > version(dirs[j]) })
	for _, d := range dirs {
		if isExecutable(filepath.Join(d, "initdb")) && isExecutable(filepath.Join(d, "pg_ctl")) {
			return d
		}
	}
	return ""
}

func isExecutable(path string) bool {
	st, err := os.Stat(path)
	return err == nil && st.Mode().IsRegular() && st.Mode().Perm()&0o111 != 0
}

// missingPostgres says what to do without the server binaries: fail in CI
// (CI=true), where nothing may be skipped, and skip elsewhere.
func missingPostgres(ci string) (msg string, fail bool) {
	msg = "PostgreSQL server binaries (initdb, pg_ctl) not found in " + pgBinGlob + "; install them with: apt-get install postgresql"
	if ci == "true" {
		return msg + " (CI=true: tests may not be skipped)", true
	}
	return msg, false
}

func TestMissingPostgresFailsInCI(t *testing.T) {
	for _, tc := range []struct {
		ci   string
		fail bool
	}{{"true", true}, {"", false}, {"false", false}} {
		msg, fail := missingPostgres(tc.ci)
		if fail != tc.fail || !strings.Contains(msg, "apt-get install postgresql") {
			t.Errorf("CI=%q: %q, fail %v; want fail %v and the install command", tc.ci, msg, fail, tc.fail)
		}
	}
}

// serverUser picks who runs the cluster: initdb and postgres refuse to run
// as root, so under root the cluster belongs to the postgres account that
// Debian's package creates, or to nobody when there is none.
func serverUser(t *testing.T) (*syscall.Credential, string) {
	if os.Geteuid() != 0 {
		return nil, ""
	}
	for _, name := range []string{"postgres", "nobody"} {
		u, err := user.Lookup(name)
		if err != nil {
			continue
		}
		uid, err1 := strconv.ParseUint(u.Uid, 10, 32)
		gid, err2 := strconv.ParseUint(u.Gid, 10, 32)
		if err1 == nil && err2 == nil && uid != 0 {
			return &syscall.Credential{Uid: uint32(uid), Gid: uint32(gid), Groups: []uint32{}}, name
		}
	}
	t.Fatal("running as root and there is neither a postgres nor a nobody account to run the test cluster as")
	return nil, ""
}

// freePort asks the kernel for a port that is free on 127.0.0.1 now.
func freePort(t *testing.T) int {
	l, err := net.Listen("tcp", "127.0.0.1:0")
	if err != nil {
		t.Fatal(err)
	}
	defer l.Close()
	return l.Addr().(*net.TCPAddr).Port
}

// startPostgres makes, starts and fills a throwaway cluster and stops it in
// t.Cleanup.
func startPostgres(t *testing.T) *pgServer {
	t.Helper()
	bin := findPGBin()
	if bin == "" {
		msg, fail := missingPostgres(os.Getenv("CI"))
		if fail {
			t.Fatal(msg)
		}
		t.Skip(msg)
	}
	cred, account := serverUser(t)
	// Not t.TempDir: its parent folders are root-only, and the server user
	// must reach this one; nor a TMPDIR that others cannot enter.
	parent := os.TempDir()
	if st, err := os.Stat(parent); cred != nil && (err != nil || st.Mode().Perm()&0o001 == 0) {
		parent = "/tmp"
	}
	dir, err := os.MkdirTemp(parent, "costdrift-pg-")
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { os.RemoveAll(dir) })
	if cred != nil {
		if err := os.Chown(dir, int(cred.Uid), int(cred.Gid)); err != nil {
			t.Fatal(err)
		}
	}
	buf := make([]byte, 16)
	if _, err := rand.Read(buf); err != nil {
		t.Fatal(err)
	}
	s := &pgServer{bin: bin, dir: dir, port: freePort(t), password: "Pw-" + hex.EncodeToString(buf), cred: cred}

	pwfile := filepath.Join(dir, "pwfile")
	if err := os.WriteFile(pwfile, []byte(s.password+"\n"), 0o600); err != nil {
		t.Fatal(err)
	}
	if cred != nil {
		if err := os.Chown(pwfile, int(cred.Uid), int(cred.Gid)); err != nil {
			t.Fatal(err)
		}
	}
	data := filepath.Join(dir, "data")
	s.pg(t, "initdb", "-D", data, "-U", "costdrift", "--pwfile="+pwfile,
		"--auth-local=trust", "--auth-host=scram-sha-256", "--locale=C", "--encoding=UTF8", "--no-sync")
	os.Remove(pwfile)
	opts := fmt.Sprintf("-c listen_addresses=127.0.0.1 -c port=%d -c unix_socket_directories=%s -c fsync=off -c full_page_writes=off -c synchronous_commit=off -c TimeZone=UTC",
		s.port, dir)
	s.pg(t, "pg_ctl", "-D", data, "-l", filepath.Join(dir, "server.log"), "-w", "-t", "30", "-o", opts, "start")
	t.Cleanup(func() {
		cmd := s.command("pg_ctl", "-D", data, "-m", "immediate", "-w", "-t", "30", "stop")
		if out, err := cmd.CombinedOutput(); err != nil {
			t.Errorf("stopping the test cluster: %v\n%s", err, out)
		}
	})
	t.Logf("PostgreSQL from %s running as %q on 127.0.0.1:%d in %s", bin, account, s.port, dir)
	return s
}

func (s *pgServer) command(name string, args ...string) *exec.Cmd {
	cmd := exec.Command(filepath.Join(s.bin, name), args...)
	cmd.Dir = s.dir
	cmd.Env = []string{"PATH=/usr/bin:/bin", "LC_ALL=C", "HOME=" + s.dir, "TZ=UTC"}
	if s.cred != nil {
		cmd.SysProcAttr = &syscall.SysProcAttr{Credential: s.cred}
	}
	// pg_ctl sends the server's output to the log file; should a child
	// still hold the pipe, do not wait for it for ever.
	cmd.WaitDelay = 10 * time.Second
	return cmd
}

func (s *pgServer) pg(t *testing.T, name string, args ...string) {
	t.Helper()
	out, err := s.command(name, args...).CombinedOutput()
	if err != nil {
		logText, _ := os.ReadFile(filepath.Join(s.dir, "server.log"))
		t.Fatalf("%s %s: %v\n%s\n%s", name, strings.Join(args, " "), err, out, logText)
	}
}

// exec runs statements as the superuser, outside any read-only transaction.
func (s *pgServer) exec(t *testing.T, statements ...string) {
	t.Helper()
	db, err := sql.Open("pgx", s.dsn())
	if err != nil {
		t.Fatal(err)
	}
	defer db.Close()
	for _, st := range statements {
		if _, err := db.Exec(st); err != nil {
			t.Fatalf("%s: %v", st, err)
		}
	}
}

// scalar runs a one-value query as the superuser.
func (s *pgServer) scalar(t *testing.T, query string) string {
	t.Helper()
	db, err := sql.Open("pgx", s.dsn())
	if err != nil {
		t.Fatal(err)
	}
	defer db.Close()
	var v string
	if err := db.QueryRow(query).Scan(&v); err != nil {
		t.Fatalf("%s: %v", query, err)
	}
	return v
}

// The schema and rows of the test ledger. Amounts are NUMERIC without a
// scale, so that 12.345 stays as written and is rejected by the reader, not
// rounded by the table.
var pgSchema = []string{
	`CREATE TABLE gl_lines (id int PRIMARY KEY, entry_id text, line int, posted_on date, account text,
		cost_center text, amount numeric, description text, updated_at timestamptz)`,
	`INSERT INTO gl_lines VALUES
		(1, 'JE-1001', 1, '2025-01-31', '6100', 'WELD', 1234.56, 'Energy January', '2025-02-01 08:00:00+00'),
		(2, 'JE-1001', 2, '2025-01-31', '2100', NULL, -1300.00, 'Energy January', '2025-02-01 08:00:00+00'),
		(3, 'JE-1001', 3, '2025-01-31', '6100', 'WELD', 65.44, 'Energy January, meter fee', '2025-02-01 08:00:00+00'),
		(4, 'JE-1002', 1, '2025-02-28', '6200', 'PAINT', 0.10 + 0.20, 'Paint sample', '2025-03-01 09:30:00+00'),
		(5, 'JE-1002', 2, '2025-02-28', '2100', NULL, -0.30, 'Paint sample', '2025-03-01 09:30:00+00'),
		(6, 'JE-1003', 1, '2025-02-15', '6100', 'WELD', 12.345, 'Meter reading', '2025-03-01 09:30:00+00'),
		(7, 'JE-1003', 2, '2025-02-15', NULL, 'WELD', -12.35, NULL, '2025-03-01 09:30:00+00'),
		(8, 'JE-1004', 1, '2025-03-31', '6500', 'ASSY', 800.00, 'Rent March', '2025-04-02 07:15:00.123456+00'),
		(9, 'JE-1004', 2, '2025-03-31', '2100', NULL, -800.00, 'Rent March', '2025-04-02 07:15:00.123456+00')`,
	`CREATE TABLE activity (month date, driver text, cost_center text, value numeric, unit text)`,
	`INSERT INTO activity VALUES
		('2025-01-01', 'machine_hours', 'WELD', 410.5, 'machine hour'),
		('2025-01-01', 'frames_built', NULL, 340, 'frame'),
		('2025-02-01', 'machine_hours', 'WELD', -3, 'machine hour'),
		('2025-02-01', NULL, 'PAINT', 12, NULL),
		('2025-02-01', 'frames_built', NULL, 331, 'frame')`,
	`CREATE TABLE chart (account text, name text, type text, account_group text)`,
	`INSERT INTO chart VALUES
		('6100', 'Energy', 'expense', 'Production overhead'),
		('6200', 'Paint and consumables', 'expense', 'Production overhead'),
		(NULL, 'Unassigned', 'expense', NULL),
		('2100', 'Trade payables', 'liability', 'Payables')`,
	`CREATE SEQUENCE gl_seq`,
	// A function that writes: the query guard cannot see inside it.
	`CREATE FUNCTION purge_lines() RETURNS int LANGUAGE plpgsql AS $$ BEGIN DELETE FROM gl_lines; RETURN 0; END $$`,
}

func pgOptions(s *pgServer, query string) Options {
	return Options{Source: "erp", Driver: "postgres", DSN: s.dsn(), DSNOrigin: "environment variable ERP_DSN",
		Query: query, Currency: eur(), Period: monthly, Timeout: 20 * time.Second}
}

// TestPostgres starts one cluster for all its subtests: making a cluster
// takes about a second, which the suite should spend once.
func TestPostgres(t *testing.T) {
	s := startPostgres(t)
	s.exec(t, pgSchema...)
	ctx := context.Background()

	t.Run("ledger lines", func(t *testing.T) {
		rec := &recorder{}
		res, err := ReadLedger(ctx, pgOptions(s, `SELECT entry_id, line, posted_on AS date, account, cost_center, amount, description
			FROM gl_lines ORDER BY id`), rec)
		if err != nil {
			t.Fatal(err)
		}
		if res.Rows != 9 {
			t.Errorf("read %d rows, want 9", res.Rows)
		}
		checkLines(t, rec.Lines, []costdrift.LedgerLine{
			line("erp", "JE-1001", 1, "2025-01-31", "6100", "WELD", 123456, "Energy January"),
			line("erp", "JE-1001", 2, "2025-01-31", "2100", "", -130000, "Energy January"),
			line("erp", "JE-1001", 3, "2025-01-31", "6100", "WELD", 6544, "Energy January, meter fee"),
			// NUMERIC 0.10 + 0.20 is 0.30 exactly: 30 cents.
			line("erp", "JE-1002", 1, "2025-02-28", "6200", "PAINT", 30, "Paint sample"),
			line("erp", "JE-1002", 2, "2025-02-28", "2100", "", -30, "Paint sample"),
			line("erp", "JE-1004", 1, "2025-03-31", "6500", "ASSY", 80000, "Rent March"),
			line("erp", "JE-1004", 2, "2025-03-31", "2100", "", -80000, "Rent March"),
		})
		checkRejects(t, rec.Rejects, []costdrift.Reject{
			rej("erp", "erp row 6 (entry JE-1003, line 1)", `bad amount: amount "12.345": more decimals than the currency's minor unit (EUR has 2)`,
				`entry_id="JE-1003", line=1, date=2025-02-15, account="6100", cost_center="WELD", amount="12.345", description="Meter reading"`),
			rej("erp", "erp row 7 (entry JE-1003, line 2)", "missing account",
				`entry_id="JE-1003", line=2, date=2025-02-15, account=NULL, cost_center="WELD", amount="-12.35", description=NULL`),
		})
	})

	t.Run("debit and credit through a column mapping", func(t *testing.T) {
		opt := pgOptions(s, `SELECT entry_id AS "Beleg", line, posted_on, account, cost_center,
			CASE WHEN amount > 0 THEN amount END AS soll, CASE WHEN amount < 0 THEN -amount END AS haben
			FROM gl_lines WHERE entry_id = 'JE-1004' ORDER BY id`)
		opt.Columns = map[string]string{"entry_id": "beleg", "date": "POSTED_ON", "debit": "Soll", "credit": "haben"}
		rec := &recorder{}
		if _, err := ReadLedger(ctx, opt, rec); err != nil {
			t.Fatal(err)
		}
		checkLines(t, rec.Lines, []costdrift.LedgerLine{
			line("erp", "JE-1004", 1, "2025-03-31", "6500", "ASSY", 80000, ""),
			line("erp", "JE-1004", 2, "2025-03-31", "2100", "", -80000, ""),
		})
		checkRejects(t, rec.Rejects, nil)
	})

	t.Run("floating-point amounts", func(t *testing.T) {
		// A double that is a short decimal is read as that decimal; the
		// double sum 0.1 + 0.2 is 0.30000000000000004 (IEEE 754 binary64,
		// common practice) and is rejected, not rounded.
		rec := &recorder{}
		_, err := ReadLedger(ctx, pgOptions(s, `SELECT 'F-1' AS entry_id, 1 AS line, DATE '2025-01-31' AS date, '6100' AS account,
			0.3::float8 AS amount
			UNION ALL SELECT 'F-2', 1, DATE '2025-01-31', '6100', 0.1::float8 + 0.2::float8`), rec)
		if err != nil {
			t.Fatal(err)
		}
		checkLines(t, rec.Lines, []costdrift.LedgerLine{line("erp", "F-1", 1, "2025-01-31", "6100", "", 30, "")})
		checkRejects(t, rec.Rejects, []costdrift.Reject{rej("erp", "erp row 2 (entry F-2, line 1)",
			`bad amount: amount "0.30000000000000004": more decimals than the currency's minor unit (EUR has 2) (a floating-point column: store or sum amounts as NUMERIC or DECIMAL)`,
			`entry_id="F-2", line=1, date=2025-01-31, account="6100", amount=0.30000000000000004`)})
	})

	t.Run("aggregated", func(t *testing.T) {
		opt := pgOptions(s, `SELECT to_char(posted_on, 'YYYY-MM') AS period, account, cost_center, SUM(amount) AS amount
			FROM gl_lines GROUP BY 1, 2, 3 ORDER BY 1, 2, 3`)
		opt.Aggregated = true
		rec := &recorder{}
		res, err := ReadLedger(ctx, opt, rec)
		if err != nil {
			t.Fatal(err)
		}
		if res.Rows != 8 {
			t.Errorf("read %d rows, want 8", res.Rows)
		}
		// Sums by hand from pgSchema: 6100/WELD January 1234.56 + 65.44 =
		// 1300.00; February 12.345 has three decimals.
		checkLines(t, rec.Lines, []costdrift.LedgerLine{
			sum("erp", "2025-01", "2100", "", "2025-01-31", -130000),
			sum("erp", "2025-01", "6100", "WELD", "2025-01-31", 130000),
			sum("erp", "2025-02", "2100", "", "2025-02-28", -30),
			sum("erp", "2025-02", "6200", "PAINT", "2025-02-28", 30),
			sum("erp", "2025-03", "2100", "", "2025-03-31", -80000),
			sum("erp", "2025-03", "6500", "ASSY", "2025-03-31", 80000),
		})
		checkRejects(t, rec.Rejects, []costdrift.Reject{
			rej("erp", "erp row 4 (period 2025-02, account 6100, cost centre WELD)", `bad amount: amount "12.345": more decimals than the currency's minor unit (EUR has 2)`,
				`period="2025-02", account="6100", cost_center="WELD", amount="12.345"`),
			rej("erp", "erp row 6 (period 2025-02, cost centre WELD)", "missing account",
				`period="2025-02", account=NULL, cost_center="WELD", amount="-12.35"`),
		})
	})

	t.Run("aggregated with a date as period", func(t *testing.T) {
		opt := pgOptions(s, `SELECT date_trunc('month', posted_on) AS period, account, SUM(amount) AS amount
			FROM gl_lines WHERE account = '6500' GROUP BY 1, 2`)
		opt.Aggregated = true
		rec := &recorder{}
		if _, err := ReadLedger(ctx, opt, rec); err != nil {
			t.Fatal(err)
		}
		checkLines(t, rec.Lines, []costdrift.LedgerLine{sum("erp", "2025-03", "6500", "", "2025-03-31", 80000)})
	})

	t.Run("activity", func(t *testing.T) {
		rec := &recorder{}
		res, err := ReadActivity(ctx, pgOptions(s, `SELECT month AS period, driver, cost_center, value, unit FROM activity ORDER BY month, driver`), rec)
		if err != nil {
			t.Fatal(err)
		}
		if res.Rows != 5 {
			t.Errorf("read %d rows, want 5", res.Rows)
		}
		checkActivity(t, rec.Values, []costdrift.ActivityValue{
			act("erp", "2025-01", "frames_built", "", 340, "frame"),
			act("erp", "2025-01", "machine_hours", "WELD", 410.5, "machine hour"),
			act("erp", "2025-02", "frames_built", "", 331, "frame"),
		})
		checkRejects(t, rec.Rejects, []costdrift.Reject{
			rej("erp", "erp row 4 (period 2025-02, driver machine_hours, cost centre WELD)", `bad value "-3": activity cannot be negative`,
				`period=2025-02-01, driver="machine_hours", cost_center="WELD", value="-3", unit="machine hour"`),
			rej("erp", "erp row 5 (period 2025-02, cost centre PAINT)", "missing driver",
				`period=2025-02-01, driver=NULL, cost_center="PAINT", value="12", unit=NULL`),
		})
	})

	t.Run("chart of accounts", func(t *testing.T) {
		opt := pgOptions(s, `SELECT account, name, type, account_group FROM chart`)
		opt.Columns = map[string]string{"group": "account_group"}
		rec := &recorder{}
		if _, err := ReadAccounts(ctx, opt, rec); err != nil {
			t.Fatal(err)
		}
		want := []costdrift.Account{
			{Source: "erp", Account: "6100", Name: "Energy", Type: "expense", Group: "Production overhead"},
			{Source: "erp", Account: "6200", Name: "Paint and consumables", Type: "expense", Group: "Production overhead"},
			{Source: "erp", Account: "2100", Name: "Trade payables", Type: "liability", Group: "Payables"},
		}
		if !reflect.DeepEqual(rec.Accounts, want) {
			t.Errorf("accounts:\n got  %+v\n want %+v", rec.Accounts, want)
		}
		checkRejects(t, rec.Rejects, []costdrift.Reject{rej("erp", "erp row 3", "missing account",
			`account=NULL, name="Unassigned", type="expense", account_group=NULL`)})
	})

	t.Run("missing columns fail the whole query", func(t *testing.T) {
		rec := &recorder{}
		_, err := ReadLedger(ctx, pgOptions(s, `SELECT entry_id, posted_on, amount FROM gl_lines`), rec)
		wantError(t, err, "the query result has no column line, date, account (found: entry_id, posted_on, amount)", "ROW_NUMBER")
		if !rec.Empty() {
			t.Errorf("wrote %+v", rec)
		}
	})

	t.Run("a write is refused before it is sent", func(t *testing.T) {
		for _, q := range []string{
			`WITH gone AS (DELETE FROM gl_lines RETURNING *) SELECT entry_id, line, posted_on AS date, account, amount FROM gone`,
			`SELECT 1 AS account; DROP TABLE gl_lines`,
		} {
			_, err := ReadAccounts(ctx, pgOptions(s, q), &recorder{})
			wantError(t, err, "query refused")
		}
		if n := s.scalar(t, "SELECT count(*) FROM gl_lines"); n != "9" {
			t.Errorf("gl_lines has %s rows after the refused writes, want 9", n)
		}
	})

	t.Run("a write the guard cannot see is refused by the server", func(t *testing.T) {
		// PostgreSQL refuses these inside a READ ONLY transaction with
		// SQLSTATE 25006 (read_only_sql_transaction).
		// Switching the transaction back to read-write fails with 25001
		// (active_sql_transaction).
		tests := []struct{ name, query, want, state string }{
			{"nextval advances a sequence", `SELECT nextval('gl_seq')::text AS account`, "cannot execute nextval() in a read-only transaction", "SQLSTATE 25006"},
			{"a function that deletes", `SELECT purge_lines()::text AS account`, "cannot execute DELETE in a read-only transaction", "SQLSTATE 25006"},
			{"switching the transaction to read-write", `SELECT set_config('transaction_read_only', 'off', true) AS account`, "transaction read-write mode must be set before any query", "SQLSTATE 25001"},
		}
		for _, tc := range tests {
			t.Run(tc.name, func(t *testing.T) {
				rec := &recorder{}
				_, err := ReadAccounts(ctx, pgOptions(s, tc.query), rec)
				wantError(t, err, "postgres refused the query", tc.want, tc.state)
				if !rec.Empty() {
					t.Errorf("wrote %+v", rec)
				}
			})
		}
		if v := s.scalar(t, "SELECT last_value::text || ' ' || is_called::text FROM gl_seq"); v != "1 false" {
			t.Errorf("gl_seq is %q, want 1 false (never advanced)", v)
		}
		if n := s.scalar(t, "SELECT count(*) FROM gl_lines"); n != "9" {
			t.Errorf("gl_lines has %s rows, want 9", n)
		}
	})

	t.Run("timeout", func(t *testing.T) {
		opt := pgOptions(s, `SELECT pg_sleep(10)::text AS account`)
		opt.Timeout = 300 * time.Millisecond
		start := time.Now()
		_, err := ReadAccounts(ctx, opt, &recorder{})
		wantError(t, err, "the query did not finish within its timeout of 300ms")
		if !errors.Is(err, context.DeadlineExceeded) {
			t.Errorf("errors.Is(%v, context.DeadlineExceeded) is false", err)
		}
		if errors.Unwrap(err) != nil {
			t.Errorf("the timeout error wraps %v", errors.Unwrap(err))
		}
		if d := time.Since(start); d > 3*time.Second {
			t.Errorf("took %v to give up, want about 300ms", d)
		}
	})

	t.Run("connection string never in an error", func(t *testing.T) {
		const secret = "Wr0ng-S3cret-4711"
		tests := []struct{ name, dsn, want string }{
			{"wrong password, URL", fmt.Sprintf("postgres://costdrift:%s@127.0.0.1:%d/postgres?sslmode=disable", secret, s.port),
				"password authentication failed"},
			{"wrong password, key=value, quoted", fmt.Sprintf("host=127.0.0.1 port=%d user=costdrift password='%s' dbname=postgres sslmode=disable", s.port, secret),
				"password authentication failed"},
			{"malformed URL", "postgres://costdrift:" + secret + "@127.0.0.1:notaport/postgres", "cannot be parsed"},
			{"malformed key=value", "host=127.0.0.1 password=" + secret + " port=notaport", "cannot be parsed"},
			{"no server at either of two hosts", "postgres://costdrift:" + secret + "@127.0.0.1:1,127.0.0.1:2/postgres?sslmode=disable", "connection refused"},
			{"nothing listens", "postgres://costdrift:" + secret + "@127.0.0.1:1/postgres?sslmode=disable", "cannot connect"},
		}
		for _, tc := range tests {
			t.Run(tc.name, func(t *testing.T) {
				opt := pgOptions(s, "SELECT account FROM chart")
				opt.DSN = tc.dsn
				_, err := ReadAccounts(ctx, opt, &recorder{})
				wantError(t, err, tc.want, "environment variable ERP_DSN")
				for e := error(err); e != nil; e = errors.Unwrap(e) {
					if strings.Contains(e.Error(), secret) {
						t.Errorf("the password is in %q", e)
					}
				}
			})
		}
		// The right password, used by every other subtest, does not show
		// in a server error either.
		_, err := ReadAccounts(ctx, pgOptions(s, "SELECT no_such_column AS account FROM chart"), &recorder{})
		wantError(t, err, `column "no_such_column" does not exist`)
		if strings.Contains(err.Error(), s.password) {
			t.Errorf("the password is in %q", err)
		}
	})

	t.Run("watermark", func(t *testing.T) {
		// Runs last: it adds a row. The first read binds NULL, which
		// COALESCE turns into -infinity, and reads everything; the next
		// binds the newest updated_at and reads what changed since. The
		// cast gives PostgreSQL the parameter's type.
		const q = `SELECT entry_id, line, posted_on AS date, account, cost_center, amount, updated_at FROM gl_lines
			WHERE updated_at > COALESCE(:watermark::timestamptz, '-infinity') AND account IS NOT NULL AND scale(amount) <= 2 ORDER BY id`
		opt := pgOptions(s, q)
		opt.WatermarkColumn = "updated_at"
		rec := &recorder{}
		res, err := ReadLedger(ctx, opt, rec)
		if err != nil {
			t.Fatal(err)
		}
		if res.Rows != 7 || len(rec.Lines) != 7 {
			t.Errorf("first read: %d rows, %d lines; want 7 and 7", res.Rows, len(rec.Lines))
		}
		checkInstant(t, res.Watermark, "2025-04-02T07:15:00.123456Z")

		opt.Watermark = res.Watermark
		res, err = ReadLedger(ctx, opt, &recorder{})
		if err != nil || res.Rows != 0 {
			t.Fatalf("second read: %d rows, error %v; want none", res.Rows, err)
		}
		checkInstant(t, res.Watermark, "2025-04-02T07:15:00.123456Z")

		s.exec(t, `INSERT INTO gl_lines VALUES (10, 'JE-1005', 1, '2025-04-30', '6100', 'WELD', 99.90, 'Energy April', '2025-05-02 06:00:00+00')`)
		rec = &recorder{}
		res, err = ReadLedger(ctx, opt, rec)
		if err != nil {
			t.Fatal(err)
		}
		checkLines(t, rec.Lines, []costdrift.LedgerLine{line("erp", "JE-1005", 1, "2025-04-30", "6100", "WELD", 9990, "")})
		checkInstant(t, res.Watermark, "2025-05-02T06:00:00Z")
	})
}

// checkInstant compares a watermark with an RFC 3339 time as instants: the
// driver gives timestamptz in the machine's zone.
func checkInstant(t *testing.T, got, want string) {
	t.Helper()
	g, err := time.Parse(time.RFC3339Nano, got)
	w, _ := time.Parse(time.RFC3339Nano, want)
	if err != nil || !g.Equal(w) {
		t.Errorf("watermark %q, want the instant %s", got, want)
	}
}
