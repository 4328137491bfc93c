package pipeline

import (
	"context"
	"fmt"
	"math"
	"slices"
	"sort"
	"strings"

	"github.com/costdrift/costdrift/internal/budget"
	"github.com/costdrift/costdrift/internal/costdrift"
	"github.com/costdrift/costdrift/internal/report"
	"github.com/costdrift/costdrift/internal/series"
	"github.com/costdrift/costdrift/internal/sqlite"
)

// deflation is how an analysis restates costs at one price level (README,
// Prices and inflation): the index series (analysis.deflator), the period
// whose prices the costs are restated at (the newest analysed) and the
// objects left as posted (analysis.deflator_exempt).
type deflation struct {
	index  series.PriceIndex
	base   string
	exempt series.Exempt
}

// deflationOf checks the deflator the config names against the activity
// data over the periods given (the window's periods with postings, the
// newest last); nil without one. A series that is not company-wide, or
// lacks a usable value for a period, is an error naming the series and the
// period: analysing the costs as posted instead would give formulas at
// mixed price levels without a word.
func deflationOf(name string, exempt []string, activity []costdrift.ActivityValue, periods []string, file string) (*deflation, error) {
	if name == "" {
		return nil, nil
	}
	index := series.PriceIndexOf(activity, name)
	if len(index.Values) == 0 {
		perCostCenter := slices.ContainsFunc(activity, func(a costdrift.ActivityValue) bool { return a.Driver == name })
		if perCostCenter {
			return nil, fmt.Errorf("analysis.deflator in %s: the price index %q is kept per cost centre only; give it company-wide (without a cost centre) in its activity source and run costdrift sync",
				file, name)
		}
		return nil, fmt.Errorf("analysis.deflator in %s: no activity series %q in the store (series read: %s); add the price index to an activity source and run costdrift sync",
			file, name, seriesNames(activity))
	}
	if err := index.Check(periods); err != nil {
		return nil, fmt.Errorf("analysis.deflator in %s: %w; nothing was analysed: correct the series in its activity source and run costdrift sync",
			file, err)
	}
	return &deflation{index: index, base: periods[len(periods)-1], exempt: series.ExemptOf(exempt)}, nil
}

// postedPeriods are the window's periods in which the ledger has postings:
// the others' costs are unknown, and need no index to restate them.
func postedPeriods(window, ledger []string) []string {
	posted := make(map[string]bool, len(ledger))
	for _, p := range ledger {
		posted[p] = true
	}
	return slices.DeleteFunc(slices.Clone(window), func(p string) bool { return !posted[p] })
}

// seriesNames lists the activity series' names, sorted, at most ten.
func seriesNames(activity []costdrift.ActivityValue) string {
	seen := map[string]bool{}
	for _, a := range activity {
		seen[a.Driver] = true
	}
	names := make([]string, 0, len(seen))
	for n := range seen {
		names = append(names, n)
	}
	sort.Strings(names)
	if len(names) > 10 {
		names = append(names[:10], "…")
	}
	return strings.Join(names, ", ")
}

// restate restates an object's costs over periods at the base's prices,
// unless it is exempt; it returns the price base, "" for costs left as
// posted.
func (d *deflation) restate(o *costdrift.ObjectSeries, periods []string) string {
	if d == nil || d.exempt.Has(o.Object) {
		return ""
	}
	d.index.Restate(o.Cost, periods, d.base)
	return d.base
}

// withoutSeries leaves the named series out of the drivers: a price index
// restates costs and is no driver of them.
func withoutSeries(drivers []costdrift.DriverSeries, name string) []costdrift.DriverSeries {
	return slices.DeleteFunc(drivers, func(d costdrift.DriverSeries) bool { return d.Name == name })
}

// budgetPrices moves each formula from the prices it was fitted at to
// those of the period a budget or variance is for (README, Prices and
// inflation): by the plan's figure of the index for that period when the
// plan has one, else the index as synced, else its newest value, which
// the line then says.
type budgetPrices struct {
	series       string
	actual, plan *activityIndex // plan is nil without one
	newest       string         // the newest period the synced index has a value for
}

func newBudgetPrices(e *Env, actual, plan *activityIndex) *budgetPrices {
	p := &budgetPrices{series: e.Config.Analysis.Deflator, actual: actual, plan: plan}
	for k, v := range actual.values {
		if k[1] == p.series && k[2] == "" && v > 0 && k[0] > p.newest {
			p.newest = k[0]
		}
	}
	return p
}

// index is the series' value for period from the plan, else as synced;
// false when neither has a value above zero.
func (p *budgetPrices) index(period string, plan bool) (float64, bool) {
	if plan && p.plan != nil {
		if v, ok := p.plan.get(period, p.series, "", false); ok && v > 0 {
			return v, true
		}
	}
	v, ok := p.actual.get(period, p.series, "", false)
	return v, ok && v > 0
}

// at is b at period's prices, and what the line should say of them ("" when
// the index moved it as it should).
func (p *budgetPrices) at(b costdrift.Behaviour, period string) (costdrift.Behaviour, string) {
	if b.PriceBase == "" || b.Class == costdrift.InsufficientData || b.PriceBase == period {
		return b, ""
	}
	if p.series == "" {
		return b, fmt.Sprintf("at prices of %s: analysis.deflator names no price index to move the formula to %s's", b.PriceBase, period)
	}
	from, ok := p.index(b.PriceBase, false)
	if !ok {
		return b, fmt.Sprintf("at prices of %s: the price index %s has no value for %s", b.PriceBase, p.series, b.PriceBase)
	}
	to, ok := p.index(period, true)
	note := ""
	if !ok {
		if p.newest == "" {
			return b, fmt.Sprintf("at prices of %s: the price index %s has no value for %s", b.PriceBase, p.series, period)
		}
		to, _ = p.index(p.newest, false)
		where := "the plan"
		if p.plan == nil {
			where = "the activity data"
		}
		note = fmt.Sprintf("at prices of %s, the newest of %s: no %s for %s in %s", p.newest, p.series, p.series, period, where)
	}
	return budget.AtPrices(b, to/from), note
}

// flexibleAtPrices is flexible (budget.Flexible, or FlexibleSpread) with
// each formula moved to the prices of each period budgeted.
func flexibleAtPrices(prices *budgetPrices, flexible func([]costdrift.Behaviour, []string, budget.Lookup, func(string, int) string) []costdrift.BudgetLine,
	bs []costdrift.Behaviour, periods []string, lookup budget.Lookup, shift func(string, int) string) []costdrift.BudgetLine {
	var lines []costdrift.BudgetLine
	moved := make([]costdrift.Behaviour, len(bs))
	notes := make([]string, len(bs))
	for _, q := range periods {
		for i := range bs {
			moved[i], notes[i] = prices.at(bs[i], q)
		}
		ls := flexible(moved, []string{q}, lookup, shift)
		for i := range ls {
			addNote(&ls[i].Estimate, &ls[i].Warning, notes[i])
		}
		lines = append(lines, ls...)
	}
	return lines
}

// addNote adds note, when there is one, to the warnings of a line with a
// budget; a line without one says why, and has no prices to speak of.
func addNote(e *costdrift.Estimate, warning *string, note string) {
	if note == "" || math.IsNaN(e.Value) {
		return
	}
	e.Warnings = append(e.Warnings, note)
	*warning = strings.TrimPrefix(*warning+"; "+note, "; ")
}

// objectPrices reads, for an object whose formula was fitted on restated
// costs, the price index the analysis used and its costs as posted beside
// the restated ones over the run's window; nil and nil for one fitted as
// posted.
func objectPrices(ctx context.Context, e *Env, db *sqlite.DB, oa sqlite.ObjectAnalysis) (*report.PriceLevels, *series.PriceIndex, error) {
	b, run := oa.Behaviour, oa.Run
	if b.PriceBase == "" || oa.Settings.Deflator == "" {
		return nil, nil, nil
	}
	for _, p := range []string{run.WindowFrom, run.WindowTo} {
		if _, err := e.Calendar.Parse(p); err != nil {
			return nil, nil, fmt.Errorf("analysis run %d window: %w", run.ID, err)
		}
	}
	activity, err := db.Activity(ctx)
	if err != nil {
		return nil, nil, err
	}
	index := series.PriceIndexOf(activity, oa.Settings.Deflator)
	costs, ledger, err := db.CostPerPeriod(ctx, b.Object, run.Grain == costdrift.GrainAccount, run.WindowFrom, run.WindowTo)
	if err != nil {
		return nil, nil, err
	}
	out := &report.PriceLevels{Series: index.Series, Base: b.PriceBase, Periods: []report.PricedCost{}}
	for _, p := range e.Calendar.Between(run.WindowFrom, run.WindowTo) {
		if !ledger[p] {
			continue
		}
		c := report.PricedCost{Period: p, Posted: e.Currency.Units(costs[p])}
		if f, ok := index.Factor(p, b.PriceBase); ok {
			v, r := index.Values[p], c.Posted*f
			c.Index, c.Restated = &v, &r
		}
		out.Periods = append(out.Periods, c)
	}
	return out, &index, nil
}

// restateAsAnalysed restates an object's costs as the analysis did, at
// base's prices; false when the index can no longer restate them (it
// changed since), and true, with the costs as they are, without an index.
func restateAsAnalysed(o *costdrift.ObjectSeries, periods []string, index *series.PriceIndex, base string) bool {
	if index == nil || base == "" {
		return true
	}
	for i, p := range periods {
		if math.IsNaN(o.Cost[i]) {
			continue
		}
		f, ok := index.Factor(p, base)
		if !ok {
			return false
		}
		o.Cost[i] *= f
	}
	return true
}

// costsAtPrices returns how the charts of an object read each period's
// cost, in currency units: restated at its behaviour's price base as the
// analysis fitted it, when the analysis restated it; as posted otherwise,
// and in a period the index has no usable value for.
func costsAtPrices(ctx context.Context, db *sqlite.DB, oa sqlite.ObjectAnalysis) (func(period string, units float64) float64, error) {
	asPosted := func(_ string, units float64) float64 { return units }
	b, run := oa.Behaviour, oa.Run
	if b.PriceBase == "" || oa.Settings.Deflator == "" {
		return asPosted, nil
	}
	values, _, err := db.DriverValues(ctx, oa.Settings.Deflator, "", false, min(run.WindowFrom, b.PriceBase), max(run.WindowTo, b.PriceBase))
	if err != nil {
		return nil, fmt.Errorf("read the price index %s: %w", oa.Settings.Deflator, err)
	}
	index := series.PriceIndex{Series: oa.Settings.Deflator, Values: values}
	return func(period string, units float64) float64 {
		if f, ok := index.Factor(period, b.PriceBase); ok {
			return units * f
		}
		return units
	}, nil
}
