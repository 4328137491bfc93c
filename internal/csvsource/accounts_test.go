package csvsource

import (
	"context"
	"path/filepath"
	"reflect"
	"strings"
	"testing"

	"github.com/costdrift/costdrift/internal/costdrift"
)

func account(source, number, name, typ, group string) costdrift.Account {
	return costdrift.Account{Source: source, Account: number, Name: name, Type: typ, Group: group}
}

func readAccounts(t *testing.T, path string, opt Options) (*recorder, int) {
	t.Helper()
	rec := &recorder{}
	n, err := ReadAccounts(context.Background(), path, filepath.Base(path), opt, rec)
	if err != nil {
		t.Fatalf("ReadAccounts: %v", err)
	}
	return rec, n
}

func TestAccountsFixture(t *testing.T) {
	opt := options()
	opt.Source = "coa"
	rec, n := readAccounts(t, filepath.Join("..", "..", "testdata", "csv", "accounts", "accounts.csv"), opt)
	if n != 5 {
		t.Errorf("read %d rows, want 5", n)
	}
	want := []costdrift.Account{
		account("coa", "2100", "Trade payables", "liability", "Payables"),
		account("coa", "6100", "Energy", "expense", "Production overhead"),
		account("coa", "6200", "Welding consumables", "expense", "Production overhead"),
		account("coa", "6500", "Rent and leases", "expense", "Occupancy"),
	}
	if !reflect.DeepEqual(rec.Accounts, want) {
		t.Errorf("accounts:\n got  %+v\n want %+v", rec.Accounts, want)
	}
	checkRejects(t, rec.Rejects, []costdrift.Reject{rej("coa", "accounts.csv:5", "missing account", ",Unassigned,expense,Other")})
}

func TestAccountsOptionalColumnsAndMapping(t *testing.T) {
	opt := options()
	opt.Source = "coa"
	opt.Columns = map[string]string{"account": "Konto", "name": "Bezeichnung"}
	path := writeFile(t, "kontenplan.csv", "\xef\xbb\xbfKONTO;Bezeichnung\n6200;Schweißzubehör\n 6300 ; Wartung \n6400\n6500;Miete;extra\n;ohne Nummer\n6600;\"Miete \"Halle\"\"\n")
	rec, n := readAccounts(t, path, opt)
	if n != 6 {
		t.Errorf("read %d rows, want 6", n)
	}
	want := []costdrift.Account{account("coa", "6200", "Schweißzubehör", "", ""), account("coa", "6300", "Wartung", "", "")}
	if !reflect.DeepEqual(rec.Accounts, want) {
		t.Errorf("accounts:\n got  %+v\n want %+v", rec.Accounts, want)
	}
	checkRejects(t, rec.Rejects, []costdrift.Reject{
		rej("coa", "kontenplan.csv:4", "has 1 fields, the header has 2", "6400"),
		rej("coa", "kontenplan.csv:5", "has 3 fields, the header has 2", "6500;Miete;extra"),
		rej("coa", "kontenplan.csv:6", "missing account", ";ohne Nummer"),
		rej("coa", "kontenplan.csv:7", `malformed CSV: extraneous or missing " in quoted-field`, `6600;"Miete "Halle""`),
	})
}

func TestAccountsWholeFileErrors(t *testing.T) {
	for name, tc := range map[string]struct{ content, want string }{
		"no account column": {"number,name\n6200,Energy\n", "accounts.csv: header has no column account (found: number, name); expected account, name, type, group"},
		"empty":             {"", "accounts.csv is empty"},
	} {
		t.Run(name, func(t *testing.T) {
			rec := &recorder{}
			n, err := ReadAccounts(context.Background(), writeFile(t, "accounts.csv", tc.content), "accounts.csv", options(), rec)
			if err == nil || !strings.Contains(err.Error(), tc.want) {
				t.Fatalf("error %v, want one containing %q", err, tc.want)
			}
			oneLine(t, "error", err.Error())
			if n != 0 || !rec.Empty() {
				t.Errorf("read %d rows, wrote %+v; want nothing", n, rec)
			}
		})
	}
	rec := &recorder{}
	_, err := ReadAccounts(context.Background(), filepath.Join(t.TempDir(), "none.csv"), "none.csv", options(), rec)
	if err == nil || err.Error() != "cannot read none.csv: no such file or directory" {
		t.Errorf("missing file: error %v", err)
	}
}
