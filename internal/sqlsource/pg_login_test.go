package sqlsource

import (
	"context"
	"fmt"
	"os"
	"reflect"
	"strings"
	"testing"

	"github.com/costdrift/costdrift/internal/costdrift"
)

// TestPostgresLoginRights reproduces a write that neither the query guard
// nor the read-only transaction stops: dblink_exec (the dblink extension
// that ships with the server) runs its command in a session of its own,
// which the source's READ ONLY transaction does not reach. The guard now
// refuses dblink_exec by name, but behind a function of the database's own
// it sees only that function's name: there only the login's rights stop the
// write. So the source warns, naming itself, when its login can write, and
// says nothing for a login that can only read.
func TestPostgresLoginRights(t *testing.T) {
	s := startPostgres(t)
	if s.scalar(t, "SELECT count(*) FROM pg_available_extensions WHERE name = 'dblink'") != "1" {
		msg := "the dblink extension is not installed beside the server in " + s.bin + " (Debian: it ships in postgresql-NN; elsewhere postgresql-contrib)"
		if os.Getenv("CI") == "true" {
			t.Fatal(msg + " (CI=true: tests may not be skipped)")
		}
		t.Skip(msg)
	}
	// Passwords of a throwaway cluster that listens on 127.0.0.1 only.
	const clerkPW, readerPW, memberPW, builderPW, keeperPW = "Clerk-pw-7", "Reader-pw-7", "Member-pw-7", "Builder-pw-7", "Keeper-pw-7"
	s.exec(t,
		`CREATE EXTENSION dblink`,
		`CREATE TABLE victim (id int)`,
		`INSERT INTO victim VALUES (1), (2), (3)`,
		`CREATE TABLE chart (account text, name text)`,
		`INSERT INTO chart VALUES ('6100', 'Energy')`,
		// A function of the database: the guard sees its name only.
		`CREATE FUNCTION run_remote(conn text, command text) RETURNS text LANGUAGE sql AS $$ SELECT dblink_exec(conn, command) $$`,
		// clerk may delete from victim; member may insert through the role
		// it belongs to; builder may create tables in a schema; reader may
		// only read.
		`CREATE ROLE clerk LOGIN PASSWORD '`+clerkPW+`'`,
		`GRANT SELECT ON chart TO clerk`,
		`GRANT SELECT, DELETE ON victim TO clerk`,
		`CREATE ROLE writers NOLOGIN`,
		`GRANT INSERT ON victim TO writers`,
		`CREATE ROLE member LOGIN PASSWORD '`+memberPW+`' IN ROLE writers`,
		`GRANT SELECT ON chart TO member`,
		`CREATE SCHEMA scratch`,
		`CREATE ROLE builder LOGIN PASSWORD '`+builderPW+`'`,
		`GRANT USAGE, CREATE ON SCHEMA scratch TO builder`,
		`GRANT SELECT ON chart TO builder`,
		`CREATE ROLE reader LOGIN PASSWORD '`+readerPW+`'`,
		`GRANT SELECT ON chart, victim TO reader`,
		// keeper may write five tables: the warning lists four.
		`CREATE TABLE t1 (a int)`, `CREATE TABLE t2 (a int)`, `CREATE TABLE t3 (a int)`, `CREATE TABLE t4 (a int)`, `CREATE TABLE t5 (a int)`,
		`CREATE ROLE keeper LOGIN PASSWORD '`+keeperPW+`'`,
		`GRANT SELECT ON chart TO keeper`,
		`GRANT UPDATE ON t1, t2, t3, t4, t5 TO keeper`,
		// A table name with a line break and a terminal escape in it.
		`CREATE ROLE odd LOGIN PASSWORD 'Odd-pw-7'`,
		`GRANT SELECT ON chart TO odd`,
		"CREATE TABLE \"x\ny\x1b[2J\" (a int)",
		"GRANT DELETE ON \"x\ny\x1b[2J\" TO odd",
	)
	dsn := func(user, pw string) string {
		return fmt.Sprintf("postgres://%s:%s@127.0.0.1:%d/postgres?sslmode=disable", user, pw, s.port)
	}
	// The connection string dblink opens, as the query's author writes it.
	remote := func(user, pw string) string {
		return fmt.Sprintf("host=127.0.0.1 port=%d dbname=postgres user=%s password=%s", s.port, user, pw)
	}
	victims := func() string { return s.scalar(t, "SELECT count(*) FROM victim") }
	ctx := context.Background()
	read := func(t *testing.T, dsn, query string) ([]costdrift.Account, Result, error) {
		t.Helper()
		opt := pgOptions(s, query)
		opt.DSN = dsn
		rec := &recorder{}
		res, err := ReadAccounts(ctx, opt, rec)
		return rec.Accounts, res, err
	}

	t.Run("the guard refuses dblink_exec by name", func(t *testing.T) {
		_, _, err := read(t, dsn("clerk", clerkPW),
			fmt.Sprintf(`SELECT dblink_exec('%s', 'DELETE FROM victim') AS account`, remote("clerk", clerkPW)))
		wantError(t, err, "query refused", "dblink_exec")
		if n := victims(); n != "3" {
			t.Errorf("victim has %s rows after the refused query, want 3", n)
		}
	})

	t.Run("a login that can write is warned about", func(t *testing.T) {
		for _, tc := range []struct {
			name, dsn string
			finding   string
		}{
			{"superuser", s.dsn(), "it is a superuser"},
			{"table privilege", dsn("clerk", clerkPW), "DELETE on public.victim"},
			{"privilege through a role", dsn("member", memberPW), "INSERT on public.victim"},
			{"create in a schema", dsn("builder", builderPW), "CREATE on schema scratch"},
			{"a name with control characters", dsn("odd", "Odd-pw-7"), `DELETE on public."x?y?[2J"`},
			{"many tables", dsn("keeper", keeperPW), "(UPDATE on public.t1; UPDATE on public.t2; UPDATE on public.t3; UPDATE on public.t4; and 1 more)"},
		} {
			t.Run(tc.name, func(t *testing.T) {
				accounts, res, err := read(t, tc.dsn, `SELECT account, name FROM chart`)
				if err != nil {
					t.Fatal(err)
				}
				if len(accounts) != 1 {
					t.Errorf("read %+v, want the one account", accounts)
				}
				if len(res.Warnings) != 1 {
					t.Fatalf("warnings %q, want one", res.Warnings)
				}
				w := res.Warnings[0]
				t.Logf("warning: %s", w)
				oneLine(t, "warning", w)
				for _, want := range []string{"source erp: its login can write", tc.finding, "give the source a login that can only read"} {
					if !strings.Contains(w, want) {
						t.Errorf("warning %q lacks %q", w, want)
					}
				}
				if strings.Contains(w, s.password) || strings.Contains(w, clerkPW) {
					t.Errorf("a password is in the warning %q", w)
				}
			})
		}
	})

	t.Run("behind a function, a login that can write deletes", func(t *testing.T) {
		accounts, res, err := read(t, dsn("clerk", clerkPW),
			fmt.Sprintf(`SELECT run_remote('%s', 'DELETE FROM victim') AS account`, remote("clerk", clerkPW)))
		if err != nil {
			t.Fatal(err)
		}
		// dblink_exec returns the command's status, "DELETE 3".
		if want := []costdrift.Account{{Source: "erp", Account: "DELETE 3"}}; !reflect.DeepEqual(accounts, want) {
			t.Errorf("read %+v, want %+v", accounts, want)
		}
		if n := victims(); n != "0" {
			t.Errorf("victim has %s rows, want 0: the attack this test shows did not happen", n)
		}
		if len(res.Warnings) != 1 || !strings.Contains(res.Warnings[0], "source erp: its login can write") {
			t.Errorf("warnings %q, want the login's write rights named", res.Warnings)
		}
		s.exec(t, `INSERT INTO victim VALUES (1), (2), (3)`)
	})

	t.Run("a login that can only read", func(t *testing.T) {
		accounts, res, err := read(t, dsn("reader", readerPW), `SELECT account, name FROM chart`)
		if err != nil {
			t.Fatal(err)
		}
		if len(accounts) != 1 || len(res.Warnings) != 0 {
			t.Errorf("read %+v with warnings %q; want the one account and no warning", accounts, res.Warnings)
		}
		// The same attack, with the only login the source was given: the
		// command runs as reader, which may not delete.
		_, res, err = read(t, dsn("reader", readerPW),
			fmt.Sprintf(`SELECT run_remote('%s', 'DELETE FROM victim') AS account`, remote("reader", readerPW)))
		wantError(t, err, "postgres refused the query", "permission denied for table victim")
		if len(res.Warnings) != 0 {
			t.Errorf("warnings %q for a login that can only read", res.Warnings)
		}
		if n := victims(); n != "3" {
			t.Errorf("victim has %s rows, want 3", n)
		}
	})

	t.Run("a check the server refuses is a warning too", func(t *testing.T) {
		// Runs last: it takes pg_namespace away from every login but the
		// superuser.
		s.exec(t, `REVOKE SELECT ON pg_catalog.pg_namespace FROM PUBLIC`)
		accounts, res, err := read(t, dsn("reader", readerPW), `SELECT account, name FROM chart`)
		if err != nil {
			t.Fatal(err)
		}
		if len(accounts) != 1 || len(res.Warnings) != 1 {
			t.Fatalf("read %+v with warnings %q; want the one account and one warning", accounts, res.Warnings)
		}
		for _, want := range []string{"source erp: could not check whether its login can write", "permission denied for table pg_namespace", "make sure it can only read"} {
			if !strings.Contains(res.Warnings[0], want) {
				t.Errorf("warning %q lacks %q", res.Warnings[0], want)
			}
		}
	})
}
