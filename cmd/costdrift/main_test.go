package main

import (
	"bytes"
	"database/sql"
	"encoding/json"
	"fmt"
	"os"
	"path/filepath"
	"regexp"
	"strings"
	"testing"
	"time"

	_ "github.com/mattn/go-sqlite3"

	"github.com/costdrift/costdrift/internal/demo"
	"github.com/costdrift/costdrift/internal/sqlite"
)

// today is the injected clock: every demo period (2023-07 to 2026-06) is closed.
func today() time.Time { return time.Date(2026, 12, 1, 9, 0, 0, 0, time.UTC) }

// run executes the command line and returns what it printed and its error.
func run(t *testing.T, args ...string) (string, error) {
	t.Helper()
	var out, errw bytes.Buffer
	root := newRoot(&out, &errw, today)
	root.SetArgs(args)
	err := root.Execute()
	return out.String() + errw.String(), err
}

func mustRun(t *testing.T, args ...string) string {
	t.Helper()
	out, err := run(t, args...)
	if err != nil {
		t.Fatalf("costdrift %s: %v\n%s", strings.Join(args, " "), err, out)
	}
	return out
}

func count(t *testing.T, store, query string) int {
	t.Helper()
	db, err := sql.Open("sqlite3", "file:"+store+"?mode=ro")
	if err != nil {
		t.Fatal(err)
	}
	defer db.Close()
	var n int
	if err := db.QueryRow(query).Scan(&n); err != nil {
		t.Fatalf("%s: %v", query, err)
	}
	return n
}

type reportRow struct {
	Object     string   `json:"object"`
	Class      string   `json:"class"`
	Driver     *string  `json:"driver"`
	Lag        *int     `json:"lag"`
	Fixed      *float64 `json:"fixed_per_period"`
	Rate       *float64 `json:"variable_rate"`
	N          int      `json:"n"`
	Since      string   `json:"since"`
	RangeMin   *float64 `json:"range_min"`
	RangeMax   *float64 `json:"range_max"`
	R2         *float64 `json:"r2"`
	CostCenter string   `json:"cost_center"`
	Steps      []struct {
		Level float64 `json:"level"`
	} `json:"steps"`
	Break *struct {
		Period string  `json:"period"`
		P      float64 `json:"p"`
	} `json:"break"`
}

// Ground truth on invented data: every demo cost designed without a drift
// event is recovered with its class, driver and lag.
func TestDemoRecoversDesignedBehaviour(t *testing.T) {
	dir := t.TempDir()
	out := mustRun(t, "demo", "--dir", dir)
	for _, want := range []string{"Quillfeather Frames", "rows: 1,424 read", "analysed 14 cost objects", "cost = ", "sqlite3", "confidential"} {
		if !strings.Contains(out, want) {
			t.Errorf("demo output lacks %q", want)
		}
	}
	cfg := filepath.Join(dir, "costdrift.yaml")
	// The demo ends with the two drift alerts, and the stable accounts raise
	// none at warning level or above.
	store := filepath.Join(dir, "costdrift.db")
	if n := count(t, store, "SELECT COUNT(*) FROM open_alerts WHERE kind = 'fixed_shift' AND object = '6110/PAINT' AND period = '2025-07' AND severity = 'warning'"); n != 1 {
		t.Errorf("no fixed_shift alert for the lease renewal")
	}
	if n := count(t, store, "SELECT COUNT(*) FROM open_alerts WHERE kind = 'rate_shift' AND object = '6400/ASSY' AND period = '2025-02' AND severity = 'warning'"); n != 1 {
		t.Errorf("no rate_shift alert for the freight contract")
	}
	if n := count(t, store, "SELECT COUNT(*) FROM alerts WHERE object NOT IN ('6110/PAINT', '6400/ASSY') AND severity <> 'info'"); n != 0 {
		t.Errorf("%d warning or critical alerts on stable accounts", n)
	}
	if !regexp.MustCompile(`warning +fixed_shift +6110/PAINT +2025-07`).MatchString(out) || !regexp.MustCompile(`warning +rate_shift +6400/ASSY +2025-02`).MatchString(out) {
		t.Errorf("demo output does not end with the two drift alerts:\n%s", out)
	}
	var rows []reportRow
	if err := json.Unmarshal([]byte(mustRun(t, "--config", cfg, "report", "--format", "json")), &rows); err != nil {
		t.Fatal(err)
	}
	found := map[string]reportRow{}
	for _, r := range rows {
		found[r.Object] = r
	}
	for _, x := range demo.Expectations() {
		obj := x.Account + "/" + x.CostCenter
		r, ok := found[obj]
		if !ok {
			t.Errorf("%s: not in the report", obj)
			continue
		}
		if x.Drift != "" {
			// The drift event is found and dated within one period, and the
			// formula is fitted from it on.
			if r.Since != x.DriftFrom {
				t.Errorf("%s: drift designed from %s, behaviour since %s", obj, x.DriftFrom, r.Since)
			}
			if r.Break == nil || r.Break.Period != x.DriftFrom || r.Break.P > 0.01 {
				t.Errorf("%s: break %+v, want one at %s with p <= 0.01", obj, r.Break, x.DriftFrom)
			}
			if x.DriftRate != 0 && (r.Rate == nil || abs(*r.Rate-x.DriftRate) > 0.03*x.DriftRate) {
				t.Errorf("%s: rate after the drift %v, designed %.2f", obj, r.Rate, x.DriftRate)
			}
			if x.DriftRate == 0 && (r.Fixed == nil || abs(*r.Fixed-x.DriftFixed) > 0.01*x.DriftFixed) {
				t.Errorf("%s: fixed after the drift %v, designed %.2f", obj, r.Fixed, x.DriftFixed)
			}
			continue
		}
		if r.Break != nil {
			t.Errorf("%s: a stable cost has a break %+v", obj, r.Break)
		}
		driver := ""
		if r.Driver != nil {
			driver = *r.Driver
		}
		if r.Class != x.Class || driver != x.Driver {
			t.Errorf("%s %s: designed %s on %q, found %s on %q", obj, x.AccountName, x.Class, x.Driver, r.Class, driver)
			continue
		}
		if driver != "" && *r.Lag != x.Lag {
			t.Errorf("%s: designed lag %d, found %d", obj, x.Lag, *r.Lag)
		}
		// Designed formulas are recovered within the noise for variable costs.
		if x.Class == "variable" && r.Class == "variable" && (r.Rate == nil || abs(*r.Rate-x.Rate) > 0.03*x.Rate) {
			t.Errorf("%s: designed rate %.2f, found %v", obj, x.Rate, *r.Rate)
		}
		if x.Class == "step" {
			if len(r.Steps) != len(x.Steps) {
				t.Errorf("%s: designed %d levels, found %d", obj, len(x.Steps), len(r.Steps))
			} else {
				for i := range x.Steps {
					if abs(r.Steps[i].Level-x.Steps[i].Level) > 0.02*x.Steps[i].Level {
						t.Errorf("%s: level %d designed %.2f, found %.2f", obj, i+1, x.Steps[i].Level, r.Steps[i].Level)
					}
				}
			}
		}
		if x.Class == "fixed" && (r.Fixed == nil || abs(*r.Fixed-x.Fixed) > 0.01*x.Fixed) {
			t.Errorf("%s: designed fixed %.2f, found %v", obj, x.Fixed, *r.Fixed)
		}
	}
}

func abs(v float64) float64 {
	if v < 0 {
		return -v
	}
	return v
}

// Syncing the same files again changes nothing, and analysing again keeps
// one current behaviour per object.
func TestResyncChangesNothing(t *testing.T) {
	dir := t.TempDir()
	mustRun(t, "demo", "--dir", dir)
	cfg := filepath.Join(dir, "costdrift.yaml")
	store := filepath.Join(dir, "costdrift.db")
	lines := count(t, store, "SELECT COUNT(*) FROM gl_lines")
	total := count(t, store, "SELECT SUM(amount_minor) FROM gl_lines")
	out := mustRun(t, "--config", cfg, "sync")
	if !strings.Contains(out, "gl         ledger   files: 0 read, 4 unchanged | rows: 0 read, 0 stored, 0 replaced, 0 rejected") {
		t.Errorf("second sync output:\n%s", out)
	}
	if n := count(t, store, "SELECT COUNT(*) FROM gl_lines"); n != lines {
		t.Errorf("gl_lines = %d after re-sync, want %d", n, lines)
	}
	if s := count(t, store, "SELECT SUM(amount_minor) FROM gl_lines"); s != total {
		t.Errorf("sum changed from %d to %d", total, s)
	}
	out = mustRun(t, "--config", cfg, "analyze")
	if !strings.Contains(out, "analysed 0 cost objects") || !strings.Contains(out, "14 unchanged since their last analysis were left as they were") {
		t.Errorf("second analysis:\n%s", out)
	}
	if n := count(t, store, "SELECT COUNT(DISTINCT analysis_run_id) FROM fits"); n != 1 {
		t.Errorf("fits cover %d runs, want 1: nothing changed, so nothing was refitted", n)
	}
	// The demo's two drift events are its only alerts, and a second
	// analysis with no new data adds none.
	if n := count(t, store, "SELECT COUNT(*) FROM alerts WHERE severity <> 'info'"); n != 2 {
		t.Errorf("%d warning alerts after a second analysis, want the demo's 2", n)
	}
	if n := count(t, store, "SELECT COUNT(*) FROM alerts"); n != 3 {
		t.Errorf("%d alerts after a second analysis, want the 3 of the first (2 drifts, 1 spending outlier)", n)
	}
	if !strings.Contains(out, "alerts: 0 new, 0 escalated, 0 reopened, 0 resolved") {
		t.Errorf("second analysis changed alerts:\n%s", out)
	}
	out = mustRun(t, "--config", cfg, "analyze", "--all")
	if !strings.Contains(out, "analysed 14 cost objects") {
		t.Errorf("analysis with --all:\n%s", out)
	}
	if n := count(t, store, "SELECT COUNT(*) FROM current_behaviour"); n != 14 {
		t.Errorf("current_behaviour has %d rows after a third analysis, want 14", n)
	}
	// 14 current rows and, for the two drift events, the closed row of the
	// behaviour before the break.
	if n := count(t, store, "SELECT COUNT(*) FROM behaviour_history"); n != 16 {
		t.Errorf("behaviour_history has %d rows, want 16: nothing changed, so nothing new", n)
	}
	if n := count(t, store, "SELECT COUNT(*) FROM analysis_runs"); n != 3 {
		t.Errorf("analysis_runs = %d, want 3", n)
	}
	// The view of each object's latest fits follows the refit.
	if n := count(t, store, "SELECT COUNT(DISTINCT analysis_run_id) FROM latest_fits"); n != 1 {
		t.Errorf("latest_fits covers %d runs, want only the last", n)
	}
	// Which accounts does machine hours drive? One query on the store.
	if n := count(t, store, "SELECT COUNT(*) FROM latest_fits WHERE driver = 'machine_hours' AND chosen"); n != 3 {
		t.Errorf("machine hours drives %d objects, want 3 (power in WELD and PAINT, maintenance in WELD)", n)
	}
	if st, err := os.Stat(store); err != nil || st.Mode().Perm() != 0o600 {
		t.Errorf("store mode = %v, want 0600", st.Mode().Perm())
	}
}

// setup writes a config with one ledger and one activity source into a
// fresh folder and returns the config path.
func setup(t *testing.T, ledger string) (string, string) {
	t.Helper()
	dir := t.TempDir()
	mustRun(t, "--config", filepath.Join(dir, "costdrift.yaml"), "init")
	if ledger != "" {
		if err := os.WriteFile(filepath.Join(dir, "data", "gl", "gl.csv"), []byte(ledger), 0o600); err != nil {
			t.Fatal(err)
		}
	}
	act := "period,driver,value\n2026-01,frames_built,100\n"
	if err := os.WriteFile(filepath.Join(dir, "data", "activity.csv"), []byte(act), 0o600); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(filepath.Join(dir, "data", "accounts.csv"), []byte("account,name\n6100,Rent\n"), 0o600); err != nil {
		t.Fatal(err)
	}
	return filepath.Join(dir, "costdrift.yaml"), dir
}

// Bad input: each a one-line error naming the thing and what to do, a
// non-zero exit, and nothing half-written.
func TestBadInput(t *testing.T) {
	tests := []struct {
		name   string
		ledger string // "" leaves data/gl empty
		prep   func(t *testing.T, dir string) []string
		want   []string
	}{
		{"missing config file", "", func(t *testing.T, dir string) []string {
			return []string{"--config", filepath.Join(dir, "nope.yaml"), "sync"}
		}, []string{"nope.yaml not found", "costdrift init"}},
		{"no ledger file", "", nil, []string{"no file matches", "data/gl/*.csv"}},
		{"unreadable source", "", func(t *testing.T, dir string) []string {
			if err := os.Mkdir(filepath.Join(dir, "data", "gl", "2026.csv"), 0o700); err != nil {
				t.Fatal(err)
			}
			return nil
		}, []string{"cannot read", "2026.csv", "folder"}},
		{"wrong header", "voucher,when,acct,sum\nA1,2026-01-05,6100,10.00\n", nil,
			[]string{"gl.csv", "no column entry_id, date, account", "found: voucher, when, acct, sum", "columns:"}},
		{"empty file", "", func(t *testing.T, dir string) []string {
			if err := os.WriteFile(filepath.Join(dir, "data", "gl", "gl.csv"), nil, 0o600); err != nil {
				t.Fatal(err)
			}
			return nil
		}, []string{"gl.csv is empty"}},
		{"store folder missing", "", func(t *testing.T, dir string) []string {
			t.Setenv("COSTDRIFT_STORE", filepath.Join(dir, "no", "such", "folder", "costdrift.db"))
			return nil
		}, []string{"folder", "does not exist", "change `store`"}},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			cfg, dir := setup(t, tc.ledger)
			args := []string{"--config", cfg, "sync"}
			if tc.prep != nil {
				if a := tc.prep(t, dir); a != nil {
					args = a
				}
			}
			_, err := run(t, args...)
			if err == nil {
				t.Fatal("sync succeeded, want an error")
			}
			msg := err.Error()
			if strings.Contains(msg, "\n") {
				t.Errorf("error is not one line: %q", msg)
			}
			for _, want := range tc.want {
				if !strings.Contains(msg, want) {
					t.Errorf("error %q lacks %q", msg, want)
				}
			}
			store := filepath.Join(dir, "costdrift.db")
			if _, serr := os.Stat(store); serr == nil {
				if n := count(t, store, "SELECT COUNT(*) FROM gl_lines"); n != 0 {
					t.Errorf("%d ledger lines stored from a failed source", n)
				}
			}
		})
	}
}

// A failed source is recorded with its error; the other sources still load.
func TestFailedSourceIsRecordedAndOthersLoad(t *testing.T) {
	cfg, dir := setup(t, "voucher,when\nA1,2026-01-05\n")
	if _, err := run(t, "--config", cfg, "sync"); err == nil || !strings.Contains(err.Error(), "source gl failed: data/gl/gl.csv: header has no column") || !strings.HasSuffix(err.Error(), "nothing of that file was stored") {
		t.Fatalf("got %v", err)
	}
	store := filepath.Join(dir, "costdrift.db")
	if n := count(t, store, "SELECT COUNT(*) FROM activity"); n != 1 {
		t.Errorf("activity rows = %d, want 1: a failing ledger must not stop the activity source", n)
	}
	if n := count(t, store, "SELECT COUNT(*) FROM sync_runs WHERE source = 'gl' AND status = 'failed' AND error LIKE '%no column entry_id%'"); n != 1 {
		t.Errorf("failed run not recorded")
	}
}

// Bad rows are rejected with file:line and a reason; good rows load.
func TestRejectedRowsAreKeptWithReason(t *testing.T) {
	ledger := "entry_id,line,date,account,cost_center,amount\n" +
		"A1,1,2026-01-05,6100,WELD,4200.00\n" +
		"A1,2,2026-01-05,2000,,-4200.00\n" +
		"A2,1,2026-13-01,6100,WELD,10.00\n" +
		"A3,1,2026-01-07,6100,WELD,ten\n"
	cfg, dir := setup(t, ledger)
	out := mustRun(t, "--config", cfg, "sync")
	if !strings.Contains(out, "files: 1 read, 0 unchanged | rows: 4 read, 2 stored, 0 replaced, 2 rejected") || !strings.Contains(out, "SELECT location, reason FROM rejects") {
		t.Errorf("sync output:\n%s", out)
	}
	store := filepath.Join(dir, "costdrift.db")
	if n := count(t, store, "SELECT COUNT(*) FROM rejects WHERE location = 'data/gl/gl.csv:4' AND reason LIKE 'bad date%' AND raw = 'A2,1,2026-13-01,6100,WELD,10.00'"); n != 1 {
		t.Errorf("bad-date reject not recorded as expected")
	}
	if n := count(t, store, "SELECT COUNT(*) FROM rejects WHERE location = 'data/gl/gl.csv:5' AND reason LIKE 'bad amount%'"); n != 1 {
		t.Errorf("bad-amount reject not recorded as expected")
	}
	// The whole ledger is stored; analysis.accounts limits only what is analysed.
	if n := count(t, store, "SELECT COUNT(*) FROM gl_lines WHERE account = '2000'"); n != 1 {
		t.Errorf("the out-of-scope line was not stored")
	}
}

func TestInitRefusesToOverwrite(t *testing.T) {
	cfg := filepath.Join(t.TempDir(), "costdrift.yaml")
	mustRun(t, "--config", cfg, "init")
	_, err := run(t, "--config", cfg, "init")
	if err == nil || !strings.Contains(err.Error(), "already exists") {
		t.Fatalf("second init: %v", err)
	}
	if st, err := os.Stat(cfg); err != nil || st.Mode().Perm() != 0o600 {
		t.Errorf("config mode = %v, want 0600", st.Mode().Perm())
	}
}

func TestReportBeforeSync(t *testing.T) {
	cfg := filepath.Join(t.TempDir(), "costdrift.yaml")
	mustRun(t, "--config", cfg, "init")
	_, err := run(t, "--config", cfg, "report")
	if err == nil || !strings.Contains(err.Error(), "run `costdrift sync` first") {
		t.Fatalf("got %v", err)
	}
}

func TestVersion(t *testing.T) {
	out := mustRun(t, "version")
	if want := fmt.Sprintf("costdrift dev (store schema %d, go", sqlite.SchemaVersion()); !strings.HasPrefix(out, want) {
		t.Errorf("version = %q", out)
	}
}

// mustDemoConfig is the config `costdrift demo` writes, for a test that
// changes it before the demo runs.
func mustDemoConfig(t *testing.T) string {
	t.Helper()
	text, err := demoConfig()
	if err != nil {
		t.Fatal(err)
	}
	return text
}
