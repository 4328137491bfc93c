package report

import (
	"bytes"
	"math"
	"strings"
	"testing"

	"github.com/costdrift/costdrift/internal/costdrift"
)

// The demo's 2026-06 variances, two lines of them: a lagged driver's
// activity is labelled as the period before's; a note every object line
// carries is said once below the table, not as [1] on each line; a note
// only some lines carry stays numbered on them.
func TestVarianceTableNotesAndLags(t *testing.T) {
	fitted := "the formula was fitted on data that include this period"
	lines := []costdrift.VarianceLine{
		{Kind: costdrift.LineObject, Object: costdrift.CostObject{Account: "6500", CostCenter: "WELD"}, Period: "2026-06", Class: costdrift.Mixed,
			Driver: "machine_hours", Lag: 1, ActualActivity: 1335.1, PlanActivity: 1280, Actual: 2251.14, Objects: 1,
			Flexible: costdrift.Estimate{Value: 2361.35, Low95: 2287.14, High95: 2456.2}, Static: 2167.36, SpendingVariance: -110.21,
			ActivityVariance: 193.99, Warning: fitted},
		{Kind: costdrift.LineObject, Object: costdrift.CostObject{Account: "6600", CostCenter: "ASSY"}, Period: "2026-06", Class: costdrift.Unexplained,
			ActualActivity: nan(), PlanActivity: nan(), Actual: 2175.25, Objects: 1, Flexible: costdrift.Estimate{Value: 2367.07, Low95: 1000, High95: 3700},
			Static: 2367.07, SpendingVariance: -191.82, ActivityVariance: 0, Warning: "no driver explains this cost: budgeted at its mean; " + fitted},
	}
	var out bytes.Buffer
	if err := VarianceTable(&out, VarianceRows(lines, map[string]string{"6500": "Maintenance", "6600": "Marketing"}), "EUR", "2026-06", "plan-2026-q2"); err != nil {
		t.Fatal(err)
	}
	text := out.String()
	weld := lineWith(text, "6500/WELD")
	if !strings.Contains(weld, "1,335.1 machine hours (period before)") || strings.Contains(weld, "[") {
		t.Errorf("6500/WELD line %q: want its lagged activity labelled and no note", weld)
	}
	if assy := lineWith(text, "6600/ASSY"); !strings.HasSuffix(strings.TrimSpace(assy), "[1]") {
		t.Errorf("6600/ASSY line %q: want note [1]", assy)
	}
	for _, want := range []string{"[1] no driver explains this cost: budgeted at its mean\n", "Every object line: " + fitted + "."} {
		if !strings.Contains(text, want) {
			t.Errorf("variances lack %q:\n%s", want, text)
		}
	}
	if strings.Contains(text, "[2]") {
		t.Errorf("a second note:\n%s", text)
	}
}

func lineWith(text, prefix string) string {
	for _, l := range strings.Split(text, "\n") {
		if strings.HasPrefix(l, prefix) {
			return l
		}
	}
	return ""
}

func nan() float64 { return math.NaN() }
