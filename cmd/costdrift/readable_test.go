package main

import (
	"encoding/json"
	"path/filepath"
	"regexp"
	"strings"
	"testing"
)

var (
	// unreadable is a figure no reader should meet: exponent notation,
	// infinities, not-a-number, and the largest float that stands in for
	// an infinite statistic in the store.
	unreadable = regexp.MustCompile(`\de\+|\bInf\b|\bNaN\b|[+-]Inf|1\.797693`)
	// negativeRate is a formula with a rate below zero: "cost = -2.00 per
	// frame" or "cost = 100.00 - 2.00 per frame".
	negativeRate = regexp.MustCompile(`cost = (-|-?[\d,.]+ - )[\d,.]+ per `)
)

func checkReadable(t *testing.T, what, out string) {
	t.Helper()
	if m := unreadable.FindString(out); m != "" {
		i := strings.Index(out, m)
		t.Errorf("%s shows %q: …%s…", what, m, out[max(0, i-80):min(len(out), i+80)])
	}
	if m := negativeRate.FindString(out); m != "" {
		t.Errorf("%s shows a formula with a negative rate: %q", what, m)
	}
}

// No output of any command on the demo shows a figure in exponent
// notation, an infinity, NaN or a formula with a negative rate: every
// object's explanation and history in text and JSON, the report in every
// format, the alerts, budget and variances.
func TestDemoOutputsAreReadable(t *testing.T) {
	dir := demoDir(t)
	cfg := filepath.Join(dir, "costdrift.yaml")
	var rows []struct {
		Object string `json:"object"`
	}
	if err := json.Unmarshal([]byte(mustRun(t, "--config", cfg, "report", "--format", "json")), &rows); err != nil {
		t.Fatal(err)
	}
	commands := [][]string{
		{"report"}, {"report", "--format", "json"}, {"report", "--format", "csv"}, {"report", "--format", "html"},
		{"alerts", "list", "--status", "all"}, {"alerts", "list", "--status", "all", "--format", "json"}, {"status"},
	}
	for _, f := range []string{"table", "json", "csv"} {
		commands = append(commands,
			[]string{"budget", "--plan", filepath.Join(dir, "plans", "plan-2026-q3.csv"), "--format", f},
			[]string{"variance", "--period", "2026-06", "--plan", filepath.Join(dir, "plans", "plan-2026-q2.csv"), "--format", f})
	}
	for _, r := range rows {
		for _, f := range []string{"text", "json"} {
			commands = append(commands, []string{"explain", r.Object, "--format", f}, []string{"history", r.Object, "--format", f})
		}
	}
	var alerts []struct {
		ID int64 `json:"id"`
	}
	if err := json.Unmarshal([]byte(mustRun(t, "--config", cfg, "alerts", "list", "--status", "all", "--format", "json")), &alerts); err != nil {
		t.Fatal(err)
	}
	for _, a := range alerts {
		id := jsonNumber(a.ID)
		commands = append(commands, []string{"alerts", "show", id}, []string{"alerts", "show", id, "--format", "json"})
	}
	if len(rows) != 14 || len(alerts) == 0 {
		t.Fatalf("%d objects, %d alerts in the demo", len(rows), len(alerts))
	}
	for _, c := range commands {
		checkReadable(t, "costdrift "+strings.Join(c, " "), mustRun(t, append([]string{"--config", cfg}, c...)...))
	}
}

// quoted is a short quotation in an output, in text or in JSON.
var quoted = regexp.MustCompile(`\\?"[^"\n]{1,40}?\\?"`)

func jsonNumber(n int64) string {
	b, _ := json.Marshal(n)
	return string(b)
}

// The same on each file of the bad-input corpus that syncs: what sync,
// analyze, report, alerts and status say of it is readable.
func TestBadInputOutputsAreReadable(t *testing.T) {
	for _, tc := range ledgerCorpus() {
		if tc.fails {
			continue
		}
		t.Run(tc.name, func(t *testing.T) {
			cfg, _ := setup(t, tc.content)
			for _, c := range [][]string{{"sync"}, {"analyze"}, {"report"}, {"report", "--format", "json"}, {"report", "--format", "csv"},
				{"alerts", "list", "--status", "all"}, {"status"}} {
				out, _ := run(t, append([]string{"--config", cfg}, c...)...) // errors are outputs too
				// A reject reason quotes what the file wrote ("NaN"): the
				// file's words, not a figure costdrift shows.
				out = quoted.ReplaceAllStringFunc(out, func(q string) string {
					if strings.Contains(tc.content, strings.Trim(q, `"\`)) {
						return `""`
					}
					return q
				})
				checkReadable(t, tc.name+": costdrift "+strings.Join(c, " "), out)
			}
		})
	}
}
