package main

import (
	"bytes"
	"path/filepath"
	"strings"
	"testing"
)

// runSplit executes the command line and returns what it printed on
// standard output and on standard error apart, and its error.
func runSplit(t *testing.T, args ...string) (stdout, stderr string, err error) {
	t.Helper()
	var out, errw bytes.Buffer
	root := newRoot(&out, &errw, today)
	root.SetArgs(args)
	err = root.Execute()
	return out.String(), errw.String(), err
}

const envTestLedger = "entry_id,line,date,account,cost_center,amount,description\nE1,1,2026-01-05,6100,,1200.00,rent\nE1,2,2026-01-05,2000,,-1200.00,rent\n"

// A bad value in an environment override is reported under the
// variable's name, not as a fault of the config file.
func TestEnvironmentOverrideErrorNamesTheVariable(t *testing.T) {
	cfg, _ := setup(t, envTestLedger)
	t.Setenv("COSTDRIFT_ANALYSIS_WINDOW", "abc")
	_, err := run(t, "--config", cfg, "sync")
	if want := `COSTDRIFT_ANALYSIS_WINDOW: must be a whole number, not "abc" (environment)`; err == nil || err.Error() != want {
		t.Fatalf("sync: %v, want %s", err, want)
	}
	if line := errorLine(err); strings.Contains(line, "costdrift.yaml") {
		t.Errorf("%q blames the config file", line)
	}
}

// A misspelt variable is a warning on standard error naming the variable
// meant; the command runs as it would without it.
func TestEnvironmentTypoIsWarnedAndCommandRuns(t *testing.T) {
	cfg, dir := setup(t, envTestLedger)
	t.Setenv("COSTDRIFT_ANALYSYS_WINDOW", "24")
	stdout, stderr, err := runSplit(t, "--config", cfg, "sync")
	if err != nil {
		t.Fatalf("sync: %v\n%s%s", err, stdout, stderr)
	}
	const warning = "costdrift: warning: COSTDRIFT_ANALYSYS_WINDOW matches no key; did you mean COSTDRIFT_ANALYSIS_WINDOW?\n"
	if stderr != warning {
		t.Errorf("stderr = %q, want %q", stderr, warning)
	}
	if strings.Contains(stdout, "COSTDRIFT_") {
		t.Errorf("the warning went to standard output:\n%s", stdout)
	}
	if n := count(t, filepath.Join(dir, "costdrift.db"), "SELECT COUNT(*) FROM gl_lines"); n != 2 {
		t.Errorf("%d ledger lines stored, want 2", n)
	}

	// The daemon logs it, as it logs everything else.
	_, stderr, err = runSplit(t, "--config", cfg, "run", "--once")
	if err != nil {
		t.Fatalf("run --once: %v\n%s", err, stderr)
	}
	if !strings.Contains(stderr, `level=WARN msg="config warning" file=`+cfg+` warning="COSTDRIFT_ANALYSYS_WINDOW matches no key; did you mean COSTDRIFT_ANALYSIS_WINDOW?"`) {
		t.Errorf("run --once did not log the warning:\n%s", stderr)
	}
}

// The variables that hold something other than a key's value are read
// without a warning.
func TestEnvironmentVariablesReadElsewhereAreNotWarned(t *testing.T) {
	cfg, _ := setup(t, envTestLedger)
	t.Setenv("COSTDRIFT_CONFIG", cfg)
	t.Setenv("COSTDRIFT_SMTP_PASSWORD", "not used without a server")
	stdout, stderr, err := runSplit(t, "sync")
	if err != nil {
		t.Fatalf("sync: %v\n%s%s", err, stdout, stderr)
	}
	if stderr != "" {
		t.Errorf("stderr = %q, want nothing", stderr)
	}
}
