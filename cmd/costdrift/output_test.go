package main

import (
	"bytes"
	"os"
	"path/filepath"
	"testing"
)

// earlierExport is a good earlier export that a new one writes over.
const earlierExport = "line,period,object\nobject,2026-07,5100/WELD\n"

// earlierFile writes earlierExport to name in a fresh folder, readable by
// others (0644, as a file copied in or written by another tool).
func earlierFile(t *testing.T, name string) string {
	t.Helper()
	path := filepath.Join(t.TempDir(), name)
	writeFile(t, path, earlierExport)
	if err := os.Chmod(path, 0o644); err != nil {
		t.Fatal(err)
	}
	return path
}

// alone fails the test when path's folder holds anything but path, such
// as a temporary file left behind.
func alone(t *testing.T, path string) {
	t.Helper()
	entries, err := os.ReadDir(filepath.Dir(path))
	if err != nil {
		t.Fatal(err)
	}
	for _, e := range entries {
		if e.Name() != filepath.Base(path) {
			t.Errorf("%s left beside %s", e.Name(), filepath.Base(path))
		}
	}
}

// --output over an earlier file readable by others leaves the new export
// owner-only (README, Budgets and variances): it holds ledger figures.
func TestOutputIsOwnerOnlyOverAnEarlierFile(t *testing.T) {
	dir := demoDir(t)
	cfg := filepath.Join(dir, "costdrift.yaml")
	plan := filepath.Join(dir, "plans", "plan-2026-q3.csv")
	for _, tc := range []struct {
		name  string
		file  string
		args  []string
		start string
	}{
		{"budget csv", "budget.csv", []string{"budget", "--plan", plan, "--format", "csv"}, "line,period,object,"},
		{"budget xlsx", "budget.xlsx", []string{"budget", "--plan", plan, "--format", "xlsx"}, "PK\x03\x04"},
		{"variance json", "variance.json", []string{"variance", "--period", "2026-06", "--format", "json"}, "[\n  {\n"},
		{"variance table", "variance.txt", []string{"variance", "--period", "2026-06"}, "Variances for 2026-06"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			path := earlierFile(t, tc.file)
			mustRun(t, append([]string{"--config", cfg}, append(tc.args, "--output", path)...)...)
			got, err := os.ReadFile(path)
			if err != nil {
				t.Fatal(err)
			}
			if !bytes.HasPrefix(got, []byte(tc.start)) || bytes.Contains(got, []byte(earlierExport)) {
				t.Errorf("%s holds %q…, want the new export", tc.file, got[:min(len(got), 40)])
			}
			if st, err := os.Stat(path); err != nil || st.Mode().Perm() != 0o600 {
				t.Errorf("%s has mode %v, want 0600", tc.file, st.Mode().Perm())
			}
			alone(t, path)
		})
	}
}

// init --force over a config readable by others writes the starter
// owner-only, as init writes a new one.
func TestInitForceWritesTheConfigOwnerOnly(t *testing.T) {
	cfg := earlierFile(t, "costdrift.yaml")
	mustRun(t, "--config", cfg, "init", "--force")
	got, err := os.ReadFile(cfg)
	if err != nil {
		t.Fatal(err)
	}
	if !bytes.HasPrefix(got, []byte("# costdrift configuration.")) {
		t.Errorf("config holds %q…, want the starter", got[:min(len(got), 40)])
	}
	if st, err := os.Stat(cfg); err != nil || st.Mode().Perm() != 0o600 {
		t.Errorf("config mode %v, want 0600", st.Mode().Perm())
	}
}
