package main

import (
	"flag"
	"fmt"
	"os"
	"path/filepath"
	"regexp"
	"strings"
	"testing"
)

var update = flag.Bool("update", false, "rewrite the golden files in testdata/golden")

// The text outputs an accountant reads, on the demo store (invented data),
// compared character for character with golden files, so that a change of
// layout or of a figure shows up in review. `go test ./cmd/costdrift/ -run
// TestGoldenOutputs -update` rewrites them after an intended change.
func TestGoldenOutputs(t *testing.T) {
	dir := demoDir(t)
	cfg := filepath.Join(dir, "costdrift.yaml")
	cases := []struct {
		name string
		args []string
	}{
		{"report", []string{"report"}},
		{"explain-6300-ASSY", []string{"explain", "6300/ASSY"}},
		{"explain-6500-WELD", []string{"explain", "6500/WELD"}},
		{"explain-6100-PAINT", []string{"explain", "6100/PAINT"}},
		{"explain-6700-ASSY", []string{"explain", "6700/ASSY"}},
		{"budget-2026-q3", []string{"budget", "--plan", filepath.Join(dir, "plans", "plan-2026-q3.csv")}},
		{"budget-2026-q3-spread", []string{"budget", "--plan", filepath.Join(dir, "plans", "plan-2026-q3.csv"), "--spread"}},
		{"variance-2026-06", []string{"variance", "--period", "2026-06", "--plan", filepath.Join(dir, "plans", "plan-2026-q2.csv")}},
		{"alerts-list", []string{"alerts", "list", "--status", "all"}},
		{"history-6110-PAINT", []string{"history", "6110/PAINT"}},
		{"history-6400-ASSY", []string{"history", "6400/ASSY"}},
		{"history-6400-ASSY-json", []string{"history", "6400/ASSY", "--format", "json"}},
		{"report-json", []string{"report", "--format", "json"}},
		{"explain-6110-PAINT-json", []string{"explain", "6110/PAINT", "--format", "json"}},
		{"report-csv", []string{"report", "--format", "csv"}},
		{"report-xlsx", []string{"report", "--format", "xlsx"}},
		{"report-html", []string{"report", "--format", "html"}},
		{"budget-2026-q3-json", []string{"budget", "--plan", filepath.Join(dir, "plans", "plan-2026-q3.csv"), "--format", "json"}},
		{"budget-2026-q3-xlsx", []string{"budget", "--plan", filepath.Join(dir, "plans", "plan-2026-q3.csv"), "--format", "xlsx"}},
		{"budget-2026-q3-csv", []string{"budget", "--plan", filepath.Join(dir, "plans", "plan-2026-q3.csv"), "--format", "csv"}},
		{"variance-2026-06-json", []string{"variance", "--period", "2026-06", "--plan", filepath.Join(dir, "plans", "plan-2026-q2.csv"), "--format", "json"}},
		{"variance-2026-06-csv", []string{"variance", "--period", "2026-06", "--plan", filepath.Join(dir, "plans", "plan-2026-q2.csv"), "--format", "csv"}},
		{"variance-2026-06-xlsx", []string{"variance", "--period", "2026-06", "--plan", filepath.Join(dir, "plans", "plan-2026-q2.csv"), "--format", "xlsx"}},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			var out string
			if strings.HasSuffix(tc.name, "-xlsx") {
				// A workbook's golden file is its cells' values, one row a
				// line, tab-separated, as a program reading it sees them.
				path := filepath.Join(t.TempDir(), "out.xlsx")
				mustRun(t, append(append([]string{"--config", cfg}, tc.args...), "--output", path)...)
				_, rows := xlsxCells(t, path)
				var b strings.Builder
				for _, r := range rows {
					b.WriteString(strings.Join(r, "\t") + "\n")
				}
				out = b.String()
			} else {
				out = mustRun(t, append([]string{"--config", cfg}, tc.args...)...)
			}
			if strings.HasSuffix(tc.name, "-html") {
				// The charts are checked where they are drawn
				// (internal/chart) and rendered (TestHTMLReportRendersInChromium);
				// the golden file keeps the page around them.
				out = inlineChart.ReplaceAllString(out, "<svg>…</svg>")
			}
			// The demo folder is a new temporary one each run.
			out = strings.ReplaceAll(out, dir, "DEMO")
			path := filepath.Join("testdata", "golden", tc.name+".txt")
			if *update {
				if err := os.WriteFile(path, []byte(out), 0o644); err != nil {
					t.Fatal(err)
				}
				return
			}
			want, err := os.ReadFile(path)
			if err != nil {
				t.Fatalf("%v (-update writes it)", err)
			}
			if out != string(want) {
				t.Errorf("costdrift %s differs from %s (-update rewrites it after an intended change):\n%s",
					strings.Join(tc.args, " "), path, diffLines(string(want), out))
			}
		})
	}
}

// inlineChart is an SVG chart inline in an HTML page.
var inlineChart = regexp.MustCompile(`(?s)<svg .*?</svg>`)

// diffLines shows the first lines where two texts differ, with line numbers.
func diffLines(want, got string) string {
	w, g := strings.Split(want, "\n"), strings.Split(got, "\n")
	var b strings.Builder
	shown := 0
	for i := 0; i < max(len(w), len(g)) && shown < 12; i++ {
		var wl, gl string
		if i < len(w) {
			wl = w[i]
		}
		if i < len(g) {
			gl = g[i]
		}
		if wl != gl {
			fmt.Fprintf(&b, "line %d\n  want: %s\n  got:  %s\n", i+1, wl, gl)
			shown++
		}
	}
	return b.String()
}
