package pipeline

import (
	"context"
	"sort"

	"github.com/costdrift/costdrift/internal/analyze"
	"github.com/costdrift/costdrift/internal/costdrift"
	"github.com/costdrift/costdrift/internal/report"
	"github.com/costdrift/costdrift/internal/sqlite"
)

// explainAccruals adds to an explanation the object's accruals and their
// reversals (analyze.Accruals) booked in the analysis window, each pair's
// reversal in the period after, and their net effect on each period's cost
// (README, "Costs posted quarterly or yearly, and accruals"); a period the
// analysis flagged that carries one gets a note saying so. It changes no
// figure of the analysis: the periods' costs are the totals the accruals
// and reversals are part of.
func explainAccruals(ctx context.Context, e *Env, db *sqlite.DB, oa sqlite.ObjectAnalysis, ex *report.Explanation) error {
	run := oa.Run
	for _, p := range []string{run.WindowFrom, run.WindowTo} {
		if _, err := e.Calendar.Parse(p); err != nil {
			return nil // a window this calendar cannot read has no periods to pair lines in
		}
	}
	b := oa.Behaviour
	accountGrain := run.Grain == costdrift.GrainAccount
	after := e.Calendar.Shift(run.WindowTo, 1)
	lines, err := db.ReversedLines(ctx, b.Object, accountGrain, run.WindowFrom, after)
	if err != nil {
		return err
	}
	var pairs []costdrift.Accrual
	for _, a := range analyze.Accruals(lines, func(p string) string { return e.Calendar.Shift(p, 1) }) {
		if a.Period <= run.WindowTo {
			pairs = append(pairs, a)
		}
	}
	if len(pairs) == 0 {
		return nil
	}
	costs, _, err := db.CostPerPeriod(ctx, b.Object, accountGrain, run.WindowFrom, run.WindowTo)
	if err != nil {
		return err
	}
	scale := float64(minorPerUnit(e))
	acc := accrualsView(pairs, costs, scale, flaggedPeriods(b), run.WindowTo)
	ex.Accruals = &acc
	for _, p := range acc.Periods {
		if p.Flagged && p.Net != 0 {
			ex.Notes = append(ex.Notes, report.AccrualNote(p))
		}
	}
	return nil
}

// accrualsView is the pairs and, for every window period up to last that
// one of them touches, what was accrued and reversed in it and its cost
// with and without them. costs are the periods' totals in minor units,
// scale the minor units in one currency unit.
func accrualsView(pairs []costdrift.Accrual, costs map[string]int64, scale float64, flagged map[string]bool, last string) report.Accruals {
	out := report.Accruals{Pairs: make([]report.AccrualPair, 0, len(pairs))}
	accrued, reversed := map[string]int64{}, map[string]int64{}
	for _, a := range pairs {
		out.Pairs = append(out.Pairs, report.AccrualPair{Period: a.Period, ReversedIn: a.ReversedIn, CostCenter: a.CostCenter,
			Amount: float64(a.AmountMinor) / scale, Entry: a.Accrued.EntryID, ReversalEntry: a.Reversal.EntryID,
			Description: a.Accrued.Description, ReversalDescription: a.Reversal.Description})
		accrued[a.Period] += a.AmountMinor
		reversed[a.ReversedIn] += a.AmountMinor
	}
	var periods []string
	for p := range accrued {
		periods = append(periods, p)
	}
	for p := range reversed {
		if _, ok := accrued[p]; !ok && p <= last {
			periods = append(periods, p)
		}
	}
	sort.Strings(periods)
	for _, p := range periods {
		net := accrued[p] - reversed[p]
		out.Periods = append(out.Periods, report.AccrualPeriod{Period: p, Cost: float64(costs[p]) / scale,
			Accrued: float64(accrued[p]) / scale, Reversed: float64(reversed[p]) / scale, Net: float64(net) / scale,
			WithoutAccruals: float64(costs[p]-net) / scale, Flagged: flagged[p]})
	}
	return out
}

// flaggedPeriods are the periods the analysis marked in a behaviour: its
// outliers (Cook's distance above 4/n) and the spending checks outside
// their interval.
func flaggedPeriods(b costdrift.Behaviour) map[string]bool {
	out := map[string]bool{}
	for _, o := range b.Outliers {
		out[o.Period] = true
	}
	for _, c := range b.Spending {
		if c.Outside() {
			out[c.Period] = true
		}
	}
	return out
}
