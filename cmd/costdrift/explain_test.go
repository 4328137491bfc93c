package main

import (
	"bytes"
	"encoding/json"
	"encoding/xml"
	"errors"
	"image/png"
	"io"
	"os"
	"path/filepath"
	"reflect"
	"regexp"
	"strings"
	"testing"
)

// explainJSON is the part of `explain --format json` the tests read.
type explainJSON struct {
	Class   string  `json:"class"`
	Driver  *string `json:"driver"`
	Lag     *int    `json:"lag"`
	N       int     `json:"n"`
	Drivers []struct {
		Rank        int      `json:"rank"`
		Driver      string   `json:"driver"`
		Lag         int      `json:"lag"`
		N           int      `json:"n"`
		P           *float64 `json:"p"`
		HolmP       *float64 `json:"holm_p"`
		Chosen      bool     `json:"chosen"`
		Significant bool     `json:"significant"`
	} `json:"drivers"`
	Models []struct {
		Model      string   `json:"model"`
		N          int      `json:"n"`
		AICc       *float64 `json:"aicc"`
		DeltaAICc  *float64 `json:"delta_aicc"`
		Comparable bool     `json:"comparable"`
		Best       bool     `json:"best"`
		Chosen     bool     `json:"chosen"`
	} `json:"models"`
	Comparison *struct {
		High struct {
			Period         string `json:"period"`
			ActivityPeriod string `json:"activity_period"`
		} `json:"high"`
	} `json:"high_low_comparison"`
	Diagnostics struct {
		DurbinWatson *float64 `json:"durbin_watson"`
	} `json:"diagnostics"`
	Notes []string `json:"notes"`
}

// Explain on the demo store (invented data): the step cost of supervision
// on frames built and the mixed cost of maintenance on machine hours of the
// period before, as the analysis stored them.
func TestExplainDemo(t *testing.T) {
	dir := t.TempDir()
	mustRun(t, "demo", "--dir", dir)
	cfg := filepath.Join(dir, "costdrift.yaml")

	t.Run("step cost", func(t *testing.T) {
		out := mustRun(t, "--config", cfg, "explain", "6300/ASSY")
		for _, want := range []string{
			"6300/ASSY — Supervision", "class      step", "driver     frames built", "formula    cost = 5,9",
			"Drivers tried", "High-low beside least squares, on frames built", "highest activity", "least squares",
			"Durbin–Watson", "Cook's distance", "estimates", "confidential",
		} {
			if !strings.Contains(out, want) {
				t.Errorf("explain 6300/ASSY lacks %q:\n%s", want, out)
			}
		}
		// The model comparison lists step first, with the lowest AICc.
		if !regexp.MustCompile(`(?m)^  step +frames_built, lag 0 +36 +[0-9.]+ +[0-9.]+ +0\.0 .*lowest AICc`).MatchString(out) {
			t.Errorf("model comparison does not rank step first with the lowest AICc:\n%s", out)
		}
		ex := explainAsJSON(t, cfg, "6300/ASSY")
		if ex.Class != "step" || *ex.Driver != "frames_built" || *ex.Lag != 0 {
			t.Errorf("JSON class %s on %v lag %v", ex.Class, *ex.Driver, *ex.Lag)
		}
		best := ""
		for _, m := range ex.Models {
			if m.Best {
				best = m.Model
			}
			if m.Comparable && (m.DeltaAICc == nil || (m.Model != "step" && *m.DeltaAICc < 4)) {
				t.Errorf("%s: ΔAICc %v; the step model must beat every other by at least 4", m.Model, m.DeltaAICc)
			}
		}
		if best != "step" {
			t.Errorf("lowest AICc: %q, want step", best)
		}
	})

	t.Run("mixed cost at lag 1", func(t *testing.T) {
		out := mustRun(t, "--config", cfg, "explain", "6500/WELD")
		for _, want := range []string{
			"6500/WELD — Maintenance", "class      mixed", "driver     machine hours of the period before",
			"35 periods, 2023-08 to 2026-06",
			"High-low beside least squares, on machine hours of the period before", "ACTIVITY OF",
			"highest activity  2025-08  2025-07", "lowest activity   2023-12  2023-11",
			"Durbin–Watson 1.85, near 2",
		} {
			if !strings.Contains(out, want) {
				t.Errorf("explain 6500/WELD lacks %q:\n%s", want, out)
			}
		}
		if !regexp.MustCompile(`(?m)^ +1  machine_hours +1 .*◀ chosen$`).MatchString(out) {
			t.Errorf("machine_hours at lag 1 is not ranked first and chosen:\n%s", out)
		}
		ex := explainAsJSON(t, cfg, "6500/WELD")
		d := ex.Drivers[0]
		if d.Driver != "machine_hours" || d.Lag != 1 || d.Rank != 1 || !d.Chosen || d.N != 35 || *d.HolmP < *d.P {
			t.Errorf("first driver %+v: want machine_hours lag 1, rank 1, chosen, n 35, Holm p >= p", d)
		}
		for _, m := range ex.Models {
			// Every model of the comparison is fitted on the chosen driver's 35
			// periods, so all of them carry a ΔAICc.
			if m.N != 35 || !m.Comparable || m.DeltaAICc == nil {
				t.Errorf("model %s on %d periods, comparable %v: want 35 and comparable", m.Model, m.N, m.Comparable)
			}
			if m.Model == "linear" && (!m.Best || !m.Chosen) {
				t.Errorf("linear must be chosen with the lowest AICc: %+v", m)
			}
		}
		if ex.Comparison == nil || ex.Comparison.High.Period != "2025-08" || ex.Comparison.High.ActivityPeriod != "2025-07" {
			t.Errorf("high-low comparison %+v", ex.Comparison)
		}
		if ex.Diagnostics.DurbinWatson == nil || len(ex.Notes) != 0 {
			t.Errorf("diagnostics %+v, notes %v", ex.Diagnostics, ex.Notes)
		}
	})

	t.Run("JSON carries the report's numbers", func(t *testing.T) {
		var rows []map[string]any
		if err := json.Unmarshal([]byte(mustRun(t, "--config", cfg, "report", "--format", "json")), &rows); err != nil {
			t.Fatal(err)
		}
		for _, object := range []string{"6300/ASSY", "6500/WELD", "6100/WELD"} {
			var ex map[string]any
			if err := json.Unmarshal([]byte(mustRun(t, "--config", cfg, "explain", object, "--format", "json")), &ex); err != nil {
				t.Fatalf("%s: %v", object, err)
			}
			var row map[string]any
			for _, r := range rows {
				if r["object"] == object {
					row = r
				}
			}
			if row == nil {
				t.Fatalf("%s not in the report", object)
			}
			for k, v := range row {
				if !reflect.DeepEqual(ex[k], v) {
					t.Errorf("%s %s: explain %v, report %v", object, k, ex[k], v)
				}
			}
		}
	})

	t.Run("charts", func(t *testing.T) {
		for _, c := range []struct{ object, file string }{
			{"6300/ASSY", "6300.png"}, {"6500/WELD", "6500.png"}, {"6500/WELD", "6500.svg"},
		} {
			path := filepath.Join(t.TempDir(), c.file)
			out := mustRun(t, "--config", cfg, "explain", c.object, "--chart", path)
			if !strings.Contains(out, "Chart written to "+path) {
				t.Errorf("%s: output does not name the chart:\n%s", c.object, out)
			}
			data, err := os.ReadFile(path)
			if err != nil {
				t.Fatal(err)
			}
			if st, _ := os.Stat(path); st.Mode().Perm() != 0o600 {
				t.Errorf("%s mode %v, want 0600: the chart shows ledger figures", path, st.Mode().Perm())
			}
			if strings.HasSuffix(path, ".png") {
				img, err := png.Decode(bytes.NewReader(data))
				if err != nil {
					t.Fatalf("%s: %v", path, err)
				}
				if b := img.Bounds(); b.Dx() != 720 || b.Dy() != 480 {
					t.Errorf("%s is %d×%d, want 720×480", path, b.Dx(), b.Dy())
				}
				continue
			}
			if !bytes.Contains(data, []byte("<svg")) || !bytes.Contains(data, []byte("6500/WELD Maintenance: cost = 931.18")) {
				t.Errorf("%s is not the 6500/WELD chart", path)
			}
			dec := xml.NewDecoder(bytes.NewReader(data))
			for {
				_, err := dec.Token()
				if errors.Is(err, io.EOF) {
					break
				}
				if err != nil {
					t.Fatalf("%s: not well-formed XML: %v", path, err)
				}
			}
		}
	})

	// 6400/ASSY changed behaviour in 2025-02 and is fitted on the 17
	// periods since; nothing changed after the analysis, so explain says
	// nothing of changed data (the 36 periods of the window are not the 17
	// fitted).
	t.Run("an object with a break has no note of changed data", func(t *testing.T) {
		out := mustRun(t, "--config", cfg, "explain", "6400/ASSY")
		if strings.Contains(out, "changed since analysis") {
			t.Errorf("explain 6400/ASSY claims changed data:\n%s", out)
		}
	})

	// Every class has a chart: an object without a driver its cost over
	// time, in FILE; one with a driver the scatter in FILE and the cost over
	// time beside it. The explanation is printed either way.
	t.Run("every class has a chart", func(t *testing.T) {
		for _, c := range []struct{ object, class, file, scatter, timeline string }{
			{"6100/WELD", "fixed", "rent.png", "", "rent.png"},
			{"6110/PAINT", "fixed", "lease.svg", "", "lease.svg"},
			{"6600/ASSY", "unexplained", "marketing.png", "", "marketing.png"},
			{"6400/ASSY", "variable", "freight.png", "freight.png", "freight-over-time.png"},
			{"6300/ASSY", "step", "supervision.svg", "supervision.svg", "supervision-over-time.svg"},
		} {
			dir := t.TempDir()
			out := mustRun(t, "--config", cfg, "explain", c.object, "--chart", filepath.Join(dir, c.file))
			if !strings.Contains(out, "class      "+c.class) || !strings.Contains(out, "Formulas are statistical estimates") {
				t.Errorf("explain %s --chart does not print the explanation:\n%s", c.object, out)
			}
			if c.scatter != "" && !strings.Contains(out, "Chart written to "+filepath.Join(dir, c.scatter)) {
				t.Errorf("%s: output does not name the scatter:\n%s", c.object, out)
			}
			if !strings.Contains(out, "Cost over time written to "+filepath.Join(dir, c.timeline)) {
				t.Errorf("%s: output does not name the cost over time:\n%s", c.object, out)
			}
			data, err := os.ReadFile(filepath.Join(dir, c.timeline))
			if err != nil {
				t.Fatal(err)
			}
			if strings.HasSuffix(c.timeline, ".svg") && !bytes.Contains(data, []byte(c.object)) {
				t.Errorf("%s does not name %s", c.timeline, c.object)
			}
			if strings.HasSuffix(c.timeline, ".png") {
				if _, err := png.Decode(bytes.NewReader(data)); err != nil {
					t.Errorf("%s: %v", c.timeline, err)
				}
			}
		}
	})

	t.Run("unknown objects", func(t *testing.T) {
		for _, tc := range []struct {
			object string
			want   []string
		}{
			{"6200/WLD", []string{`unknown cost object "6200/WLD"`, "did you mean 6200/WELD", "`costdrift report`"}},
			{"6200", []string{"did you mean 6200/PAINT, 6200/WELD?"}},
			{"9999/XYZ", []string{`unknown cost object "9999/XYZ" (`, "`costdrift report`"}},
		} {
			_, err := run(t, "--config", cfg, "explain", tc.object)
			if err == nil {
				t.Errorf("explain %s succeeded", tc.object)
				continue
			}
			for _, w := range tc.want {
				if !strings.Contains(err.Error(), w) {
					t.Errorf("explain %s: %q lacks %q", tc.object, err, w)
				}
			}
		}
		if _, err := run(t, "--config", cfg, "explain", "6500/WELD", "--format", "yaml"); err == nil || !strings.Contains(err.Error(), "text or json") {
			t.Errorf("--format yaml: %v", err)
		}
	})

	// Runs last: it changes the store.
	t.Run("ledger changed since the analysis", func(t *testing.T) {
		extra := "entry_id,line,date,account,cost_center,amount,description\n" +
			"XT-1,1,2026-06-30,6700,WELD,150.00,new account after the analysis\n" +
			"XT-2,1,2026-06-30,9100,WELD,80.00,outside the analysed accounts\n" +
			"XT-3,1,2025-08-31,6500,WELD,500.00,late maintenance invoice\n"
		if err := os.WriteFile(filepath.Join(dir, "data", "gl", "gl-zz-extra.csv"), []byte(extra), 0o600); err != nil {
			t.Fatal(err)
		}
		mustRun(t, "--config", cfg, "sync")
		for object, want := range map[string]string{
			"6700/WELD": "6700/WELD has ledger lines but no analysis yet: run `costdrift analyze` first",
			"9100/WELD": "account 9100 is outside analysis.accounts",
		} {
			if _, err := run(t, "--config", cfg, "explain", object); err == nil || !strings.Contains(err.Error(), want) {
				t.Errorf("explain %s: %v, want %q", object, err, want)
			}
		}
		// The high point's cost changed: the explanation says so.
		out := strings.Join(strings.Fields(mustRun(t, "--config", cfg, "explain", "6500/WELD")), " ") // unwrapped
		if !strings.Contains(out, "6500/WELD changed since analysis run 1 (the high or low activity period now has another cost") ||
			!strings.Contains(out, "run `costdrift analyze` to refresh") {
			t.Errorf("no note that the ledger changed:\n%s", out)
		}
	})
}

func TestExplainBeforeAnalysis(t *testing.T) {
	cfg, _ := setup(t, "entry_id,date,account,amount\nJ1,2026-01-15,6100,100.00\n")
	mustRun(t, "--config", cfg, "sync")
	_, err := run(t, "--config", cfg, "explain", "6100")
	if err == nil || err.Error() != "no analysis stored yet: run `costdrift analyze` first" {
		t.Errorf("explain before any analysis: %v", err)
	}
}

func explainAsJSON(t *testing.T, cfg, object string) explainJSON {
	t.Helper()
	var ex explainJSON
	if err := json.Unmarshal([]byte(mustRun(t, "--config", cfg, "explain", object, "--format", "json")), &ex); err != nil {
		t.Fatalf("explain %s --format json: %v", object, err)
	}
	return ex
}
