package main

import (
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/costdrift/costdrift/internal/config"
	"github.com/costdrift/costdrift/internal/pipeline"
)

// init leaves every source its starter config names either in place or
// listed, with its columns, among the files to fill; the optional chart of
// accounts is written with its header only, so that the first sync with
// only ledger files added fails on nothing but the activity file.
func TestInitThenSyncWithOnlyALedger(t *testing.T) {
	dir := t.TempDir()
	cfg := filepath.Join(dir, "costdrift.yaml")
	out := mustRun(t, "--config", cfg, "init")

	// The hint lists each file to fill with its columns (README, Sources).
	for _, want := range []string{
		filepath.Join(dir, "data", "gl", "*.csv") + "     ledger lines: entry_id, line, date, account, cost_center, amount, description",
		filepath.Join(dir, "data", "activity.csv") + " activity per period: period, driver, value, cost_center, unit (or period, then one column per driver)",
		filepath.Join(dir, "data", "accounts.csv") + " chart of accounts, optional: account, name, type, group",
	} {
		if !strings.Contains(out, want) {
			t.Errorf("init's hint lacks %q:\n%s", want, out)
		}
	}
	chart, err := os.ReadFile(filepath.Join(dir, "data", "accounts.csv"))
	if err != nil {
		t.Fatalf("init wrote no chart of accounts: %v", err)
	}
	if string(chart) != "account,name,type,group\n" {
		t.Errorf("accounts.csv = %q, want its header only", chart)
	}
	if st, err := os.Stat(filepath.Join(dir, "data", "accounts.csv")); err != nil || st.Mode().Perm() != 0o600 {
		t.Errorf("accounts.csv mode = %v, want 0600", st.Mode().Perm())
	}

	// Every source of the starter is named in the hint.
	c, err := config.Load(cfg, pipeline.Kinds())
	if err != nil {
		t.Fatal(err)
	}
	for _, list := range [][]config.Source{c.Sources.Ledger, c.Sources.Activity, c.Sources.Accounts} {
		for _, s := range list {
			if !strings.Contains(out, c.Path(s.Path)+" ") {
				t.Errorf("source %s (%s) is not among the files to fill:\n%s", s.Name, s.Path, out)
			}
		}
	}

	if err := os.WriteFile(filepath.Join(dir, "data", "gl", "2026-01.csv"), []byte(envTestLedger), 0o600); err != nil {
		t.Fatal(err)
	}
	stdout, _, err := runSplit(t, "--config", cfg, "sync")
	want := "source ops failed: no file matches " + filepath.Join(dir, "data", "activity.csv") + " (sources ops path in " + cfg + ")"
	if err == nil || err.Error() != want {
		t.Fatalf("first sync: %v, want %s", err, want)
	}
	if !strings.Contains(stdout, "coa        accounts files: 1 read, 0 unchanged | rows: 0 read, 0 stored, 0 replaced, 0 rejected\n") ||
		!strings.Contains(stdout, "gl         ledger   files: 1 read, 0 unchanged | rows: 2 read, 2 stored, 0 replaced, 0 rejected\n") {
		t.Errorf("first sync:\n%s", stdout)
	}

	// With the activity file filled, every source syncs.
	if err := os.WriteFile(filepath.Join(dir, "data", "activity.csv"), []byte("period,driver,value\n2026-01,frames_built,100\n"), 0o600); err != nil {
		t.Fatal(err)
	}
	mustRun(t, "--config", cfg, "sync")
}

// init --force rewrites the config but never a chart of accounts the user
// has filled.
func TestInitForceKeepsTheChartOfAccounts(t *testing.T) {
	dir := t.TempDir()
	cfg := filepath.Join(dir, "costdrift.yaml")
	mustRun(t, "--config", cfg, "init")
	chart := filepath.Join(dir, "data", "accounts.csv")
	const filled = "account,name\n6100,Rent\n"
	if err := os.WriteFile(chart, []byte(filled), 0o600); err != nil {
		t.Fatal(err)
	}
	out := mustRun(t, "--config", cfg, "init", "--force")
	if got, err := os.ReadFile(chart); err != nil || string(got) != filled {
		t.Errorf("accounts.csv = %q, %v; want the user's %q", got, err, filled)
	}
	if strings.Contains(out, "header only") {
		t.Errorf("init --force says it wrote the chart it kept:\n%s", out)
	}
}
