package sqlsource

import (
	"context"
	"errors"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"
)

func TestLoadDSNFromEnvironment(t *testing.T) {
	env := map[string]string{"ERP_DSN": "postgres://u:p@h/db", "BLANK": "  "}
	getenv := func(k string) string { return env[k] }
	dsn, origin, err := LoadDSN("ERP_DSN", "", getenv)
	if err != nil || dsn != "postgres://u:p@h/db" || origin != "environment variable ERP_DSN" {
		t.Errorf("got %q, %q, %v", dsn, origin, err)
	}
	for _, name := range []string{"BLANK", "UNSET"} {
		_, _, err := LoadDSN(name, "", getenv)
		wantError(t, err, "environment variable "+name+" is not set or empty")
	}
	_, _, err = LoadDSN("ERP_DSN", "dsn.txt", getenv)
	wantError(t, err, "not both")
	_, _, err = LoadDSN("", "", getenv)
	wantError(t, err, "never goes in the config")
}

func TestLoadDSNFromFile(t *testing.T) {
	const secret = "S3cret-in-a-file"
	dsn := "postgres://costdrift:" + secret + "@db.example/ledger"
	tests := []struct {
		name    string
		content string
		mode    os.FileMode
		want    string // the DSN read, or "" when refused
		refused string
	}{
		{"owner only, trailing newline", dsn + "\n", 0o600, dsn, ""},
		{"owner read-only, CRLF", dsn + "\r\n", 0o400, dsn, ""},
		{"no newline", dsn, 0o600, dsn, ""},
		{"group may read", dsn + "\n", 0o640, "", "has mode 0640"},
		{"others may read", dsn + "\n", 0o604, "", "has mode 0604"},
		{"group may write", dsn + "\n", 0o620, "", "has mode 0620"},
		{"world readable", dsn + "\n", 0o644, "", "chmod 600"},
		{"empty", "\n", 0o600, "", "is empty"},
		{"two lines", dsn + "\nhost=other\n", 0o600, "", "more than one line"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			path := filepath.Join(t.TempDir(), "erp.dsn")
			if err := os.WriteFile(path, []byte(tc.content), 0o600); err != nil {
				t.Fatal(err)
			}
			if err := os.Chmod(path, tc.mode); err != nil {
				t.Fatal(err)
			}
			got, origin, err := LoadDSN("", path, os.Getenv)
			if origin != "dsn_file "+path {
				t.Errorf("origin %q", origin)
			}
			if tc.refused == "" {
				if err != nil || got != tc.want {
					t.Errorf("got %q, %v; want %q", got, err, tc.want)
				}
				return
			}
			wantError(t, err, "dsn_file "+path, tc.refused)
			if strings.Contains(err.Error(), secret) {
				t.Errorf("the password is in %q", err)
			}
		})
	}
	_, _, err := LoadDSN("", filepath.Join(t.TempDir(), "none.dsn"), os.Getenv)
	wantError(t, err, "cannot read dsn_file", "no such file or directory")
	_, _, err = LoadDSN("", t.TempDir(), os.Getenv)
	wantError(t, err, "is not a regular file")
}

func TestRedaction(t *testing.T) {
	// Each DSN holds the password "pa:ss@w/rd" or a spelling of it; the
	// message quotes it the way a driver might.
	tests := []struct {
		name, dsn, message string
	}{
		{"URL, escaped", "postgres://u:pa%3Ass%40w%2Frd@h:5432/db", `cannot parse "postgres://u:pa%3Ass%40w%2Frd@h:5432/db": bad`},
		{"URL, decoded in the message", "postgres://u:pa%3Ass%40w%2Frd@h:5432/db", `password pa:ss@w/rd refused`},
		{"URL, unescaped", "sqlserver://u:pa:ss@w/rd@h:1433?database=gl", `invalid port ":ss@w/rd@h"`},
		{"key=value, quoted", "host=h user=u password='pa:ss@w/rd' dbname=db", `near password='pa:ss@w/rd'`},
		{"key=value, bare", "host=h user=u password=pa:ss@w/rd", `value pa:ss@w/rd is odd`},
		{"ADO, pwd", "server=h;user id=u;pwd=pa:ss@w/rd;database=gl", `login failed: pa:ss@w/rd`},
		{"ADO, braced", "server=h;user id=u;Password={pa:ss@w/rd};database=gl", `bad {pa:ss@w/rd}`},
		{"mysql", "u:pa:ss@w/rd@tcp(h:3306)/gl", `invalid DSN u:pa:ss@w/rd@tcp(h:3306)/gl`},
		{"sqlite auth", "file:gl.db?_auth&_auth_user=u&_auth_pass=pa:ss@w/rd", `cannot open pa:ss@w/rd`},
		{"URL query parameter", "postgres://h/db?user=u&password=pa:ss@w/rd", `x pa:ss@w/rd`},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			got := secrets(tc.dsn).clean(tc.message)
			for _, leak := range []string{"pa:ss@w/rd", "pa%3Ass%40w%2Frd", "ss@w", tc.dsn} {
				if strings.Contains(got, leak) {
					t.Errorf("%q still holds %q", got, leak)
				}
			}
			if !strings.Contains(got, "xxxxx") {
				t.Errorf("%q: nothing was masked", got)
			}
		})
	}
	// Fragments: a run of 4 or more bytes of the password is masked; a
	// password shorter than that only whole. Expected strings by hand.
	for _, tc := range []struct{ msg, password, want string }{
		{`invalid port ":ss@w/rd@h"`, "pa:ss@w/rd", `invalid port "xxxxx@h"`},
		{`user "pa" at host "rd"`, "pa:ss@w/rd", `user "pa" at host "rd"`},
		{`abc and ab`, "abc", `xxxxx and ab`},
		{`S3cr and 3cret and Secret`, "S3cret", `xxxxx and xxxxx and Sexxxxx`}, // "cret" is a fragment too
	} {
		if got := maskFragments(tc.msg, tc.password); got != tc.want {
			t.Errorf("maskFragments(%q, %q) = %q, want %q", tc.msg, tc.password, got, tc.want)
		}
	}
	// A message without secrets is left alone.
	if got := secrets("postgres://u:Secret@h/db").clean(`relation "gl" does not exist`); got != `relation "gl" does not exist` {
		t.Errorf("changed to %q", got)
	}
}

// TestDriverErrorsHideThePassword opens each driver with a connection
// string that holds a password and cannot work: nothing listens on port 1
// of 127.0.0.1, or the string is malformed. MySQL and SQL Server have no
// server on this machine, so this and the query guard are what is tested
// of them; PostgreSQL's real server is in TestPostgres.
func TestDriverErrorsHideThePassword(t *testing.T) {
	const secret = "Pa55-w0rd-Leak"
	sqlitePath := filepath.Join(t.TempDir(), "none", "gl.db")
	tests := []struct{ name, driver, dsn, want string }{
		{"mysql, nothing listens", "mysql", "costdrift:" + secret + "@tcp(127.0.0.1:1)/ledger", "cannot connect to the mysql database"},
		{"mysql, malformed", "mysql", "costdrift:" + secret + "@tcp(127.0.0.1:1)ledger", "cannot be parsed"},
		{"mysql, multiStatements", "mysql", "costdrift:" + secret + "@tcp(127.0.0.1:1)/ledger?multiStatements=true", "sets multiStatements"},
		{"sqlserver URL, nothing listens", "sqlserver", "sqlserver://costdrift:" + secret + "@127.0.0.1:1?database=ledger&dial+timeout=2", "cannot connect to the sqlserver database"},
		{"sqlserver ADO, nothing listens", "sqlserver", "server=127.0.0.1;port=1;user id=costdrift;password=" + secret + ";database=ledger;dial timeout=2", "cannot connect to the sqlserver database"},
		{"sqlserver URL, bad port", "sqlserver", "sqlserver://costdrift:" + secret + "@127.0.0.1:notaport?database=ledger", "sqlserver"},
		{"sqlite, no such file", "sqlite", sqlitePath + "?_auth&_auth_user=u&_auth_pass=" + secret, "does not exist"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			opt := Options{Source: "erp", Driver: tc.driver, DSN: tc.dsn, DSNOrigin: "environment variable ERP_DSN",
				Query: "SELECT account FROM chart", Currency: eur(), Period: monthly, Timeout: 10 * time.Second}
			_, err := ReadAccounts(context.Background(), opt, &recorder{})
			wantError(t, err, tc.want)
			for e := error(err); e != nil; e = errors.Unwrap(e) {
				if strings.Contains(e.Error(), secret) {
					t.Errorf("the password is in %q", e)
				}
			}
			t.Logf("%s: %v", tc.driver, err)
		})
	}
	if _, err := os.Stat(filepath.Dir(sqlitePath)); !errors.Is(err, os.ErrNotExist) {
		t.Errorf("the sqlite reader created %s", filepath.Dir(sqlitePath))
	}
}
