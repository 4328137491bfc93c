package main

import (
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// The saft kind end to end on Skatteetaten's 888888888 example
// (testdata/saft/, see the README there): analysis_type reaches the
// reader, departments become cost centres, and the ledger and the chart of
// accounts land in the store. Expected values: 170 lines of which 8 are
// split between departments into 184 rows and 22 accounts
// (internal/saftsource tests); the payroll vouchers 1007, 1021, 1035 and
// 1051 each give department 102 199000 NOK on account 5000 (read by hand
// from the XML, e.g. lines 1479-1510), 4 x 199000 = 796000 NOK; a
// double-entry ledger adds up to zero (common practice).
func TestSyncSAFTSource(t *testing.T) {
	example, err := filepath.Abs("../../testdata/saft/example-888888888-v1.20.xml")
	if err != nil {
		t.Fatal(err)
	}
	cfg, dir := saftConfig(t, example)
	out := mustRun(t, "--config", cfg, "sync")
	if !strings.Contains(out, "rows: 184 read, 184 stored") || !strings.Contains(out, "rows: 22 read, 22 stored") {
		t.Errorf("sync output:\n%s", out)
	}
	store := filepath.Join(dir, "costdrift.db")
	for query, want := range map[string]int{
		"SELECT COUNT(*) FROM gl_lines WHERE source = 'gl'":                                                          184,
		"SELECT SUM(amount_minor) FROM gl_lines":                                                                     0,
		"SELECT SUM(amount_minor) FROM gl_lines WHERE account = '5000' AND cost_center = '102'":                      79600000,
		"SELECT COUNT(*) FROM gl_lines WHERE entry_id = '2017/123ABC/1007' AND cost_center IN ('100', '101', '102')": 3,
		"SELECT COUNT(*) FROM accounts WHERE source = 'coa'":                                                         22,
		"SELECT COUNT(*) FROM accounts WHERE account = '5000' AND name = 'Lønn til ansatt' AND account_group = '50'": 1,
	} {
		if got := count(t, store, query); got != want {
			t.Errorf("%s = %d, want %d", query, got, want)
		}
	}
	// Syncing the same file again changes nothing.
	mustRun(t, "--config", cfg, "sync")
	if n := count(t, store, "SELECT COUNT(*) FROM gl_lines"); n != 184 {
		t.Errorf("after a second sync: %d lines, want 184", n)
	}
}

// A file whose control totals disagree with its lines fails its source,
// and nothing of it is stored. Voucher 1007 (374000 NOK of payroll) is cut
// out, so 52 of the declared 53 entries are read.
func TestSyncSAFTIncompleteFileFails(t *testing.T) {
	data, err := os.ReadFile("../../testdata/saft/example-888888888-v1.20.xml")
	if err != nil {
		t.Fatal(err)
	}
	s := string(data)
	start := strings.Index(s, "<n1:Transaction>\r\n\t\t\t\t<n1:TransactionID>1007<")
	end := strings.Index(s, "<n1:Transaction>\r\n\t\t\t\t<n1:TransactionID>1008<")
	if start < 0 || end < start {
		t.Fatal("voucher 1007 not found in the example")
	}
	damaged := filepath.Join(t.TempDir(), "saft.xml")
	if err := os.WriteFile(damaged, []byte(s[:start]+s[end:]), 0o600); err != nil {
		t.Fatal(err)
	}
	cfg, dir := saftConfig(t, damaged)
	_, err = run(t, "--config", cfg, "sync")
	if err == nil || !strings.Contains(err.Error(), "source gl failed: ") ||
		!strings.Contains(err.Error(), "control totals do not match, the file is incomplete or damaged: NumberOfEntries declares 53, the file holds 52 transactions") ||
		strings.Contains(err.Error(), "\n") {
		t.Fatalf("sync: %v", err)
	}
	store := filepath.Join(dir, "costdrift.db")
	if n := count(t, store, "SELECT COUNT(*) FROM gl_lines"); n != 0 {
		t.Errorf("%d lines stored from an incomplete file", n)
	}
	if n := count(t, store, "SELECT COUNT(*) FROM sync_runs WHERE source = 'gl' AND status = 'failed' AND error LIKE '%TotalDebit declares 9487049.35%'"); n != 1 {
		t.Errorf("failed run not recorded")
	}
}

// saftConfig writes a config with one SAF-T file as both the ledger
// (departments as cost centres) and the chart of accounts.
func saftConfig(t *testing.T, path string) (string, string) {
	t.Helper()
	dir := t.TempDir()
	cfg := filepath.Join(dir, "costdrift.yaml")
	yaml := `store: costdrift.db
currency: NOK
sources:
  ledger:
    - {name: gl, kind: saft, path: "` + path + `", analysis_type: A}
  accounts:
    - {name: coa, kind: saft, path: "` + path + `"}
`
	if err := os.WriteFile(cfg, []byte(yaml), 0o600); err != nil {
		t.Fatal(err)
	}
	return cfg, dir
}
