package pipeline

import (
	"context"
	"errors"
	"fmt"
	"math"
	"slices"
	"sort"
	"strings"

	"github.com/costdrift/costdrift/internal/budget"
	"github.com/costdrift/costdrift/internal/costdrift"
	"github.com/costdrift/costdrift/internal/report"
	"github.com/costdrift/costdrift/internal/sqlite"
)

// BreakEvenRequest is what `costdrift breakeven` asks: the volume driver,
// the price per unit (Price, or Revenue: an account whose postings give
// it), the cost centre in scope ("" for all), and where the reference
// volume comes from (a plan file, else the actual activity; Period ""
// for the plan's first period or the newest actual one).
type BreakEvenRequest struct {
	Driver     string
	Price      float64
	Revenue    string
	CostCenter string
	PlanPath   string
	Period     string
}

// BreakEvenResult is the analysis with what it was taken from.
type BreakEvenResult struct {
	budget.BreakEven
	Unit       string // the volume driver's unit, "" when the activity has none
	CostCenter string
	// PriceFrom says where the price comes from: "given", or the revenue
	// account and the periods its price per unit was taken over.
	PriceFrom string
	// Period and ReferenceFrom say where the reference volume comes from
	// ("plan NAME" or "actual"); Period is "" without a reference.
	Period, ReferenceFrom string
	Names                 map[string]string // account names
}

// BreakEven computes the break-even and contribution of the effective
// formulas in scope (pinned or approved first, as budgets use them). It
// writes nothing.
func BreakEven(ctx context.Context, e *Env, db *sqlite.DB, req BreakEvenRequest) (BreakEvenResult, error) {
	res := BreakEvenResult{CostCenter: req.CostCenter}
	values, err := db.Activity(ctx)
	if err != nil {
		return res, fmt.Errorf("breakeven: read activity: %w", err)
	}
	actual, known := newActivityIndex(), map[string]bool{}
	newest := ""
	for _, v := range values {
		actual.add(v)
		known[v.Driver] = true
		if v.Driver == req.Driver {
			if v.Unit != "" {
				res.Unit = v.Unit
			}
			if (req.CostCenter == "" || v.CostCenter == req.CostCenter || v.CostCenter == "") && v.Period > newest && e.Calendar.Closed(v.Period, e.Now()) {
				newest = v.Period
			}
		}
	}
	if !known[req.Driver] {
		names := make([]string, 0, len(known))
		for d := range known {
			names = append(names, d)
		}
		sort.Strings(names)
		return res, fmt.Errorf("--volume %s: no activity in the store for that driver (drivers: %s)", req.Driver, strings.Join(names, ", "))
	}
	lookup := activityLookup(actual, actual)
	var plan *planFile
	if req.PlanPath != "" {
		p, err := readPlan(ctx, e, req.PlanPath, known)
		if err != nil {
			return res, err
		}
		plan = &p
	}
	if req.Period != "" {
		if _, err := e.Calendar.Parse(req.Period); err != nil {
			return res, fmt.Errorf("--period %q: %w", req.Period, err)
		}
	}
	reference, err := referenceVolume(e, req, plan, actual, newest, &res)
	if err != nil {
		return res, err
	}

	bs, err := db.CurrentBehaviour(ctx)
	if err != nil {
		return res, fmt.Errorf("breakeven: %w", err)
	}
	if bs, err = inScope(e, bs); err != nil {
		return res, err
	}
	if req.CostCenter != "" {
		kept := bs[:0]
		for _, b := range bs {
			if b.Object.CostCenter == req.CostCenter {
				kept = append(kept, b)
			}
		}
		bs = kept
	}
	if len(bs) == 0 {
		return res, fmt.Errorf("breakeven: no cost behaviour stored%s: run `costdrift analyze` first", ccText(req.CostCenter))
	}
	bs, source, err := effective(ctx, e, db, bs, e.Calendar.Period(e.Now()))
	if err != nil {
		return res, fmt.Errorf("breakeven: %w", err)
	}
	priceNotes := atReferencePrices(e, bs, actual, plan, res.Period)

	price := req.Price
	res.PriceFrom = "given"
	if req.Revenue != "" {
		if price, res.PriceFrom, err = revenuePrice(ctx, e, db, req, lookup); err != nil {
			return res, err
		}
	}
	planned := func(period, driver, cc string) (float64, bool) {
		if plan != nil {
			if v, ok := activityLookup(actual, plan.activityIndex)(period, driver, cc); ok {
				return v, true
			}
		}
		return lookup(period, driver, cc)
	}
	in := budget.BreakEvenInput{Driver: req.Driver, Price: price, Behaviours: bs, Reference: reference,
		Pairs: func(b *costdrift.Behaviour, other string) (vol, oth []float64) {
			if b.Since == "" || b.Until == "" {
				return nil, nil
			}
			for _, p := range e.Calendar.Between(b.Since, b.Until) {
				q, ok1 := lookup(p, req.Driver, req.CostCenter)
				x, ok2 := lookup(p, other, b.Object.CostCenter)
				if ok1 && ok2 {
					vol, oth = append(vol, q), append(oth, x)
				}
			}
			return vol, oth
		},
		Held: func(b *costdrift.Behaviour, other string) (float64, bool) {
			if res.Period == "" {
				return 0, false
			}
			return planned(res.Period, other, b.Object.CostCenter)
		},
	}
	be, err := budget.BreakEvenOf(in)
	if err != nil {
		return res, fmt.Errorf("breakeven: %w", err)
	}
	for i := range be.Parts {
		if note := source[be.Parts[i].Object.String()]; note == report.SourcePinned || note == report.SourceApproved {
			be.Parts[i].How = note + " formula; " + be.Parts[i].How
		}
	}
	be.Notes = append(priceNotes, be.Notes...)
	res.BreakEven = be
	if res.Names, err = db.AccountNames(ctx); err != nil {
		return res, err
	}
	return res, nil
}

// referenceVolume is the volume the margin of safety is taken at: the
// plan's in the period asked (or its first planning the driver), else the
// actual in the period asked (or the newest closed one); NaN when there
// is none to take.
func referenceVolume(e *Env, req BreakEvenRequest, plan *planFile, actual *activityIndex, newest string, res *BreakEvenResult) (float64, error) {
	if plan != nil {
		period := req.Period
		if period == "" {
			for _, v := range plan.values {
				if v.Driver == req.Driver && (period == "" || v.Period < period) {
					period = v.Period
				}
			}
		}
		q, ok := activityLookup(actual, plan.activityIndex)(period, req.Driver, req.CostCenter)
		if !ok {
			return 0, fmt.Errorf("plan %s has no %s%s in %s", plan.name, req.Driver, ccText(req.CostCenter), orNone(period))
		}
		res.Period, res.ReferenceFrom = period, "plan "+plan.name
		return q, nil
	}
	period := req.Period
	if period == "" {
		period = newest
	}
	if period == "" {
		return math.NaN(), nil
	}
	q, ok := activityLookup(actual, actual)(period, req.Driver, req.CostCenter)
	if !ok {
		return 0, fmt.Errorf("--period %s: no %s activity%s in the store", period, req.Driver, ccText(req.CostCenter))
	}
	res.Period, res.ReferenceFrom = period, "actual"
	return q, nil
}

func orNone(period string) string {
	if period == "" {
		return "any period"
	}
	return period
}

// revenuePrice is the revenue account's price per unit of the volume: its
// revenue (credits less debits) over the volume, summed over the closed
// periods that have both.
func revenuePrice(ctx context.Context, e *Env, db *sqlite.DB, req BreakEvenRequest, lookup func(period, driver, cc string) (float64, bool)) (float64, string, error) {
	totals, err := db.CostTotals(ctx)
	if err != nil {
		return 0, "", fmt.Errorf("breakeven: read ledger totals: %w", err)
	}
	perPeriod := map[string]int64{}
	for _, c := range totals {
		if c.Account != req.Revenue || (req.CostCenter != "" && c.CostCenter != req.CostCenter) || !e.Calendar.Closed(c.Period, e.Now()) {
			continue
		}
		if c.Overflow {
			return 0, "", fmt.Errorf("--revenue %s: its postings in %s add up to more than the store can total", req.Revenue, c.Period)
		}
		perPeriod[c.Period] -= c.AmountMinor
	}
	if len(perPeriod) == 0 {
		return 0, "", fmt.Errorf("--revenue %s: the ledger has no postings on that account%s in a closed period", req.Revenue, ccText(req.CostCenter))
	}
	var revenue, volume float64
	var periods []string
	for p, minor := range perPeriod {
		q, ok := lookup(p, req.Driver, req.CostCenter)
		if !ok {
			continue
		}
		revenue += e.Currency.Units(minor)
		volume += q
		periods = append(periods, p)
	}
	if len(periods) == 0 {
		return 0, "", fmt.Errorf("--revenue %s: no period with its postings has %s activity", req.Revenue, req.Driver)
	}
	if !(volume > 0) || !(revenue > 0) {
		return 0, "", errors.New("--revenue " + req.Revenue + ": its postings net to no revenue (credits) over the periods with volume")
	}
	sort.Strings(periods)
	from := fmt.Sprintf("account %s, %s to %s (%d periods), taken as known", req.Revenue, periods[0], periods[len(periods)-1], len(periods))
	return revenue / volume, from, nil
}

// atReferencePrices moves each formula fitted on restated costs to the
// prices of the reference period, in place, as that period's budget moves
// it (README, Prices and inflation): the price per unit is the period's,
// and so must the costs be. It returns what the analysis should say of the
// prices, each note once; without a reference period, the formulas stay at
// the prices they were fitted at, and the note says which.
func atReferencePrices(e *Env, bs []costdrift.Behaviour, actual *activityIndex, plan *planFile, period string) []string {
	var planIndex *activityIndex
	if plan != nil {
		planIndex = plan.activityIndex
	}
	prices := newBudgetPrices(e, actual, planIndex)
	var notes []string
	note := func(n string) {
		if n != "" && !slices.Contains(notes, n) {
			notes = append(notes, n)
		}
	}
	for i := range bs {
		if period == "" {
			if bs[i].PriceBase != "" {
				note("formulas at prices of " + bs[i].PriceBase + ": no reference period to move them to")
			}
			continue
		}
		var n string
		bs[i], n = prices.at(bs[i], period)
		note(n)
	}
	return notes
}
