package report

import (
	"bytes"
	"encoding/json"
	"math"
	"strings"
	"testing"

	"github.com/costdrift/costdrift/internal/costdrift"
)

func TestNumber(t *testing.T) {
	tests := []struct {
		v    float64
		d    int
		want string
	}{
		{4210, 2, "4,210.00"},
		{1.87, 2, "1.87"},
		{1234567.891, 2, "1,234,567.89"},
		{-1234.5, 2, "-1,234.50"},
		{999.999, 2, "1,000.00"},
		{-0.001, 2, "0.00"},
		{100, 0, "100"},
		{0.00425, 4, "0.0043"},
		{math.NaN(), 2, "-"},
	}
	for _, tc := range tests {
		if got := Number(tc.v, tc.d); got != tc.want {
			t.Errorf("Number(%v, %d) = %q, want %q", tc.v, tc.d, got, tc.want)
		}
	}
}

func TestFormula(t *testing.T) {
	tests := []struct {
		name string
		b    costdrift.Behaviour
		want string
	}{
		{"mixed", costdrift.Behaviour{Class: costdrift.Mixed, Driver: "machine_hours", Unit: "machine hour", FixedPerPeriod: 4210, VariableRate: 1.87},
			"cost = 4,210.00 + 1.87 per machine hour"},
		{"mixed with lag", costdrift.Behaviour{Class: costdrift.Mixed, Driver: "machine_hours", Unit: "machine hour", Lag: 1, FixedPerPeriod: 900, VariableRate: 1.1},
			"cost = 900.00 + 1.10 per machine hour of the period before"},
		{"variable without unit", costdrift.Behaviour{Class: costdrift.Variable, Driver: "frames_built", VariableRate: 18.4},
			"cost = 18.40 per unit of frames built"},
		{"small rate", costdrift.Behaviour{Class: costdrift.Variable, Driver: "kwh", Unit: "kWh", VariableRate: 0.2125},
			"cost = 0.2125 per kWh"},
		{"fixed", costdrift.Behaviour{Class: costdrift.Fixed, FixedPerPeriod: 4200}, "cost = 4,200.00"},
		{"step", costdrift.Behaviour{Class: costdrift.Step, Driver: "frames_built", Unit: "frame", Steps: []costdrift.StepLevel{
			{From: 681, To: 999, Level: 6000}, {From: 1032, To: 1399, Level: 9000}, {From: 1412, To: 1669, Level: 12000}}},
			"cost = 6,000.00 at 681–999 | 9,000.00 at 1,032–1,399 | 12,000.00 at 1,412–1,669 frames"},
		{"two drivers", costdrift.Behaviour{Class: costdrift.Mixed, Driver: "machine_hours", Unit: "machine hour", FixedPerPeriod: 1000, VariableRate: 2,
			Driver2: "orders", Unit2: "order", Lag2: 1, VariableRate2: 0.5},
			"cost = 1,000.00 + 2.00 per machine hour + 0.50 per order of the period before"},
		{"unexplained", costdrift.Behaviour{Class: costdrift.Unexplained, MeanCost: 2367.07}, "mean 2,367.07 (no formula)"},
		{"insufficient", costdrift.Behaviour{Class: costdrift.InsufficientData}, "-"},
	}
	for _, tc := range tests {
		if got := Formula(tc.b); got != tc.want {
			t.Errorf("%s: Formula = %q, want %q", tc.name, got, tc.want)
		}
	}
}

// The JSON report's fields are a contract (README, Command line: `report --format json`).
func TestJSONFields(t *testing.T) {
	bs := []costdrift.Behaviour{
		{Object: costdrift.CostObject{Account: "6200", CostCenter: "WELD"}, Class: costdrift.Mixed, Driver: "machine_hours", Unit: "machine hour",
			FixedPerPeriod: 1850.004, VariableRate: 2.35, R2: 0.98, N: 36, RangeMin: 500, RangeMax: 1500, Since: "2023-07", Until: "2026-06", Reason: "why"},
		{Object: costdrift.CostObject{Account: "6100", CostCenter: "WELD"}, Class: costdrift.Fixed, FixedPerPeriod: 4200, R2: math.NaN(), N: 36, Since: "2023-07"},
	}
	var buf bytes.Buffer
	if err := JSON(&buf, Rows(bs, map[string]string{"6200": "Power"})); err != nil {
		t.Fatal(err)
	}
	var got []map[string]any
	if err := json.Unmarshal(buf.Bytes(), &got); err != nil {
		t.Fatal(err)
	}
	for _, field := range []string{"object", "account", "cost_center", "class", "driver", "lag", "fixed_per_period", "variable_rate",
		"r2", "n", "range_min", "range_max", "since", "steps"} {
		if _, ok := got[0][field]; !ok {
			t.Errorf("JSON lacks field %q", field)
		}
	}
	if got[0]["object"] != "6200/WELD" || got[0]["driver"] != "machine_hours" || got[0]["fixed_per_period"] != 1850.0 || got[0]["lag"] != 0.0 ||
		got[0]["account_name"] != "Power" || got[0]["formula"] != "cost = 1,850.00 + 2.35 per machine hour" {
		t.Errorf("mixed row = %v", got[0])
	}
	if got[1]["driver"] != nil || got[1]["lag"] != nil || got[1]["r2"] != nil || got[1]["range_min"] != nil {
		t.Errorf("fixed row must have null driver, lag, r2 and range: %v", got[1])
	}
	if steps, ok := got[1]["steps"].([]any); !ok || len(steps) != 0 {
		t.Errorf("steps = %v, want an empty array", got[1]["steps"])
	}
}

func TestTableIsAlignedAndCarriesCautions(t *testing.T) {
	bs := []costdrift.Behaviour{
		{Object: costdrift.CostObject{Account: "6200", CostCenter: "WELD"}, Class: costdrift.Mixed, Driver: "machine_hours", Unit: "machine hour",
			FixedPerPeriod: 4210, VariableRate: 1.87, R2: 0.98, N: 36, RangeMin: 500, RangeMax: 1500, Since: "2023-07", Reason: "cost moves with machine hours"},
		{Object: costdrift.CostObject{Account: "6100"}, Class: costdrift.Fixed, FixedPerPeriod: 12600, R2: math.NaN(), N: 36, Since: "2023-07", Reason: "no driver"},
	}
	var buf bytes.Buffer
	if err := Table(&buf, Rows(bs, nil), "EUR"); err != nil {
		t.Fatal(err)
	}
	out := buf.String()
	lines := strings.Split(out, "\n")
	col := strings.Index(lines[0], "CLASS")
	if strings.Index(lines[1], "mixed") != col || strings.Index(lines[2], "fixed") != col {
		t.Errorf("CLASS column not aligned:\n%s", out)
	}
	for _, want := range []string{"cost = 4,210.00 + 1.87 per machine hour", "500 – 1,500", "cost = 12,600.00", "estimates", "judgement", "confidential"} {
		if !strings.Contains(out, want) {
			t.Errorf("table lacks %q:\n%s", want, out)
		}
	}
}

// TestJSONBreakStatisticOfAnExactStep: the store reads an exact step's
// infinite sup-F back as the largest float; the report's JSON writes null
// for it, never 1.7976931348623157e+308, and keeps a finite one as it is.
func TestJSONBreakStatisticOfAnExactStep(t *testing.T) {
	for _, tc := range []struct {
		statistic float64
		want      string
	}{
		{math.MaxFloat64, `"statistic": null`},
		{1.168231104512e+17, `"statistic": 116823110451200000`},
	} {
		b := costdrift.Behaviour{Object: costdrift.CostObject{Account: "6110", CostCenter: "PAINT"}, Class: costdrift.Fixed, FixedPerPeriod: 3300,
			Break: &costdrift.Break{Period: "2025-07", Test: "sup-F", Statistic: tc.statistic}}
		var out bytes.Buffer
		if err := JSON(&out, Rows([]costdrift.Behaviour{b}, nil)); err != nil {
			t.Fatal(err)
		}
		if !strings.Contains(out.String(), tc.want) || strings.Contains(out.String(), "e+") {
			t.Errorf("statistic %g: JSON lacks %s or has an exponent:\n%s", tc.statistic, tc.want, out.String())
		}
	}
}

// TestStepGaps: a step cost says which level holds between its levels'
// activity ranges, the nearer one, as budget.Evaluate takes it; a cost of
// one level or of another class says nothing.
func TestStepGaps(t *testing.T) {
	step := costdrift.Behaviour{Class: costdrift.Step, Driver: "frames_built", Unit: "frame", Steps: []costdrift.StepLevel{
		{From: 681, To: 999, Level: 6000}, {From: 1032, To: 1399, Level: 9000}}}
	if got := StepGaps(step); got != "between two levels' ranges the nearer level applies" {
		t.Errorf("step: %q", got)
	}
	step.Steps = step.Steps[:1]
	if got := StepGaps(step); got != "" {
		t.Errorf("one level: %q", got)
	}
	if got := StepGaps(costdrift.Behaviour{Class: costdrift.Mixed}); got != "" {
		t.Errorf("mixed: %q", got)
	}
}

// The high-low line under a row's reason reads as one formula: "high-low:
// cost = 200.00 + 3.00 per frame", never "cost = cost = …".
func TestTableHighLowLine(t *testing.T) {
	b := costdrift.Behaviour{Object: costdrift.CostObject{Account: "5100", CostCenter: "WELD"}, Class: costdrift.Mixed, Driver: "frames_built",
		Unit: "frame", FixedPerPeriod: 210, VariableRate: 2.9, R2: 0.97, N: 36, RangeMin: 600, RangeMax: 1600, Since: "2023-07", Reason: "cost moves with frames built",
		HighLow: &costdrift.HighLow{HighPeriod: "2025-07", LowPeriod: "2023-11", HighActivity: 1600, LowActivity: 600, HighCost: 5000, LowCost: 2000, Fixed: 200, Rate: 3}}
	var buf bytes.Buffer
	if err := Table(&buf, Rows([]costdrift.Behaviour{b}, nil), "EUR"); err != nil {
		t.Fatal(err)
	}
	if want := "high-low: cost = 200.00 + 3.00 per frame (high 2025-07, low 2023-11)"; !strings.Contains(buf.String(), want) {
		t.Errorf("table lacks %q:\n%s", want, buf.String())
	}
}
