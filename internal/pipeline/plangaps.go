package pipeline

import (
	"fmt"
	"sort"
	"strings"

	"github.com/costdrift/costdrift/internal/budget"
	"github.com/costdrift/costdrift/internal/costdrift"
)

// planGap is a driver figure a plan lacks for one of its periods.
type planGap struct{ period, driver, costCenter string }

func (g planGap) String() string {
	s := g.driver + " for " + g.period
	if g.costCenter != "" {
		s += " (cost centre " + g.costCenter + ")"
	}
	return s
}

// planGaps records the figures a plan lacked when a budget asked for them.
type planGaps struct {
	open   map[planGap]bool // periods not yet closed: no budget can be made
	closed map[planGap]bool // closed periods: the actual activity stood in
}

// plannedLookup asks the plan for a driver's figure and, where the plan
// has none, the actual activity, as activityLookup does, with one
// difference: a period the plan covers but a driver's figure it lacks is
// recorded. For a period not yet closed there is no actual to stand in,
// and taking the latest actual instead would budget on a guess nobody
// made: the gap is an error (planGaps.err). For a closed period the actual
// activity stands in, and the line says so (planGaps.note).
func plannedLookup(e *Env, actual *activityIndex, plan *planFile) (budget.Lookup, *planGaps) {
	gaps := &planGaps{open: map[planGap]bool{}, closed: map[planGap]bool{}}
	covered := map[string]bool{}
	for _, p := range plan.periods() {
		covered[p] = true
	}
	now := e.Now()
	return func(period, driver, costCenter string) (float64, bool) {
		own := costCenter != "" && actual.own[[2]string{driver, costCenter}]
		if v, ok := plan.get(period, driver, costCenter, own); ok {
			return v, true
		}
		if covered[period] {
			g := planGap{period, driver, ""}
			if own {
				g.costCenter = costCenter
			}
			if !e.Calendar.Closed(period, now) {
				gaps.open[g] = true
				return 0, false
			}
			v, ok := actual.get(period, driver, costCenter, own)
			gaps.closed[g] = gaps.closed[g] || ok // the line says it only where the actual stood in
			return v, ok
		}
		return actual.get(period, driver, costCenter, own)
	}, gaps
}

// err names the figures missing for periods not yet closed; nil when none.
func (g *planGaps) err(planName string) error {
	if len(g.open) == 0 {
		return nil
	}
	var missing []string
	for k := range g.open {
		missing = append(missing, k.String())
	}
	sort.Strings(missing)
	return fmt.Errorf("plan %s has no %s: a period not closed yet is budgeted at its planned activity only; add the figures to the plan",
		planName, strings.Join(missing, ", no "))
}

// note is what a line whose driver's figure the plan lacked for a closed
// period says; "" when the plan had it. lag is the formula's lag for the
// driver, period the line's.
func (g *planGaps) note(period, driver, costCenter string, lag int, shift func(string, int) string, what string) string {
	if driver == "" {
		return ""
	}
	at := shift(period, -lag)
	for _, k := range []planGap{{at, driver, costCenter}, {at, driver, ""}} {
		if g.closed[k] {
			return fmt.Sprintf("no planned %s for %s, a closed period: %s at its actual activity", driver, at, what)
		}
	}
	return ""
}

// flagBudget adds the note of a missing plan figure to the object lines
// that used the actual activity instead.
func (g *planGaps) flagBudget(lines []costdrift.BudgetLine, shift func(string, int) string) {
	for i := range lines {
		l := &lines[i]
		if l.Kind != costdrift.LineObject {
			continue
		}
		for _, d := range []struct {
			driver string
			lag    int
		}{{l.Driver, l.Lag}, {l.Driver2, l.Lag2}} {
			if n := g.note(l.Period, d.driver, l.Object.CostCenter, d.lag, shift, "budgeted"); n != "" {
				l.Warnings = append(l.Warnings, n)
				l.Warning = strings.Join(l.Warnings, "; ")
			}
		}
	}
}
