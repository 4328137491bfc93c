package report

import (
	"bytes"
	"encoding/json"
	"math"
	"strings"
	"testing"
	"unicode/utf8"

	"github.com/costdrift/costdrift/internal/costdrift"
)

func TestTerminalText(t *testing.T) {
	tests := []struct {
		name, in, want string
	}{
		{"plain", "Maintenance & repairs <WELD>", "Maintenance & repairs <WELD>"},
		{"accents and a backslash", "Entretien/Übergabe \\ été", "Entretien/Übergabe \\ été"},
		{"clear screen", "Rent\x1b[2J", `Rent\x1b[2J`},
		{"clipboard write", "\x1b]52;c;SGVsbG8=\a", `\x1b]52;c;SGVsbG8=\a`},
		{"C1 control sequence introducer", "x\u009b31m", `x\u009b31m`},
		{"C1 next line and DEL", "a\u0085b\x7fc", `a\u0085b\x7fc`},
		{"tab, line break, carriage return", "a\tb\nc\rd", `a\tb\nc\rd`},
		{"NUL and form feed", "a\x00b\fc", `a\x00b\fc`},
		{"byte 0x9b that is not UTF-8", "x\x9b31m", `x\x9b31m`},
		{"truncated UTF-8", "caf\xc3", `caf\xc3`},
		{"replacement character kept", "a\uFFFDb", "a\uFFFDb"},
		{"right-to-left override", "abc\u202efdp.exe", `abc\u202efdp.exe`},
		{"isolate and mark", "\u2066x\u2069\u200f", `\u2066x\u2069\u200f`},
		{"line separator", "a\u2028b", `a\u2028b`},
	}
	for _, tc := range tests {
		got := TerminalText(tc.in)
		if got != tc.want {
			t.Errorf("%s: TerminalText(%q) = %q, want %q", tc.name, tc.in, got, tc.want)
		}
		safe(t, tc.name, got)
	}
}

// safe fails the test when text holds anything a terminal acts on: a
// control character other than the line break (C0, DEL, C1) or a byte that
// is not UTF-8.
func safe(t *testing.T, what, text string) {
	t.Helper()
	if !utf8.ValidString(text) {
		t.Errorf("%s: not UTF-8: %q", what, text)
	}
	for i, r := range text {
		if (r < 0x20 && r != '\n') || (r >= 0x7f && r <= 0x9f) {
			t.Errorf("%s: control character %U at byte %d: %q", what, r, i, text)
			return
		}
	}
}

// encoding/json escapes the C0 controls but writes DEL and the C1
// controls as they are; EncodeJSON escapes them too, and the text decodes
// to the same string.
func TestEncodeJSONEscapesDELAndC1(t *testing.T) {
	const name = "Rent\x1b[2J\x7f\u0080\u0085\u009b31m\u009f <b>"
	raw, err := json.Marshal(name)
	if err != nil {
		t.Fatal(err)
	}
	if !bytes.Contains(raw, []byte("\x7f")) || !bytes.Contains(raw, []byte("\u009b")) {
		t.Fatalf("encoding/json now escapes DEL or C1 itself (%q): escapeJSONControls may be redundant", raw)
	}
	var buf bytes.Buffer
	if err := EncodeJSON(&buf, map[string]string{"name": name, "é": "ü"}); err != nil {
		t.Fatal(err)
	}
	out := buf.String()
	safe(t, "EncodeJSON", out)
	if want := `"name": "Rent\u001b[2J\u007f\u0080\u0085\u009b31m\u009f \u003cb\u003e"`; !strings.Contains(out, want) {
		t.Errorf("EncodeJSON = %s, want it to hold %s", out, want)
	}
	if !strings.Contains(out, `"é": "ü"`) {
		t.Errorf("EncodeJSON changed text that is no control: %s", out)
	}
	var back map[string]string
	if err := json.Unmarshal(buf.Bytes(), &back); err != nil {
		t.Fatal(err)
	}
	if back["name"] != name {
		t.Errorf("decodes to %q, want %q", back["name"], name)
	}
}

// Every text renderer shows names from the store as visible escapes and
// keeps its layout: a tab or a line break in a name neither adds a column
// nor a line.
func TestTextRenderersShowNamesAsText(t *testing.T) {
	const hostile = "\x1b[2J\x1b]52;c;SGVsbG8=\a\u009b31m\t|\n|\x9b"
	const shown = `\x1b[2J\x1b]52;c;SGVsbG8=\a\u009b31m\t|\n|\x9b`
	object := costdrift.CostObject{Account: "6100" + hostile, CostCenter: "WELD" + hostile}
	driver, unit := "hours"+hostile, "hour"+hostile
	b := costdrift.Behaviour{Object: object, Class: costdrift.Mixed, Driver: driver, Unit: unit,
		FixedPerPeriod: 4210, VariableRate: 1.87, R2: 0.98, N: 36, RangeMin: 500, RangeMax: 1500, Since: "2023-07", Until: "2026-06",
		Reason: "cost moves with " + driver,
		HighLow: &costdrift.HighLow{HighPeriod: "2025-08", LowPeriod: "2023-12", HighActivity: 1500, LowActivity: 500,
			HighCost: 7000, LowCost: 5100, Fixed: 4150, Rate: 1.9, Warning: "the high point " + hostile},
		Diagnostics: &costdrift.Diagnostics{DurbinWatson: 1.9, RobustIntercept: math.NaN(), RobustSlope: math.NaN(), Candidates: 1,
			Models: []costdrift.ModelSummary{{Model: costdrift.ModelLinear, Driver: driver, N: 36, AICc: 300, R2: 0.98}}},
		Outliers: []costdrift.Outlier{{Period: "2026-06", CooksD: 0.3, Studentised: 2.6}},
	}
	names := map[string]string{object.Account: "Rent" + hostile}
	wantEverywhere := []string{"6100" + shown + "/WELD" + shown}

	var table bytes.Buffer
	if err := Table(&table, Rows([]costdrift.Behaviour{b}, names), "EUR"); err != nil {
		t.Fatal(err)
	}
	lines := strings.Split(table.String(), "\n")
	// Columns counted in runes: the clipped account name ends in "…".
	column := func(line, cell string) int { return utf8.RuneCountInString(line[:max(0, strings.Index(line, cell))]) }
	if column(lines[0], "CLASS") != column(lines[1], "mixed") {
		t.Errorf("report: CLASS column not aligned:\n%s", table.String())
	}
	if len(lines) < 4 || lines[2] != "" || lines[3] != "Why:" {
		t.Errorf("report: a name added a line to the table:\n%s", table.String())
	}

	fit := costdrift.Fit{Object: object, Driver: driver, Model: costdrift.ModelLinear, N: 36, Intercept: 4210, Slope: 1.87,
		SlopeP: 1e-9, SlopeAdjustedP: 1e-9, R2: 0.98, PRESS: 3600, Significant: true, Chosen: true, PlausibleRanked: 1}
	ex := Explain(ExplainInput{Behaviour: b, AccountName: "Rent" + hostile, Fits: []costdrift.Fit{fit}})
	ex.Notes = append(ex.Notes, "the ledger of "+object.String()+" changed")
	var explain bytes.Buffer
	if err := ExplainText(&explain, ex, "EUR"); err != nil {
		t.Fatal(err)
	}

	interval := costdrift.Estimate{Value: 6080, Low80: 6000, High80: 6160, Low95: 5950, High95: 6210}
	budgetLines := []costdrift.BudgetLine{
		{Object: object, Period: "2026-07", Kind: costdrift.LineObject, Class: costdrift.Mixed, Driver: driver, Activity: 1000,
			Activity2: math.NaN(), Estimate: interval, Warning: driver + " 1,600 is outside the relevant range"},
		{Object: costdrift.CostObject{CostCenter: object.CostCenter}, Period: "2026-07", Kind: costdrift.LineCostCenter, Objects: 1,
			Activity: math.NaN(), Activity2: math.NaN(), Estimate: interval},
	}
	var budgetTable bytes.Buffer
	if err := BudgetTable(&budgetTable, BudgetRows(budgetLines, names), "EUR", "plan"+hostile); err != nil {
		t.Fatal(err)
	}

	varianceLines := []costdrift.VarianceLine{
		{Object: object, Period: "2026-06", Kind: costdrift.LineObject, Class: costdrift.Mixed, Driver: driver, ActualActivity: 1000,
			PlanActivity: math.NaN(), Static: math.NaN(), ActivityVariance: math.NaN(), Actual: 6200, Flexible: interval, SpendingVariance: 120, Warning: "fitted on " + driver},
		{Object: costdrift.CostObject{CostCenter: object.CostCenter}, Period: "2026-06", Kind: costdrift.LineCostCenter, Objects: 1,
			ActualActivity: math.NaN(), PlanActivity: math.NaN(), Static: math.NaN(), ActivityVariance: math.NaN(), Actual: 6200, Flexible: interval, SpendingVariance: 120},
	}
	var varianceTable bytes.Buffer
	if err := VarianceTable(&varianceTable, VarianceRows(varianceLines, names), "EUR", "2026-06", "plan"+hostile); err != nil {
		t.Fatal(err)
	}

	for _, tc := range []struct {
		name string
		out  string
		want []string
	}{
		{"report", table.String(), []string{"per hour" + shown, "cost moves with hours" + shown, "warning: the high point " + shown}},
		{"explain", explain.String(), []string{" — Rent" + shown, "(hour" + shown + ")", "hours" + shown + "    0",
			"Models on hours" + shown, "Note: the ledger of\n6100" + shown}},
		{"budget", budgetTable.String(), []string{"plan plan" + shown, "1,000 hours" + shown, "total WELD" + shown,
			"[1] hours" + shown + " 1,600 is outside"}},
		{"variance", varianceTable.String(), []string{"from plan plan" + shown, "1,000 hours" + shown, "total WELD" + shown,
			"[1] fitted on hours" + shown}},
	} {
		safe(t, tc.name, tc.out)
		for _, want := range append(wantEverywhere, tc.want...) {
			if !strings.Contains(tc.out, want) {
				t.Errorf("%s lacks %q:\n%s", tc.name, want, tc.out)
			}
		}
	}
	// The object line and its cost centre's total are one line each.
	for _, tc := range []struct{ name, out, first string }{
		{"budget", budgetTable.String(), "6100"}, {"variance", varianceTable.String(), "6100"},
	} {
		lines := strings.Split(tc.out, "\n")
		for i, l := range lines {
			if strings.HasPrefix(l, tc.first) && (i+1 >= len(lines) || !strings.HasPrefix(lines[i+1], "total WELD")) {
				t.Errorf("%s: the object's line is broken:\n%s", tc.name, tc.out)
			}
		}
	}
}
