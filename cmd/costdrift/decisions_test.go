package main

import (
	"encoding/json"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"sync"
	"testing"
	"time"
)

// ownDemo copies the shared demo folder (demoStore) for a test that
// records decisions, and returns the copy's config file.
func ownDemo(t *testing.T) string {
	t.Helper()
	dir := t.TempDir()
	if err := os.CopyFS(dir, os.DirFS(demoDir(t))); err != nil {
		t.Fatal(err)
	}
	os.Remove(filepath.Join(dir, "costdrift.db.lock"))
	return filepath.Join(dir, "costdrift.yaml")
}

// The bad input of README "The accountant's decisions": each refused with
// one line naming the problem, and nothing stored.
func TestDecisionBadInput(t *testing.T) {
	cfg := ownDemo(t)
	store := filepath.Join(filepath.Dir(cfg), "costdrift.db")
	demoDecisions := count(t, store, `SELECT COUNT(*) FROM decisions`)
	var window []string
	for y := 2023; y <= 2026; y++ {
		for m := 1; m <= 12; m++ {
			if p := fmt.Sprintf("%d-%02d", y, m); p >= "2023-07" && p <= "2026-06" {
				window = append(window, p)
			}
		}
	}
	for _, tc := range []struct {
		name string
		args []string
		want string
	}{
		{"unknown object", []string{"pin", "9999/NOPE", "--class", "fixed", "--fixed", "1", "--reason", "x"}, `unknown cost object "9999/NOPE"`},
		{"mixed without a rate", []string{"pin", "6100/ASSY", "--class", "mixed", "--driver", "frames_built", "--fixed", "10", "--reason", "x"}, "a mixed formula needs --rate"},
		{"variable without a driver", []string{"pin", "6100/ASSY", "--class", "variable", "--rate", "1", "--reason", "x"}, "a variable formula needs --driver"},
		{"unknown class", []string{"pin", "6100/ASSY", "--class", "semi", "--fixed", "1", "--reason", "x"}, `--class must be fixed, variable, mixed or step, not "semi"`},
		{"driver the store lacks", []string{"pin", "6100/ASSY", "--class", "variable", "--driver", "pallets", "--rate", "1", "--reason", "x"}, `no activity for driver "pallets"`},
		{"negative rate", []string{"pin", "6200/WELD", "--class", "mixed", "--driver", "machine_hours", "--fixed", "1850", "--rate=-2.35", "--reason", "x"}, "--rate -2.35 is negative"},
		{"fixed amount too precise", []string{"pin", "6100/ASSY", "--class", "fixed", "--fixed", "2600.001", "--reason", "x"}, "more decimals than the currency's minor unit"},
		{"until in the past", []string{"pin", "6100/ASSY", "--class", "fixed", "--fixed", "2600", "--until", "2026-06", "--reason", "x"}, "--until 2026-06 is in the past (the current period is 2026-12)"},
		{"pin without a reason", []string{"pin", "6100/ASSY", "--class", "fixed", "--fixed", "2600"}, "--reason is required"},
		{"unpin what is not pinned", []string{"unpin", "6100/WELD", "--reason", "x"}, "6100/WELD has no pin to take off"},
		{"exclude too many", []string{"exclude", "6100/ASSY", "--period", strings.Join(window[:25], ","), "--reason", "x"},
			"excluding these 25 periods would leave 6100/ASSY 11 periods with ledger data to fit, fewer than analysis.min_periods (12)"},
		{"exclude a period that is none", []string{"exclude", "6100/ASSY", "--period", "2025-13", "--reason", "x"}, `period "2025-13" is not YYYY-MM`},
		{"exclude without a reason", []string{"exclude", "6100/ASSY", "--period", "2025-04"}, "--reason is required"},
		{"include what is not excluded", []string{"include", "6100/ASSY", "--period", "2025-04"}, "period 2025-04 of 6100/ASSY is not excluded"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			out, err := run(t, append([]string{"--config", cfg}, tc.args...)...)
			if err == nil {
				t.Fatalf("accepted; output:\n%s", out)
			}
			if line := errorLine(err); !strings.Contains(line, tc.want) || strings.Contains(line, "\n") {
				t.Errorf("error %q, want one line containing %q", line, tc.want)
			}
		})
	}
	if n := count(t, store, `SELECT COUNT(*) FROM decisions`) - demoDecisions; n != 0 {
		t.Errorf("%d decisions stored from refused input", n)
	}
	// At the limit the exclusion is taken: 24 of 36 leave min_periods.
	mustRun(t, "--config", cfg, "exclude", "6100/ASSY", "--period", strings.Join(window[:24], ","), "--reason", "x", "--by", "ana")
	if n := count(t, store, `SELECT COUNT(*) FROM current_exclusions WHERE object = '6100/ASSY' AND made_by = 'ana'`); n != 24 {
		t.Errorf("%d periods excluded, want 24", n)
	}
}

// An excluded period is not fitted and not counted in n from the next
// analysis on, explain lists it, and including it again gives back the
// formula fitted on every period.
func TestExcludedPeriodsAreNotFitted(t *testing.T) {
	cfg := ownDemo(t)
	type explained struct {
		N        int     `json:"n"`
		Fixed    float64 `json:"fixed_per_period"`
		Rate     float64 `json:"variable_rate"`
		Excluded []struct {
			Period, By, At, Reason string
		} `json:"excluded_periods"`
	}
	explain := func() explained {
		t.Helper()
		var e explained
		if err := json.Unmarshal([]byte(mustRun(t, "--config", cfg, "explain", "6200/WELD", "--format", "json")), &e); err != nil {
			t.Fatal(err)
		}
		return e
	}
	before := explain()
	if before.N != 36 || before.Excluded == nil || len(before.Excluded) != 0 {
		t.Fatalf("before: n %d, excluded_periods %v; want 36 and []", before.N, before.Excluded)
	}
	mustRun(t, "--config", cfg, "exclude", "6200/WELD", "--period", "2025-07,2025-03", "--reason", "strike month; meter fault", "--by", "ana")
	if got := explain(); got.N != 36 {
		t.Errorf("n %d before the next analysis, want 36: an exclusion counts from the next analysis", got.N)
	}
	mustRun(t, "--config", cfg, "analyze")
	after := explain()
	if after.N != 34 || len(after.Excluded) != 2 || after.Excluded[0].Period != "2025-03" || after.Excluded[1].By != "ana" ||
		after.Excluded[1].Reason != "strike month; meter fault" {
		t.Fatalf("after: n %d, excluded_periods %+v; want 34 and 2025-03, 2025-07 by ana", after.N, after.Excluded)
	}
	if after.Fixed == before.Fixed || after.Rate == before.Rate {
		t.Errorf("formula unchanged by the exclusion: %.2f + %.4f", after.Fixed, after.Rate)
	}
	text := mustRun(t, "--config", cfg, "explain", "6200/WELD")
	for _, want := range []string{"Left out of the fit by decision (not fitted, not counted in n):",
		"2025-03 by ana on 2026-12-01: strike month; meter fault", "fitted on  34 periods"} {
		if !strings.Contains(text, want) {
			t.Errorf("explain lacks %q:\n%s", want, text)
		}
	}
	if strings.Contains(text, "changed since analysis run") {
		t.Errorf("explain takes the excluded periods for a change in the ledger:\n%s", text)
	}
	svg := filepath.Join(t.TempDir(), "weld.svg")
	mustRun(t, "--config", cfg, "explain", "6200/WELD", "--chart", svg)
	b, err := os.ReadFile(svg)
	if err != nil {
		t.Fatal(err)
	}
	for _, want := range []string{"excluded from the fit", "2025-03", "2025-07"} {
		if !strings.Contains(string(b), want) {
			t.Errorf("the chart lacks %q", want)
		}
	}
	mustRun(t, "--config", cfg, "include", "6200/WELD", "--period", "2025-03,2025-07", "--by", "ana")
	mustRun(t, "--config", cfg, "analyze")
	if again := explain(); again.N != 36 || again.Fixed != before.Fixed || again.Rate != before.Rate || len(again.Excluded) != 0 {
		t.Errorf("included again: n %d, %.2f + %.6f, excluded %v; want the first fit back (36, %.2f + %.6f)",
			again.N, again.Fixed, again.Rate, again.Excluded, before.Fixed, before.Rate)
	}
}

// A pin is shown beside the data's estimate, budgets use it, and it holds
// through a re-analysis of every object and a restatement of the ledger.
func TestPinHoldsAndFeedsBudgets(t *testing.T) {
	cfg := ownDemo(t)
	dir := filepath.Dir(cfg)
	type row struct {
		Object string  `json:"object"`
		Fixed  float64 `json:"fixed_per_period"`
		Pinned *struct {
			Class, By, Reason, At, Formula string
			Fixed                          float64
			Until                          *string
		} `json:"pinned"`
		Effective struct {
			Source  string  `json:"source"`
			Fixed   float64 `json:"fixed_per_period"`
			Formula string  `json:"formula"`
		} `json:"effective"`
	}
	rent := func() row {
		t.Helper()
		var rows []row
		if err := json.Unmarshal([]byte(mustRun(t, "--config", cfg, "report", "--format", "json")), &rows); err != nil {
			t.Fatal(err)
		}
		for _, r := range rows {
			if r.Object == "6100/WELD" {
				return r
			}
		}
		t.Fatal("no 6100/WELD in the report")
		return row{}
	}
	before := rent()
	if before.Pinned != nil || before.Effective.Source != "data" || before.Effective.Fixed != before.Fixed {
		t.Fatalf("before the pin: pinned %v, effective %+v; want null and the data's %.2f", before.Pinned, before.Effective, before.Fixed)
	}
	mustRun(t, "--config", cfg, "pin", "6100/WELD", "--class", "fixed", "--fixed", "4200", "--until", "2027-12",
		"--reason", "lease contract: 4,200 a month", "--by", "ana")
	check := func(when string) {
		t.Helper()
		r := rent()
		if r.Pinned == nil || r.Pinned.Fixed != 4200 || r.Pinned.By != "ana" || r.Pinned.Until == nil || *r.Pinned.Until != "2027-12" ||
			r.Pinned.Reason != "lease contract: 4,200 a month" || r.Pinned.At != "2026-12-01T09:00:00Z" {
			t.Fatalf("%s: pinned %+v", when, r.Pinned)
		}
		if r.Effective.Source != "pinned" || r.Effective.Fixed != 4200 || r.Effective.Formula != "cost = 4,200.00" {
			t.Errorf("%s: effective %+v, want the pin", when, r.Effective)
		}
		if r.Fixed == 4200 {
			t.Errorf("%s: fixed_per_period is the pin's; it must stay the data's estimate", when)
		}
	}
	check("after the pin")
	table := mustRun(t, "--config", cfg, "report")
	if want := "pinned: cost = 4,200.00 until 2027-12, by ana on 2026-12-01: lease contract: 4,200 a month; budgets and variances use it"; !strings.Contains(table, want) {
		t.Errorf("the table report lacks %q:\n%s", want, table)
	}
	out := mustRun(t, "--config", cfg, "budget", "--plan", filepath.Join(dir, "plans", "plan-2026-q3.csv"))
	if !strings.Contains(out, "pinned formula: its interval comes from the data's scatter around it") {
		t.Errorf("the budget does not say where the pinned formula's interval comes from:\n%s", out)
	}
	var rentLine string
	for _, l := range strings.Split(out, "\n") {
		if strings.HasPrefix(l, "6100/WELD") {
			rentLine = l
			break
		}
	}
	if !strings.Contains(rentLine, " 4,200.00 ") {
		t.Errorf("rent budgeted as %q, want the pinned 4,200.00", rentLine)
	}

	mustRun(t, "--config", cfg, "analyze", "--all")
	check("after analyze --all")
	// A restatement: the 2024-03 rent booked again at 4,250.
	gl := filepath.Join(dir, "data", "gl", "gl-2024.csv")
	b, err := os.ReadFile(gl)
	if err != nil {
		t.Fatal(err)
	}
	old := `6100,WELD,4200.00,"Rent, welding bay 2024-03"`
	if !strings.Contains(string(b), old) {
		t.Fatalf("%s has no line %s", gl, old)
	}
	if err := os.WriteFile(gl, []byte(strings.Replace(string(b), old, `6100,WELD,4250.00,"Rent, welding bay 2024-03"`, 1)), 0o600); err != nil {
		t.Fatal(err)
	}
	mustRun(t, "--config", cfg, "sync")
	mustRun(t, "--config", cfg, "analyze")
	if r := rent(); r.Fixed == before.Fixed {
		t.Errorf("the restatement did not reach the data's estimate (%.2f)", r.Fixed)
	}
	check("after a restatement")
}

// The demo pins the assembly hall's rent at its lease amount and leaves the
// paint shop's service-charge true-up out of its fit, and its report shows
// both.
func TestDemoShowsTheAccountantsDecisions(t *testing.T) {
	dir := t.TempDir()
	out := mustRun(t, "demo", "--dir", dir)
	for _, want := range []string{
		`costdrift pin 6100/ASSY --class fixed --fixed 2600.00 --reason "lease contract: 2,600.00 a month" --by demo`,
		`costdrift exclude 6100/PAINT --period 2024-03 --reason "service-charge true-up for the prior year, booked once" --by demo`,
		"pinned: cost = 2,600.00, by demo on 2026-12-01: lease contract: 2,600.00 a month; budgets and variances use it",
		"left out of the fit: 2024-03 (costdrift explain 6100/PAINT)",
	} {
		if !strings.Contains(out, want) {
			t.Errorf("the demo's output lacks %q", want)
		}
	}
	var rows []struct {
		Object   string `json:"object"`
		N        int    `json:"n"`
		Pinned   *struct{ Fixed float64 }
		Excluded []struct{ Period string } `json:"excluded_periods"`
	}
	if err := json.Unmarshal([]byte(mustRun(t, "--config", filepath.Join(dir, "costdrift.yaml"), "report", "--format", "json")), &rows); err != nil {
		t.Fatal(err)
	}
	for _, r := range rows {
		switch r.Object {
		case "6100/ASSY":
			if r.Pinned == nil || r.Pinned.Fixed != 2600 {
				t.Errorf("6100/ASSY pinned %+v, want 2600", r.Pinned)
			}
		case "6100/PAINT":
			if len(r.Excluded) != 1 || r.Excluded[0].Period != "2024-03" || r.N != 35 {
				t.Errorf("6100/PAINT excluded %+v, n %d; want 2024-03 and 35", r.Excluded, r.N)
			}
		}
	}
}

// Notes on an alert: each ack --note adds a line with who and when, and
// alerts show prints the thread, oldest first, in text and JSON.
func TestAlertNotesThread(t *testing.T) {
	cfg := ownDemo(t)
	mustRun(t, "--config", cfg, "alerts", "ack", "1", "--note", "asked the plant manager about the new lease", "--by", "ana")
	mustRun(t, "--config", cfg, "alerts", "ack", "1", "--until", "2027-03", "--note", "lease signed: 35 % up from July", "--by", "ben")
	out := mustRun(t, "--config", cfg, "alerts", "show", "1")
	want := "\nNotes\n  2026-12-01 09:00 UTC  ana: asked the plant manager about the new lease\n  2026-12-01 09:00 UTC  ben: lease signed: 35 % up from July\n"
	if !strings.Contains(out, want) {
		t.Errorf("alerts show 1 lacks the thread %q:\n%s", want, out)
	}
	var j struct {
		Status string
		Notes  []struct{ By, At, Text string }
	}
	if err := json.Unmarshal([]byte(mustRun(t, "--config", cfg, "alerts", "show", "1", "--format", "json")), &j); err != nil {
		t.Fatal(err)
	}
	if len(j.Notes) != 2 || j.Notes[0].By != "ana" || j.Notes[1].Text != "lease signed: 35 % up from July" || j.Notes[1].At != "2026-12-01T09:00:00Z" || j.Status != "acknowledged" {
		t.Errorf("alerts show --format json: %+v", j)
	}
	if out := mustRun(t, "--config", cfg, "alerts", "show", "2"); strings.Contains(out, "Notes") {
		t.Errorf("alert 2 shows a thread it does not have:\n%s", out)
	}
	for _, tc := range []struct {
		args []string
		want string
	}{
		{[]string{"alerts", "ack", "1", "--note", "  "}, "--note is empty"},
		{[]string{"alerts", "ack", "99", "--note", "x"}, "no alert 99 in the store"},
	} {
		if _, err := run(t, append([]string{"--config", cfg}, tc.args...)...); err == nil || !strings.Contains(err.Error(), tc.want) {
			t.Errorf("%v: %v, want %q", tc.args, err, tc.want)
		}
	}
	store := filepath.Join(filepath.Dir(cfg), "costdrift.db")
	if n := count(t, store, `SELECT COUNT(*) FROM decision_log WHERE kind = 'note' AND alert_id = 1`); n != 2 {
		t.Errorf("%d notes in decision_log, want 2", n)
	}
}

// The analysis tests the data against each pin: the demo's pinned rent
// (its data agree) raises nothing; the welding bay's rent pinned at 4,200
// while the ledger shows it 15 % higher from 2025-07 raises a pin_review
// alert; a pin past its last period raises one too.
func TestPinReviewAlerts(t *testing.T) {
	cfg := ownDemo(t)
	dir := filepath.Dir(cfg)
	store := filepath.Join(dir, "costdrift.db")
	review := func() int {
		t.Helper()
		return count(t, store, `SELECT COUNT(*) FROM alerts WHERE kind = 'pin_review' AND status <> 'resolved'`)
	}
	mustRun(t, "--config", cfg, "analyze", "--all")
	if n := review(); n != 0 {
		t.Fatalf("%d pin_review alerts on the demo's pinned rent, which its data agree with", n)
	}
	mustRun(t, "--config", cfg, "pin", "6100/WELD", "--class", "fixed", "--fixed", "4200", "--reason", "lease", "--by", "ana")
	// The ledger: the welding bay's rent 15 % up (4,830) from 2025-07 on.
	for _, name := range []string{"gl-2025.csv", "gl-2026.csv"} {
		path := filepath.Join(dir, "data", "gl", name)
		b, err := os.ReadFile(path)
		if err != nil {
			t.Fatal(err)
		}
		lines := strings.Split(string(b), "\n")
		changed := 0
		for i, l := range lines {
			f := strings.Split(l, ",")
			if len(f) > 5 && f[3] == "6100" && f[4] == "WELD" && f[2] >= "2025-07" {
				f[5] = "4830.00"
				lines[i], changed = strings.Join(f, ","), changed+1
			}
		}
		if changed == 0 {
			t.Fatalf("no welding bay rent from 2025-07 in %s", name)
		}
		if err := os.WriteFile(path, []byte(strings.Join(lines, "\n")), 0o600); err != nil {
			t.Fatal(err)
		}
	}
	mustRun(t, "--config", cfg, "sync")
	mustRun(t, "--config", cfg, "analyze")
	if n := review(); n != 1 {
		t.Fatalf("%d pin_review alerts after the rent rose 15 %%, want 1", n)
	}
	list := mustRun(t, "--config", cfg, "alerts", "list", "--kind", "pin_review")
	if !strings.Contains(list, "6100/WELD Rent: the data contradict the pinned formula (pinned 4,200.00, the data say 4,830.00 EUR over 12 periods)") {
		t.Errorf("alerts list --kind pin_review:\n%s", list)
	}
	// Unpinned, the contradiction resolves.
	mustRun(t, "--config", cfg, "unpin", "6100/WELD", "--reason", "new lease", "--by", "ana")
	mustRun(t, "--config", cfg, "analyze")
	if n := review(); n != 0 {
		t.Errorf("%d pin_review alerts after the unpin, want 0", n)
	}

	// A pin whose last period has passed: run a year later.
	mustRun(t, "--config", cfg, "pin", "6100/PAINT", "--class", "fixed", "--fixed", "3100", "--until", "2027-03", "--reason", "lease to March", "--by", "ana")
	var out strings.Builder
	root := newRoot(&out, &out, func() time.Time { return today().AddDate(0, 6, 0) })
	root.SetArgs([]string{"--config", cfg, "analyze"})
	if err := root.Execute(); err != nil {
		t.Fatalf("analyze six months on: %v\n%s", err, out.String())
	}
	if n := count(t, store, `SELECT COUNT(*) FROM alerts WHERE kind = 'pin_review' AND object = '6100/PAINT' AND period = '2027-03' AND status = 'open'`); n != 1 {
		t.Errorf("%d open pin_review alerts for the expired pin, want 1\n%s", n, out.String())
	}
}

// restateWeldRent books the welding bay's rent at amount from 2025-07 on in
// the demo ledger: a 15 % rise for 4830.00.
func restateWeldRent(t *testing.T, dir, amount string) {
	t.Helper()
	for _, name := range []string{"gl-2025.csv", "gl-2026.csv"} {
		path := filepath.Join(dir, "data", "gl", name)
		b, err := os.ReadFile(path)
		if err != nil {
			t.Fatal(err)
		}
		lines := strings.Split(string(b), "\n")
		for i, l := range lines {
			f := strings.Split(l, ",")
			if len(f) > 5 && f[3] == "6100" && f[4] == "WELD" && f[2] >= "2025-07" {
				f[5] = amount
				lines[i] = strings.Join(f, ",")
			}
		}
		if err := os.WriteFile(path, []byte(strings.Join(lines, "\n")), 0o600); err != nil {
			t.Fatal(err)
		}
	}
}

// With analysis.approval: required, a drift changes nothing in budgets
// until it is approved, its alert says it awaits approval, a decline keeps
// the approved formula, and an approval adopts the new one.
func TestApprovalMode(t *testing.T) {
	cfg := ownDemo(t)
	dir := filepath.Dir(cfg)
	b, err := os.ReadFile(cfg)
	if err != nil {
		t.Fatal(err)
	}
	required := strings.Replace(string(b), "approval: none", "approval: required", 1)
	if required == string(b) {
		t.Fatal("the demo config has no approval: none line")
	}
	if err := os.WriteFile(cfg, []byte(required), 0o600); err != nil {
		t.Fatal(err)
	}
	weldBudget := func() string {
		t.Helper()
		out := mustRun(t, "--config", cfg, "budget", "--plan", filepath.Join(dir, "plans", "plan-2026-q3.csv"))
		for _, l := range strings.Split(out, "\n") {
			if strings.HasPrefix(l, "6100/WELD") {
				return strings.Fields(l)[4]
			}
		}
		t.Fatalf("no 6100/WELD line in the budget:\n%s", out)
		return ""
	}
	type approvalRow struct {
		Object   string
		Approval *struct {
			Status             string
			Approved, Proposed *struct {
				Formula, By, Reason string
			}
		}
		Effective struct{ Source, Formula string }
	}
	weld := func() approvalRow {
		t.Helper()
		var rows []approvalRow
		if err := json.Unmarshal([]byte(mustRun(t, "--config", cfg, "report", "--format", "json")), &rows); err != nil {
			t.Fatal(err)
		}
		for _, r := range rows {
			if r.Object == "6100/WELD" {
				return r
			}
		}
		t.Fatal("no 6100/WELD")
		return approvalRow{}
	}
	if r := weld(); r.Approval == nil || r.Approval.Status != "awaiting approval" || r.Approval.Approved != nil {
		t.Fatalf("before any approval: %+v", r.Approval)
	}
	if out := mustRun(t, "--config", cfg, "proposals"); !strings.Contains(out, "6100/WELD") || !strings.Contains(out, "cost = 4,200.87") {
		t.Errorf("proposals before any approval:\n%s", out)
	}
	mustRun(t, "--config", cfg, "approve", "6100/WELD", "--reason", "matches the lease", "--by", "ana")
	if _, err := run(t, "--config", cfg, "approve", "6100/WELD"); err == nil || !strings.Contains(err.Error(), "nothing of 6100/WELD waits for approval") {
		t.Errorf("approving twice: %v", err)
	}
	before := weldBudget()
	if before != "4,200.87" {
		t.Fatalf("approved budget %s, want the data's 4,200.87", before)
	}

	restateWeldRent(t, dir, "4830.00")
	mustRun(t, "--config", cfg, "sync")
	mustRun(t, "--config", cfg, "analyze")
	if got := weldBudget(); got != before {
		t.Errorf("the drift changed the budget before approval: %s, want %s", got, before)
	}
	r := weld()
	if r.Approval == nil || r.Approval.Status != "awaiting approval" || r.Approval.Approved == nil || r.Approval.Approved.By != "ana" ||
		r.Approval.Proposed == nil || r.Effective.Source != "approved" || r.Effective.Formula != "cost = 4,200.87" {
		t.Fatalf("after the drift: approval %+v, effective %+v", r.Approval, r.Effective)
	}
	alerts := mustRun(t, "--config", cfg, "alerts", "list", "--object", "6100/WELD")
	if !strings.Contains(alerts, "awaiting approval: budgets keep the approved formula until `costdrift approve 6100/WELD`") {
		t.Errorf("the drift alert does not say it awaits approval:\n%s", alerts)
	}
	if out := mustRun(t, "--config", cfg, "proposals"); !strings.Contains(out, "6100/WELD") || !strings.Contains(out, "cost = 4,830.00") {
		t.Errorf("proposals after the drift:\n%s", out)
	}

	mustRun(t, "--config", cfg, "decline", "6100/WELD", "--reason", "booking error, being reversed", "--by", "ben")
	if got := weldBudget(); got != before {
		t.Errorf("budget after decline %s, want the approved %s", got, before)
	}
	if r := weld(); r.Approval.Status != "declined" || r.Approval.Proposed.By != "ben" || r.Effective.Source != "approved" {
		t.Errorf("after decline: %+v %+v", r.Approval, r.Effective)
	}
	if out := mustRun(t, "--config", cfg, "proposals"); strings.Contains(out, "6100/WELD") {
		t.Errorf("a declined formula is still proposed:\n%s", out)
	}

	mustRun(t, "--config", cfg, "approve", "6100/WELD", "--reason", "the new lease after all", "--by", "ana")
	if got := weldBudget(); got != "4,830.00" {
		t.Errorf("budget after approval %s, want the new 4,830.00", got)
	}
	store := filepath.Join(dir, "costdrift.db")
	if n := count(t, store, `SELECT COUNT(*) FROM decision_log WHERE object = '6100/WELD' AND kind IN ('approve', 'decline')`); n != 3 {
		t.Errorf("%d approvals and declines in the log, want 3", n)
	}
}

// Decisions made from other processes while `costdrift run` ticks every
// second are all kept, none lost to another: each worker records
// decisions for three seconds while the daemon syncs and refits (an
// exclusion changes an object's input, so each cycle writes), and every
// decision that reported success is in the store, each replacing the one
// before it on its object exactly once.
func TestDecisionsWhileTheDaemonRuns(t *testing.T) {
	cfg := ownDemo(t)
	store := filepath.Join(filepath.Dir(cfg), "costdrift.db")
	daemonConfig(t, cfg, "")
	d, logs := startDaemon(t, cfg)
	waitFor(t, 10*time.Second, "a first cycle", func() bool { return logs.count("cycle finished") >= 1 }, logs)
	cyclesBefore := logs.count("cycle finished")

	type worker struct {
		args func(i int) []string
		ok   int
		errs []string
	}
	pin := func(w int) func(i int) []string {
		return func(i int) []string {
			return []string{"--config", cfg, "pin", "6200/WELD", "--class", "mixed", "--driver", "machine_hours",
				"--fixed", fmt.Sprintf("%d.00", 1800+100*w+i), "--rate", "2.35", "--reason", fmt.Sprintf("worker %d, pin %d", w, i), "--by", fmt.Sprintf("w%d", w)}
		}
	}
	workers := []*worker{
		{args: pin(0)},
		{args: pin(1)},
		{args: func(i int) []string {
			verb := []string{"exclude", "include"}[i%2]
			return []string{"--config", cfg, verb, "6100/WELD", "--period", "2024-05", "--reason", fmt.Sprintf("%s %d", verb, i), "--by", "w2"}
		}},
		// An acknowledgement with a note is a decision too: the daemon's
		// lock must not stand in its way.
		{args: func(i int) []string {
			return []string{"--config", cfg, "alerts", "ack", "1", "--note", fmt.Sprintf("looked at it, %d", i), "--by", "w3"}
		}},
	}
	deadline := time.Now().Add(3 * time.Second)
	var wg sync.WaitGroup
	for _, w := range workers {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for i := 0; time.Now().Before(deadline); i++ {
				out, err := command(w.args(i)...).CombinedOutput()
				if err != nil {
					w.errs = append(w.errs, fmt.Sprintf("%v: %s", err, out))
					continue
				}
				w.ok++
			}
		}()
	}
	wg.Wait()
	waitFor(t, 5*time.Second, "a cycle after the decisions", func() bool { return logs.count("cycle finished") > cyclesBefore+1 }, logs)
	stop(t, d, logs)
	for i, w := range workers {
		if len(w.errs) > 0 {
			t.Errorf("worker %d: %d of its decisions failed, the first: %s", i, len(w.errs), w.errs[0])
		}
		if w.ok < 2 {
			t.Errorf("worker %d made only %d decisions in three seconds", i, w.ok)
		}
	}
	// Stopped at an arbitrary moment, the daemon may interrupt a cycle that
	// has just begun, and says so at level ERROR: that is the stop, not a
	// decision's doing.
	if n := logs.count("level=ERROR") - logs.count("interrupted: the daemon was stopped"); n != 0 {
		t.Errorf("%d errors in the daemon's log\n%s", n, logs)
	}
	if n := count(t, store, `SELECT COUNT(*) FROM decisions WHERE alert_id = 1 AND made_by = 'w3'`); n != workers[3].ok {
		t.Errorf("notes on alert 1: %d stored, %d made", n, workers[3].ok)
	}
	pins := workers[0].ok + workers[1].ok
	for _, c := range []struct {
		what  string
		where string
		made  int
	}{
		{"pins of 6200/WELD", `object = '6200/WELD' AND kind IN ('pin', 'unpin')`, pins},
		{"exclusions and inclusions of 6100/WELD 2024-05", `object = '6100/WELD' AND period = '2024-05'`, workers[2].ok},
	} {
		if n := count(t, store, `SELECT COUNT(*) FROM decisions WHERE `+c.where); n != c.made {
			t.Errorf("%s: %d stored, %d made", c.what, n, c.made)
		}
		// A lost update would show as two decisions replacing the same one.
		if n := count(t, store, `SELECT COUNT(DISTINCT replaces) FROM decisions WHERE `+c.where); n != c.made-1 {
			t.Errorf("%s: %d distinct decisions replaced among %d, want %d", c.what, n, c.made, c.made-1)
		}
		if n := count(t, store, `SELECT COUNT(*) FROM decisions WHERE replaces IS NULL AND `+c.where); n != 1 {
			t.Errorf("%s: %d replace nothing, want the first alone", c.what, n)
		}
	}
	t.Logf("%d pins and %d exclusions or inclusions while the daemon ran %d cycles", pins, workers[2].ok, logs.count("cycle finished")-cyclesBefore)
}
