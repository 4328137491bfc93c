package main

import (
	"bytes"
	"encoding/json"
	"image/png"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// The demo's renewed lease (6110/PAINT, 2,800.00 a month until 2025-06,
// 3,300.00 from 2025-07, as internal/demo designs it) has two formulas in
// its history, the change between them and its fixed_shift alert; the
// chart of its cost over time is written.
func TestHistoryDemo(t *testing.T) {
	dir := demoDir(t)
	cfg := filepath.Join(dir, "costdrift.yaml")
	chartPath := filepath.Join(t.TempDir(), "lease.png")
	out := mustRun(t, "--config", cfg, "history", "6110/PAINT", "--chart", chartPath)
	for _, want := range []string{
		"6110/PAINT — Equipment lease   (amounts in EUR per period)",
		"2023-07  2025-06  fixed  cost = 2,800.00",
		"2025-07  now      fixed  cost = 3,300.00",
		"statistic exact fit, p < 0.001",
		"fixed_shift  2025-07  open    6110/PAINT Equipment lease: fixed cost per period rose 18 % from 2025-07, 2,800.00 to 3,300.00",
		"Chart written to " + chartPath,
	} {
		if !strings.Contains(out, want) {
			t.Errorf("history 6110/PAINT lacks %q:\n%s", want, out)
		}
	}
	data, err := os.ReadFile(chartPath)
	if err != nil {
		t.Fatal(err)
	}
	if _, err := png.Decode(bytes.NewReader(data)); err != nil {
		t.Errorf("%s: %v", chartPath, err)
	}

	var h struct {
		Formulas []struct {
			From           string   `json:"from"`
			To             *string  `json:"to"`
			FixedPerPeriod *float64 `json:"fixed_per_period"`
		} `json:"formulas"`
		Alerts []struct {
			Kind string `json:"kind"`
		} `json:"alerts"`
	}
	if err := json.Unmarshal([]byte(mustRun(t, "--config", cfg, "history", "6110/PAINT", "--format", "json")), &h); err != nil {
		t.Fatal(err)
	}
	if len(h.Formulas) != 2 || h.Formulas[0].To == nil || *h.Formulas[0].To != "2025-06" || h.Formulas[1].To != nil ||
		*h.Formulas[0].FixedPerPeriod != 2800 || *h.Formulas[1].FixedPerPeriod != 3300 || len(h.Alerts) != 1 || h.Alerts[0].Kind != "fixed_shift" {
		t.Errorf("history JSON: %+v", h)
	}

	if _, err := run(t, "--config", cfg, "history", "6110/PAINT", "--chart", "lease.gif"); err == nil || !strings.Contains(err.Error(), ".png or .svg") {
		t.Errorf("--chart lease.gif: %v", err)
	}
}
