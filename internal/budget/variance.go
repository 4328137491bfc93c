package budget

import (
	"fmt"
	"math"
	"sort"
	"strings"

	"github.com/costdrift/costdrift/internal/costdrift"
)

// Variances compares each behaviour's actual cost in period with its
// flexible budget at the actual activity and, when plan is not nil, with
// its static budget at the planned activity. behaviours are the formulas in
// force in that period; actual holds each object's actual cost by object
// name (an object absent from it had no postings: its actual cost is 0).
func Variances(behaviours []costdrift.Behaviour, period string, actual map[string]float64,
	actualActivity, plan Lookup, shift func(string, int) string) []costdrift.VarianceLine {
	var out []costdrift.VarianceLine
	for i := range behaviours {
		b := &behaviours[i]
		l := costdrift.VarianceLine{Kind: costdrift.LineObject, Object: b.Object, Period: period, Class: b.Class, Objects: 1,
			ActualActivity: math.NaN(), PlanActivity: math.NaN(), Static: math.NaN(), ActivityVariance: math.NaN(), SpendingVariance: math.NaN()}
		l.Actual = actual[b.Object.String()]
		flex := Flexible([]costdrift.Behaviour{*b}, []string{period}, actualActivity, shift)[0]
		l.Flexible = flex.Estimate
		l.Driver, l.Lag = flex.Driver, flex.Lag
		l.ActualActivity = flex.Activity
		warnings := flex.Warnings
		if !math.IsNaN(l.Flexible.Value) {
			l.SpendingVariance = l.Actual - l.Flexible.Value
			l.Outside95 = !math.IsNaN(l.Flexible.Low95) && (l.Actual < l.Flexible.Low95 || l.Actual > l.Flexible.High95)
		}
		if plan != nil {
			static := Flexible([]costdrift.Behaviour{*b}, []string{period}, plan, shift)[0]
			l.PlanActivity = static.Activity
			l.Static = static.Value
			if !math.IsNaN(l.Static) && !math.IsNaN(l.Flexible.Value) {
				l.ActivityVariance = l.Flexible.Value - l.Static
			} else if math.IsNaN(l.Static) && !math.IsNaN(l.Flexible.Value) {
				warnings = append(warnings, "no static budget: "+strings.TrimPrefix(static.Warning, "no budget: "))
			}
		}
		l.Warning = strings.Join(warnings, "; ")
		out = append(out, l)
	}
	return out
}

// VarianceTotals sums the object lines per cost centre and overall, in that
// order (cost centres by name). A total's flexible budget has the combined
// interval of Totals, and the total is outside it when its actual is. An
// object without a flexible budget is left out of the sums (its actual
// too), and the total's warning says so.
func VarianceTotals(lines []costdrift.VarianceLine) []costdrift.VarianceLine {
	type group struct {
		l       costdrift.VarianceLine
		flex    []costdrift.BudgetLine
		skipped int
	}
	newGroup := func(kind costdrift.LineKind, cc string) *group {
		return &group{l: costdrift.VarianceLine{Kind: kind, Object: costdrift.CostObject{CostCenter: cc},
			ActualActivity: math.NaN(), PlanActivity: math.NaN()}}
	}
	byCC := map[string]*group{}
	var names []string
	all := newGroup(costdrift.LineTotal, "")
	for _, l := range lines {
		if l.Kind != costdrift.LineObject {
			continue
		}
		g := byCC[l.Object.CostCenter]
		if g == nil {
			g = newGroup(costdrift.LineCostCenter, l.Object.CostCenter)
			byCC[l.Object.CostCenter] = g
			names = append(names, l.Object.CostCenter)
		}
		for _, t := range []*group{g, all} {
			t.l.Period = l.Period
			if math.IsNaN(l.Flexible.Value) {
				t.skipped++
				continue
			}
			t.l.Objects++
			t.l.Actual += l.Actual
			t.l.Static += l.Static // NaN once any part has no static budget
			t.flex = append(t.flex, costdrift.BudgetLine{Kind: costdrift.LineObject, Object: l.Object, Period: l.Period, Estimate: l.Flexible})
		}
	}
	sort.Strings(names)
	groups := make([]*group, 0, len(names)+1)
	for _, n := range names {
		groups = append(groups, byCC[n])
	}
	var out []costdrift.VarianceLine
	for _, g := range append(groups, all) {
		l := g.l
		l.Static, l.SpendingVariance, l.ActivityVariance = math.NaN(), math.NaN(), math.NaN()
		l.Flexible = unknown()
		var warnings []string
		if len(g.flex) > 0 {
			tot := Totals(g.flex)
			flex := tot[len(tot)-1] // the group's overall line
			l.Flexible = flex.Estimate
			l.SpendingVariance = l.Actual - l.Flexible.Value
			l.Outside95 = !math.IsNaN(l.Flexible.Low95) && (l.Actual < l.Flexible.Low95 || l.Actual > l.Flexible.High95)
			l.Static = g.l.Static
			if !math.IsNaN(l.Static) {
				l.ActivityVariance = l.Flexible.Value - l.Static
			}
			warnings = append(warnings, flex.Warnings...)
		}
		if g.skipped > 0 {
			warnings = append(warnings, fmt.Sprintf("%d object(s) without a flexible budget left out, their actual cost too", g.skipped))
		}
		l.Warning = strings.Join(warnings, "; ")
		out = append(out, l)
	}
	return out
}
