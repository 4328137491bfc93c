package pipeline

import (
	"context"
	"fmt"
	"math"
	"slices"

	"github.com/costdrift/costdrift/internal/budget"
	"github.com/costdrift/costdrift/internal/chart"
	"github.com/costdrift/costdrift/internal/costdrift"
	"github.com/costdrift/costdrift/internal/sqlite"
)

// timeline builds the chart of an object's cost over the analysis window:
// each period the ledger has postings in, the formula in force then (the
// current one from the behaviour's first period on, at the period's
// activity; the one before the change before it), the change and the
// outliers marked. Every object has one, a fixed or unexplained cost too.
func timeline(ctx context.Context, e *Env, db *sqlite.DB, costsOf costReader, oa sqlite.ObjectAnalysis, accountName, formula string,
	maxLag int) (chart.Timeline, error) {
	b, run := oa.Behaviour, oa.Run
	for _, p := range []string{run.WindowFrom, run.WindowTo} {
		if _, err := e.Calendar.Parse(p); err != nil {
			return chart.Timeline{}, fmt.Errorf("analysis run %d window: %w", run.ID, err)
		}
	}
	accountGrain := run.Grain == costdrift.GrainAccount
	costs, ledger, err := costsOf(ctx, b.Object, accountGrain, run.WindowFrom, run.WindowTo)
	if err != nil {
		return chart.Timeline{}, err
	}
	driverValues := func(driver string, lag int) (map[string]float64, error) {
		if driver == "" {
			return nil, nil
		}
		return lagged(ctx, e, db, b.Object, accountGrain, driver, lag, run, maxLag)
	}
	x1, err := driverValues(b.Driver, b.Lag)
	if err != nil {
		return chart.Timeline{}, err
	}
	x2, err := driverValues(b.Driver2, b.Lag2)
	if err != nil {
		return chart.Timeline{}, err
	}
	var xBefore map[string]float64
	if k := b.Break; k != nil {
		if xBefore, err = driverValues(k.Driver, k.Lag); err != nil {
			return chart.Timeline{}, err
		}
	}
	outlier := map[string]bool{}
	if b.Class != costdrift.Step { // a step cost's stored outliers are of the straight line, not of its levels
		for _, o := range b.Outliers {
			outlier[o.Period] = true
		}
	}
	// The costs the formula was fitted on: restated, when they were.
	at, err := costsAtPrices(ctx, db, oa)
	if err != nil {
		return chart.Timeline{}, err
	}
	periods := e.Calendar.Between(run.WindowFrom, run.WindowTo)
	since := slices.Index(periods, b.Since)
	title := b.Object.String()
	if accountName != "" {
		title += " " + accountName
	}
	t := chart.Timeline{Title: title + ": " + formula, YLabel: "cost per period (" + e.Currency.Code + ")", FormulaLabel: formulaLabel(b)}
	for i, p := range periods {
		if !ledger[p] {
			continue
		}
		pt := chart.TimePoint{Period: p, Cost: at(p, e.Currency.Units(costs[p])), Formula: math.NaN(), Outlier: outlier[p]}
		if b.Break != nil && since >= 0 && i < since {
			pt.Before = true
			pt.Formula = formulaBefore(b, xBefore, p)
		} else {
			pt.Formula = formulaAt(b, x1, x2, p)
		}
		t.Points = append(t.Points, pt)
	}
	if len(t.Points) == 0 {
		return t, fmt.Errorf("no period of the analysis window %s to %s has postings", run.WindowFrom, run.WindowTo)
	}
	if b.Break != nil && slices.ContainsFunc(t.Points, func(p chart.TimePoint) bool { return p.Period == b.Since }) {
		t.Changes = []string{b.Since}
		t.BeforeLabel = "formula before " + b.Since
	}
	return t, nil
}

// formulaLabel names the current formula in the timeline's legend.
func formulaLabel(b costdrift.Behaviour) string {
	switch b.Class {
	case costdrift.Unexplained:
		return "mean (no formula)"
	case costdrift.Fixed:
		if b.Cadence != nil {
			return "fixed cost, in the periods it is posted in"
		}
		return "fixed cost"
	}
	return "formula at each period's activity"
}

// formulaAt is the current formula for period p at its activity; NaN when
// the period lacks a driver value the formula needs.
func formulaAt(b costdrift.Behaviour, x1, x2 map[string]float64, p string) float64 {
	var a1, a2 float64
	if b.Driver != "" && b.Class != costdrift.Fixed && b.Class != costdrift.Unexplained {
		v, ok := x1[p]
		if !ok {
			return math.NaN()
		}
		a1 = v
		if b.Driver2 != "" {
			if a2, ok = x2[p]; !ok {
				return math.NaN()
			}
		}
	}
	est, err := budget.Evaluate(&b, a1, a2)
	if err != nil {
		return math.NaN()
	}
	return postedAt(b, p, est.Value)
}

// formulaBefore is the formula before the change for period p: the break's
// fixed part and rate on the driver both sides were fitted on. A step
// cost's break records only the shift of its levels, so it has none.
func formulaBefore(b costdrift.Behaviour, x map[string]float64, p string) float64 {
	k := b.Break
	if k == nil || b.Class == costdrift.Step {
		return math.NaN()
	}
	if k.Driver == "" || k.RateBefore == 0 {
		return postedAt(b, p, k.FixedBefore)
	}
	v, ok := x[p]
	if !ok {
		return math.NaN()
	}
	return k.FixedBefore + k.RateBefore*v
}

// markBefore returns a copy of the points with those before the
// behaviour's change marked: the formula was not fitted on them.
func markBefore(e *Env, b costdrift.Behaviour, pts []chart.Point) []chart.Point {
	out := slices.Clone(pts)
	if b.Break == nil {
		return out
	}
	first, err := e.Calendar.Parse(b.Since)
	if err != nil {
		return out
	}
	for i := range out {
		if p, err := e.Calendar.Parse(out[i].Period); err == nil && p.Before(first) {
			out[i].Before = true
		}
	}
	return out
}
