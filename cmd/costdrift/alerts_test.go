package main

import (
	"context"
	"encoding/json"
	"io"
	"path/filepath"
	"reflect"
	"strings"
	"testing"

	"github.com/costdrift/costdrift/internal/costdrift"
)

const hostile = "paint spending <script>alert(\"x\")</script> & \x1b[31mred\x1b[0m\nsecond line"

// alertStore writes a config into a fresh folder and a store holding four
// alerts put there through ApplyAlerts, as the rules will:
//
//	1 rate_shift       6200/WELD   warning  2025-07  open, with evidence
//	2 fixed_shift      6100/WELD   critical 2025-07  open
//	3 spending_outlier 6400/PAINT  info     2026-05  open, hostile message
//	4 data_gap         6500        warning  2026-04  resolved
func alertStore(t *testing.T) string {
	t.Helper()
	cfg := filepath.Join(t.TempDir(), "costdrift.yaml")
	mustRun(t, "--config", cfg, "init")
	a := &app{configPath: cfg, out: io.Discard, errw: io.Discard, now: today}
	e, err := a.loadConfig()
	if err != nil {
		t.Fatal(err)
	}
	db, err := e.OpenToRead(context.Background(), false)
	if err != nil {
		t.Fatal(err)
	}
	defer db.Close()
	raise := func(kind costdrift.AlertKind, object string, severity costdrift.Severity, period, message string, evidence map[string]any) costdrift.Alert {
		return costdrift.Alert{Kind: kind, Object: object, Severity: severity, Period: period, Message: message,
			Fingerprint: costdrift.Fingerprint(kind, object, ""), Evidence: costdrift.AlertEvidence{Other: evidence}}
	}
	alerts := []costdrift.Alert{
		raise(costdrift.AlertRateShift, "6200/WELD", costdrift.SeverityWarning, "2025-07", "rate per machine hour up from 1.88 to 2.21 since 2025-07",
			map[string]any{"test": "sup-F", "p_value": 0.0012, "n": 36, "break": "2025-07",
				"old_formula": "cost = 4,210.50 + 1.88 per machine hour", "new_formula": "cost = 4,190.00 + 2.21 per machine hour",
				"fits":    []any{map[string]any{"from": "2023-07", "r2": 0.97}, map[string]any{"from": "2025-07", "r2": 0.95}},
				"periods": []any{"2025-07", "2025-08"}}),
		raise(costdrift.AlertFixedShift, "6100/WELD", costdrift.SeverityCritical, "2025-07", "equipment lease up 35 % from 2025-07", nil),
		raise(costdrift.AlertSpendingOutlier, "6400/PAINT", costdrift.SeverityInfo, "2026-05", hostile, map[string]any{"upper": 11800.5}),
		raise(costdrift.AlertDataGap, "6500", costdrift.SeverityWarning, "2026-04", "no rent posted in 2026-04", nil),
	}
	evaluated := []costdrift.AlertKind{costdrift.AlertRateShift, costdrift.AlertFixedShift, costdrift.AlertSpendingOutlier, costdrift.AlertDataGap}
	if _, err := db.ApplyAlerts(context.Background(), alerts, evaluated, "2026-05"); err != nil {
		t.Fatal(err)
	}
	if _, err := db.ApplyAlerts(context.Background(), alerts[:3], evaluated, "2026-06"); err != nil { // the gap is filled
		t.Fatal(err)
	}
	return cfg
}

// alertListJSON is the documented contract of `alerts list --format json`
// (README, Command line and Alerts) and the extras.
type alertListJSON struct {
	ID          int64          `json:"id"`
	Kind        string         `json:"kind"`
	Object      string         `json:"object"`
	Severity    string         `json:"severity"`
	Status      string         `json:"status"`
	Period      string         `json:"period"`
	Message     string         `json:"message"`
	AckUntil    *string        `json:"ack_until"`
	Occurrences int            `json:"occurrences"`
	CreatedAt   string         `json:"created_at"`
	UpdatedAt   string         `json:"updated_at"`
	ResolvedAt  *string        `json:"resolved_at"`
	Fingerprint string         `json:"fingerprint"`
	Evidence    map[string]any `json:"evidence"`
}

func listJSON(t *testing.T, cfg string, args ...string) []alertListJSON {
	t.Helper()
	out := mustRun(t, append([]string{"--config", cfg, "alerts", "list", "--format", "json"}, args...)...)
	var rows []alertListJSON
	if err := json.Unmarshal([]byte(out), &rows); err != nil {
		t.Fatalf("alerts list --format json: %v\n%s", err, out)
	}
	return rows
}

func ids(rows []alertListJSON) []int64 {
	out := []int64{}
	for _, r := range rows {
		out = append(out, r.ID)
	}
	return out
}

func TestAlertsListJSON(t *testing.T) {
	cfg := alertStore(t)
	out := mustRun(t, "--config", cfg, "alerts", "list", "--format", "json")
	// The field names the README gives (Alerts), each present on every element.
	var raw []map[string]json.RawMessage
	if err := json.Unmarshal([]byte(out), &raw); err != nil {
		t.Fatal(err)
	}
	for i, r := range raw {
		for _, key := range []string{"id", "kind", "object", "severity", "status", "period", "message",
			"ack_until", "occurrences", "created_at", "updated_at", "resolved_at", "fingerprint", "evidence"} {
			if _, ok := r[key]; !ok {
				t.Errorf("element %d has no %q", i, key)
			}
		}
	}
	rows := listJSON(t, cfg)
	// Open and acknowledged only; most severe first, then the newest period.
	if got := ids(rows); !reflect.DeepEqual(got, []int64{2, 1, 3}) {
		t.Fatalf("ids %v, want [2 1 3]", got)
	}
	r := rows[1]
	want := alertListJSON{ID: 1, Kind: "rate_shift", Object: "6200/WELD", Severity: "warning", Status: "open", Period: "2025-07",
		Message: "rate per machine hour up from 1.88 to 2.21 since 2025-07", Occurrences: 2,
		// today() is the test clock: 2026-12-01 09:00 UTC.
		CreatedAt: "2026-12-01T09:00:00Z", UpdatedAt: "2026-12-01T09:00:00Z",
		Fingerprint: costdrift.Fingerprint(costdrift.AlertRateShift, "6200/WELD", ""), Evidence: r.Evidence}
	if !reflect.DeepEqual(r, want) {
		t.Errorf("alert 1:\n got  %+v\n want %+v", r, want)
	}
	if r.Evidence["p_value"] != 0.0012 || r.Evidence["n"] != 36.0 || r.Evidence["test"] != "sup-F" {
		t.Errorf("evidence %v", r.Evidence)
	}
	// No evidence is an empty object, not null.
	if rows[0].Evidence == nil || len(rows[0].Evidence) != 0 || !strings.Contains(out, `"evidence": {}`) {
		t.Errorf("alert 2 evidence %v", rows[0].Evidence)
	}

	// Hostile text is encoded so that no '<' reaches the output, and it
	// decodes back to exactly what was stored.
	if strings.Contains(out, "<script>") || !strings.Contains(out, `\u003cscript\u003ealert(\"x\")\u003c/script\u003e \u0026 \u001b[31mred`) {
		t.Errorf("hostile message not escaped in JSON:\n%s", out)
	}
	if rows[2].Message != hostile {
		t.Errorf("message decoded as %q, want %q", rows[2].Message, hostile)
	}

	all := listJSON(t, cfg, "--status", "all")
	if got := ids(all); !reflect.DeepEqual(got, []int64{2, 4, 1, 3}) { // 4 is a warning of 2026-04, newer than 1
		t.Errorf("--status all: ids %v, want [2 4 1 3]", got)
	}
	resolved := listJSON(t, cfg, "--status", "resolved")
	if len(resolved) != 1 || resolved[0].ID != 4 || resolved[0].Status != "resolved" || resolved[0].ResolvedAt == nil ||
		*resolved[0].ResolvedAt != "2026-12-01T09:00:00Z" {
		t.Errorf("--status resolved: %+v", resolved)
	}
	if got := ids(listJSON(t, cfg, "--min-severity", "warning", "--kind", "fixed_shift")); !reflect.DeepEqual(got, []int64{2}) {
		t.Errorf("--min-severity warning --kind fixed_shift: ids %v", got)
	}
	if got := ids(listJSON(t, cfg, "--object", "6200/WELD")); !reflect.DeepEqual(got, []int64{1}) {
		t.Errorf("--object 6200/WELD: ids %v", got)
	}
	// Nothing selected is an empty array.
	if out := mustRun(t, "--config", cfg, "alerts", "list", "--format", "json", "--status", "acknowledged"); out != "[]\n" {
		t.Errorf("no acknowledged alerts: %q, want []", out)
	}
}

func TestAlertsListTable(t *testing.T) {
	cfg := alertStore(t)
	out := mustRun(t, "--config", cfg, "alerts", "list")
	lines := strings.Split(out, "\n")
	header := lines[0]
	if !strings.HasPrefix(header, "ID  SEVERITY  KIND") {
		t.Fatalf("header %q", header)
	}
	// Aligned: each row's values start under their column's name.
	rows := []struct{ severity, kind, object, period, status string }{
		{"critical", "fixed_shift", "6100/WELD", "2025-07", "open"},
		{"warning", "rate_shift", "6200/WELD", "2025-07", "open"},
		{"info", "spending_outlier", "6400/PAINT", "2026-05", "open"},
	}
	for i, r := range rows {
		line := lines[i+1]
		for j, cell := range []string{r.severity, r.kind, r.object, r.period, r.status} {
			col := []string{"SEVERITY", "KIND", "OBJECT", "PERIOD", "STATUS"}[j]
			at := strings.Index(header, col)
			if !strings.HasPrefix(line[at:], cell+" ") {
				t.Errorf("row %d: %q not under %s in\n%s\n%s", i+1, cell, col, header, line)
			}
		}
	}
	// Hostile text is shown as text: the markup as it is (a terminal runs
	// no script), the escape sequence and the line break as visible escapes
	// that neither recolour the terminal nor break the table.
	if !strings.Contains(lines[3], `paint spending <script>alert("x")</script> & \x1b[31mred\x1b[0m\nsecond line`) {
		t.Errorf("hostile row %q", lines[3])
	}
	if strings.Contains(out, "\x1b") || lines[4] != "" {
		t.Errorf("control characters reached the terminal:\n%q", out)
	}
	if strings.Contains(out, "6500") {
		t.Errorf("the resolved alert is listed by default:\n%s", out)
	}
	if !strings.Contains(mustRun(t, "--config", cfg, "alerts", "list", "--status", "all"), "6500") {
		t.Errorf("--status all leaves out the resolved alert")
	}
	if out := mustRun(t, "--config", cfg, "alerts", "list", "--status", "acknowledged"); out != "no acknowledged alerts\n" {
		t.Errorf("empty list: %q", out)
	}
}

func TestAlertsShow(t *testing.T) {
	cfg := alertStore(t)
	out := mustRun(t, "--config", cfg, "alerts", "show", "1")
	for _, want := range []string{
		"Alert 1: rate_shift on 6200/WELD\n",
		"  severity      warning\n",
		"  status        open\n",
		"  period        2025-07\n",
		"  message       rate per machine hour up from 1.88 to 2.21 since 2025-07\n",
		"  first raised  2026-12-01 09:00 UTC\n",
		"  occurrences   2\n",
		"  fingerprint   " + costdrift.Fingerprint(costdrift.AlertRateShift, "6200/WELD", "") + "\n",
		"Evidence\n",
		// Keys in order, values as stored, nested values under their key.
		"  break        2025-07\n",
		"  fits\n    [1]\n      from     2023-07\n      r2       0.97\n    [2]\n      from     2025-07\n      r2       0.95\n",
		"  n            36\n",
		"  new_formula  cost = 4,190.00 + 2.21 per machine hour\n",
		"  p_value      0.0012\n",
		"  periods      2025-07, 2025-08\n",
		"  test         sup-F\n",
	} {
		if !strings.Contains(out, want) {
			t.Errorf("alerts show 1 lacks %q:\n%s", want, out)
		}
	}
	if strings.Contains(out, "resolved  ") {
		t.Errorf("an open alert shows a resolved time:\n%s", out)
	}
	resolved := mustRun(t, "--config", cfg, "alerts", "show", "4")
	if !strings.Contains(resolved, "  status        resolved\n") || !strings.Contains(resolved, "  resolved      2026-12-01 09:00 UTC\n") ||
		!strings.Contains(resolved, "Evidence: none stored\n") {
		t.Errorf("alerts show 4:\n%s", resolved)
	}
	if hostileOut := mustRun(t, "--config", cfg, "alerts", "show", "3"); strings.Contains(hostileOut, "\x1b") ||
		!strings.Contains(hostileOut, `<script>alert("x")</script>`) {
		t.Errorf("alerts show 3:\n%q", hostileOut)
	}

	var a alertListJSON
	if err := json.Unmarshal([]byte(mustRun(t, "--config", cfg, "alerts", "show", "1", "--format", "json")), &a); err != nil {
		t.Fatal(err)
	}
	fits, _ := a.Evidence["fits"].([]any)
	if a.ID != 1 || a.Kind != "rate_shift" || a.Evidence["p_value"] != 0.0012 || len(fits) != 2 {
		t.Errorf("alerts show 1 --format json: %+v", a)
	}
}

func TestAlertsAck(t *testing.T) {
	cfg := alertStore(t)
	store := filepath.Join(filepath.Dir(cfg), "costdrift.db")
	out := mustRun(t, "--config", cfg, "alerts", "ack", "1", "--until", "2027-03")
	if out != "alert 1 (rate_shift on 6200/WELD) acknowledged until 2027-03: it opens again if it still holds after 2027-03, or escalates\n" {
		t.Errorf("ack --until: %q", out)
	}
	if n := count(t, store, "SELECT COUNT(*) FROM alerts WHERE id = 1 AND status = 'acknowledged' AND ack_until = '2027-03'"); n != 1 {
		t.Errorf("alert 1 not acknowledged until 2027-03 in the store")
	}
	out = mustRun(t, "--config", cfg, "alerts", "ack", "2")
	if out != "alert 2 (fixed_shift on 6100/WELD) acknowledged until its condition changes: it opens again if it escalates, or clears and comes back\n" {
		t.Errorf("ack: %q", out)
	}
	if n := count(t, store, "SELECT COUNT(*) FROM alerts WHERE id = 2 AND status = 'acknowledged' AND ack_until IS NULL"); n != 1 {
		t.Errorf("alert 2 not acknowledged without a period in the store")
	}
	// Acknowledged alerts are still listed by default, with their status.
	list := mustRun(t, "--config", cfg, "alerts", "list")
	if !strings.Contains(list, "acknowledged until 2027-03") || !strings.Contains(list, "6100/WELD   2025-07  acknowledged  ") {
		t.Errorf("list after ack:\n%s", list)
	}
	if got := ids(listJSON(t, cfg, "--status", "open")); !reflect.DeepEqual(got, []int64{3}) {
		t.Errorf("open after ack: %v, want [3]", got)
	}
	if n := count(t, store, "SELECT COUNT(*) FROM open_alerts"); n != 1 {
		t.Errorf("open_alerts has %d rows, want 1", n)
	}
}

// Each failure is one line naming the thing and what to do.
func TestAlertsErrors(t *testing.T) {
	cfg := alertStore(t)
	tests := []struct {
		name string
		args []string
		want string
	}{
		{"id not a number", []string{"alerts", "show", "abc"}, "alert id must be a number as `costdrift alerts list` shows it, not \"abc\""},
		{"id zero", []string{"alerts", "ack", "0"}, "alert id must be a number as `costdrift alerts list` shows it, not \"0\""},
		{"no such alert", []string{"alerts", "show", "99"}, "no alert 99 in the store: `costdrift alerts list --status all` lists every alert"},
		{"ack no such alert", []string{"alerts", "ack", "99"}, "no alert 99 in the store: `costdrift alerts list --status all` lists every alert"},
		{"ack resolved", []string{"alerts", "ack", "4"}, "alert 4 is resolved: its condition has cleared, so there is nothing to acknowledge"},
		{"until not a period", []string{"alerts", "ack", "1", "--until", "2027-13"},
			`--until: period "2027-13" is not YYYY-MM; give a period of the month calendar the store uses`},
		{"bad status", []string{"alerts", "list", "--status", "closed"}, `--status must be open, acknowledged, resolved or all, not "closed"`},
		{"bad format", []string{"alerts", "list", "--format", "html"}, `--format must be table or json, not "html"`},
		{"bad show format", []string{"alerts", "show", "1", "--format", "csv"}, `--format must be table or json, not "csv"`},
		{"bad kind", []string{"alerts", "list", "--kind", "drift"},
			`--kind must be one of reclassified, driver_changed, fixed_shift, rate_shift, spending_outlier, out_of_range, data_gap, stale_source, source_failure, data_quality, pin_review, not "drift"`},
		{"bad severity", []string{"alerts", "list", "--min-severity", "high"}, `--min-severity must be info, warning or critical, not "high"`},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			_, err := run(t, append([]string{"--config", cfg}, tc.args...)...)
			if err == nil || err.Error() != tc.want {
				t.Errorf("error %v\nwant %s", err, tc.want)
			}
		})
	}
	// A refused ack changes nothing.
	if got := ids(listJSON(t, cfg, "--status", "open")); !reflect.DeepEqual(got, []int64{2, 1, 3}) {
		t.Errorf("open alerts after refused commands: %v", got)
	}
}

func TestAlertsBeforeSync(t *testing.T) {
	cfg := filepath.Join(t.TempDir(), "costdrift.yaml")
	mustRun(t, "--config", cfg, "init")
	_, err := run(t, "--config", cfg, "alerts", "list")
	if err == nil || !strings.Contains(err.Error(), "run `costdrift sync` first") {
		t.Errorf("alerts list without a store: %v", err)
	}
}
