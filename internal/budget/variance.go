package budget

import (
	"fmt"
	"math"
	"sort"
	"strings"

	"github.com/costdrift/costdrift/internal/costdrift"
)

// Mark says whether a cost variance is favourable (F: less cost than
// budgeted) or unfavourable (U: more), common practice for costs; "" for
// none.
func Mark(variance float64) string {
	switch {
	case variance < 0:
		return "F"
	case variance > 0:
		return "U"
	}
	return ""
}

// VarianceLine is one object's (or a total's) actual cost in a closed
// period against its budgets:
//
//	flexible budget  = the formula at the actual activity
//	spending variance = actual − flexible budget
//	static budget    = the formula at the planned activity (with a plan)
//	activity variance = flexible budget − static budget
//
// so that actual − static budget = spending variance + activity variance.
// A positive variance is unfavourable (more cost), marked U; a negative one
// favourable, F.
type VarianceLine struct {
	Kind           Kind
	Object         costdrift.CostObject
	Period         string
	Class          costdrift.Class
	Driver         string
	ActualActivity float64 // NaN without a driver
	PlanActivity   float64 // NaN without a driver or a plan
	Objects        int
	Actual         float64
	// Flexible is the formula at actual activity with its intervals; the
	// 95 % interval is what Outside95 tests.
	Flexible         Estimate
	Static           float64 // NaN without a plan
	SpendingVariance float64
	ActivityVariance float64 // NaN without a plan
	Outside95        bool    // actual outside the flexible budget's 95 % interval
	Warning          string
}

// SpendingMark and ActivityMark are the lines' F/U marks.
func (l VarianceLine) SpendingMark() string { return Mark(l.SpendingVariance) }
func (l VarianceLine) ActivityMark() string { return Mark(l.ActivityVariance) }

// Variances compares each behaviour's actual cost in period with its
// flexible budget at the actual activity and, when plan is not nil, with
// its static budget at the planned activity. behaviours are the formulas in
// force in that period; actual holds each object's actual cost by object
// name (an object absent from it had no postings: its actual cost is 0).
func Variances(behaviours []costdrift.Behaviour, period string, actual map[string]float64,
	actualActivity, plan Lookup, shift func(string, int) string) []VarianceLine {
	var out []VarianceLine
	for i := range behaviours {
		b := &behaviours[i]
		l := VarianceLine{Kind: KindObject, Object: b.Object, Period: period, Class: b.Class, Objects: 1,
			ActualActivity: math.NaN(), PlanActivity: math.NaN(), Static: math.NaN(), ActivityVariance: math.NaN(), SpendingVariance: math.NaN()}
		l.Actual = actual[b.Object.String()]
		flex := Flexible([]costdrift.Behaviour{*b}, []string{period}, actualActivity, shift)[0]
		l.Flexible = flex.Estimate
		l.Driver = flex.Driver
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
func VarianceTotals(lines []VarianceLine) []VarianceLine {
	type group struct {
		l       VarianceLine
		flex    []Line
		skipped int
	}
	newGroup := func(kind Kind, cc string) *group {
		return &group{l: VarianceLine{Kind: kind, Object: costdrift.CostObject{CostCenter: cc},
			ActualActivity: math.NaN(), PlanActivity: math.NaN()}}
	}
	byCC := map[string]*group{}
	var names []string
	all := newGroup(KindTotal, "")
	for _, l := range lines {
		if l.Kind != KindObject {
			continue
		}
		g := byCC[l.Object.CostCenter]
		if g == nil {
			g = newGroup(KindCostCenter, l.Object.CostCenter)
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
			t.flex = append(t.flex, Line{Kind: KindObject, Object: l.Object, Period: l.Period, Estimate: l.Flexible})
		}
	}
	sort.Strings(names)
	groups := make([]*group, 0, len(names)+1)
	for _, n := range names {
		groups = append(groups, byCC[n])
	}
	var out []VarianceLine
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
