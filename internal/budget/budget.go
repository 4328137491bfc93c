// Package budget turns the discovered cost formulas into flexible budgets
// and spending variances. It is pure: the caller reads behaviours, plans and
// actuals from the store and passes lookups in.
//
// A budget for one cost object and period is its formula at the planned
// activity (common practice: budget = fixed + rate × activity; the level for
// a step cost; the mean for a cost no driver explains), with the prediction
// interval of a new period's cost from the stored prediction terms (see
// costdrift.PredictionTerms). Totals add the objects' budgets and their variances, assuming
// the objects' deviations from their formulas are independent; the degrees
// of freedom of a total are Welch–Satterthwaite's,
//
//	ν = (Σ se_i²)² / Σ (se_i⁴ / ν_i),
//
// and its interval is total ± t(ν)·sqrt(Σ se_i²).
package budget

import (
	"fmt"
	"math"
	"sort"
	"strconv"
	"strings"

	"gonum.org/v1/gonum/stat/distuv"

	"github.com/costdrift/costdrift/internal/costdrift"
	"github.com/costdrift/costdrift/internal/fit"
	"github.com/costdrift/costdrift/internal/present"
)

// unknown is an estimate with no figure yet.
func unknown() costdrift.Estimate {
	nan := math.NaN()
	return costdrift.Estimate{Value: nan, SE: nan, DF: nan, Low80: nan, High80: nan, Low95: nan, High95: nan}
}

// Lookup returns a driver's activity in a period for a cost centre: the
// cost centre's own series when there is one, else the company-wide series.
type Lookup func(period, driver, costCenter string) (float64, bool)

// Evaluate is b's formula at activity x1 (and x2 for a second driver; both
// ignored when the formula has no driver). A negative rate, and a driven
// formula's budget below zero, are never given silently: each puts a
// warning on the estimate, and totals count the objects budgeted below
// zero. The figure itself is left as the formula gives it, so that budget
// and variances still add up.
func Evaluate(b *costdrift.Behaviour, x1, x2 float64) (costdrift.Estimate, error) {
	e := unknown()
	var row []float64
	levels := false
	switch b.Class {
	case costdrift.InsufficientData:
		return e, fmt.Errorf("%s: too few periods for a formula (%s)", b.Object, b.Reason)
	case costdrift.Fixed:
		e.Value = b.FixedPerPeriod
	case costdrift.Unexplained:
		e.Value = b.FixedPerPeriod
		e.Warnings = append(e.Warnings, "no driver explains this cost: budgeted at its mean")
	case costdrift.Variable, costdrift.Mixed:
		e.Value = b.VariableRate * x1
		if b.Class == costdrift.Mixed {
			e.Value += b.FixedPerPeriod
		}
		row = []float64{x1}
		if b.Driver2 != "" {
			e.Value += b.VariableRate2 * x2
			row = append(row, x2)
		}
	case costdrift.Step:
		if b.Prediction != nil && b.Prediction.Levels && len(b.Steps) == len(b.Prediction.Coef) {
			g := stepLevel(b.Steps, x1)
			e.Value = b.Steps[g].Level
			row = fit.StepRow(g, len(b.Steps))
			levels = true
		} else {
			e.Value = b.FixedPerPeriod // provisional after a break: the mean since
		}
	default:
		return e, fmt.Errorf("%s: unknown class %q", b.Object, b.Class)
	}
	if b.Driver != "" && b.Class != costdrift.Fixed && b.Class != costdrift.Unexplained {
		lo, hi := b.RangeMin, b.RangeMax
		if b.Class == costdrift.Step && len(b.Steps) > 0 {
			lo, hi = b.Steps[0].From, b.Steps[len(b.Steps)-1].To
		}
		if x1 < lo || x1 > hi {
			e.OutsideRange = true
			e.Warnings = append(e.Warnings, fmt.Sprintf("%s %s is outside the relevant range %s to %s: the formula was not observed there",
				b.Driver, num(x1), num(lo), num(hi)))
		}
	}
	if b.Class == costdrift.Variable || b.Class == costdrift.Mixed {
		// The analysis never fits a negative rate (README, The method), but a
		// formula stored by an earlier version, or edited, may hold one; at
		// high activity it budgets less than nothing.
		for _, r := range []struct {
			driver, unit string
			rate         float64
		}{{b.Driver, b.Unit, b.VariableRate}, {b.Driver2, b.Unit2, b.VariableRate2}} {
			if r.driver != "" && r.rate < 0 {
				e.Warnings = append(e.Warnings, fmt.Sprintf("negative rate (%s per %s) is implausible for a cost: check the formula with `costdrift explain %s`",
					strconv.FormatFloat(r.rate, 'f', -1, 64), unitOf(r.unit, r.driver), b.Object))
			}
		}
		if e.Value < 0 {
			e.Negative = true
			e.Warnings = append(e.Warnings, "negative budget: the formula gives less than no cost at this activity")
		}
	}
	if b.Break != nil && b.Break.Provisional {
		e.Warnings = append(e.Warnings, fmt.Sprintf("provisional formula: only %d periods since the break at %s", b.Break.Periods, b.Break.Period))
	}
	if b.Pending != nil {
		e.Warnings = append(e.Warnings, fmt.Sprintf("a change to %s awaits confirmation by the next analysis", pendingText(b.Pending)))
	}

	if b.Prediction == nil || b.Prediction.Check() != nil {
		e.Warnings = append(e.Warnings, "no prediction interval: the formula was stored without its prediction terms; run `costdrift analyze --all`")
		return e, nil
	}
	t := fit.Terms(*b.Prediction)
	if t.Levels != levels || t.Regressors() != len(row) {
		e.Warnings = append(e.Warnings, "no prediction interval: the stored prediction terms do not match the formula; run `costdrift analyze --all`")
		return e, nil
	}
	_, se := t.Predict(row)
	e.SE, e.DF = se, float64(t.DF)
	interval(&e)
	cutAtZero(&e)
	return e, nil
}

// CutAtZero is the warning of an interval cut at zero.
const CutAtZero = "interval cut at zero: a cost cannot be negative"

// cutAtZero cuts the lower ends of e's intervals at zero where they reach
// below it: a cost cannot be negative, and the normal-theory interval
// around a small cost with a large spread would say it could (README,
// Budgets and variances). The budget and the upper ends are left as they
// are; a budget already below zero is flagged as negative instead.
func cutAtZero(e *costdrift.Estimate) {
	if !(e.Value >= 0) || !(e.Low95 < 0) {
		return
	}
	e.Low95 = 0
	e.Low80 = math.Max(e.Low80, 0)
	e.Warnings = append(e.Warnings, CutAtZero)
}

// interval sets e's 80 and 95 % intervals from its Value, SE and DF.
func interval(e *costdrift.Estimate) {
	if math.IsNaN(e.SE) || !(e.DF > 0) {
		return
	}
	t80, t95 := tQuantile(0.20, e.DF), tQuantile(0.05, e.DF)
	e.Low80, e.High80 = e.Value-t80*e.SE, e.Value+t80*e.SE
	e.Low95, e.High95 = e.Value-t95*e.SE, e.Value+t95*e.SE
}

// tQuantile is the two-sided critical value of Student's t with df degrees
// of freedom (not necessarily whole): Pr(|T| > t) = p.
func tQuantile(p, df float64) float64 {
	return math.Abs(distuv.StudentsT{Mu: 0, Sigma: 1, Nu: df}.Quantile(p / 2))
}

// stepLevel is the level whose activity range holds x; between two levels'
// ranges the nearer; below the first or above the last, that end's.
func stepLevel(steps []costdrift.StepLevel, x float64) int {
	for g, s := range steps {
		if x <= s.To {
			if g > 0 && x < s.From && x-steps[g-1].To < s.From-x {
				return g - 1
			}
			return g
		}
	}
	return len(steps) - 1
}

// unitOf is how a warning names the unit of a driver.
func unitOf(unit, driver string) string {
	if unit == "" {
		return "unit of " + strings.ReplaceAll(driver, "_", " ")
	}
	return unit
}

func pendingText(p *costdrift.Pending) string {
	s := string(p.Class)
	if p.Driver != "" {
		s += " on " + p.Driver
	}
	return s
}

// num writes an activity figure briefly (present.Activity).
func num(v float64) string { return present.Activity(v) }

// Flexible budgets every behaviour for every period at the activity the
// lookup gives, one line per behaviour and period in that order. A driver
// with a lag is looked up in the period before; the caller's lookup asks
// the plan first and the actual activity after it, so that the period
// before the plan's first is found. shift(p, n) is the period n after p.
func Flexible(behaviours []costdrift.Behaviour, periods []string, activity Lookup, shift func(string, int) string) []costdrift.BudgetLine {
	return flexible(behaviours, periods, activity, shift, false)
}

// flexible is Flexible, and FlexibleSpread with spread set.
func flexible(behaviours []costdrift.Behaviour, periods []string, activity Lookup, shift func(string, int) string, spread bool) []costdrift.BudgetLine {
	var out []costdrift.BudgetLine
	for _, period := range periods {
		for i := range behaviours {
			b := &behaviours[i]
			l := costdrift.BudgetLine{Kind: costdrift.LineObject, Object: b.Object, Period: period, Class: b.Class, Objects: 1,
				Activity: math.NaN(), Activity2: math.NaN()}
			l.Estimate = unknown()
			var missing []string
			if needsDriver(b) {
				l.Driver, l.Lag = b.Driver, b.Lag
				at := shift(period, -b.Lag)
				if v, ok := activity(at, b.Driver, b.Object.CostCenter); ok {
					l.Activity = v
				} else {
					missing = append(missing, activityNeed(b.Driver, at, b.Lag))
				}
				if b.Driver2 != "" {
					l.Driver2, l.Lag2 = b.Driver2, b.Lag2
					at2 := shift(period, -b.Lag2)
					if v, ok := activity(at2, b.Driver2, b.Object.CostCenter); ok {
						l.Activity2 = v
					} else {
						missing = append(missing, activityNeed(b.Driver2, at2, b.Lag2))
					}
				}
			}
			switch {
			case len(missing) > 0:
				l.Warnings = []string{"no budget: no planned or actual activity for " + strings.Join(missing, " and ")}
			default:
				e, err := Evaluate(b, l.Activity, l.Activity2)
				if err != nil {
					l.Warnings = []string{"no budget: " + strings.TrimPrefix(err.Error(), b.Object.String()+": ")}
				} else {
					l.Estimate = atCadence(b, period, e, spread)
				}
			}
			l.Warning = strings.Join(l.Warnings, "; ")
			out = append(out, l)
		}
	}
	return out
}

func needsDriver(b *costdrift.Behaviour) bool {
	switch b.Class {
	case costdrift.Variable, costdrift.Mixed, costdrift.Step:
		return b.Driver != ""
	}
	return false
}

func activityNeed(driver, period string, lag int) string {
	if lag == 0 {
		return fmt.Sprintf("%s in %s", driver, period)
	}
	return fmt.Sprintf("%s in %s (lag %d)", driver, period, lag)
}

// sum is a running total of estimates.
type sum struct {
	value, variance, dfDenominator float64
	objects, skipped, noTerms      int
	outOfRange, negative           int
}

func (s *sum) add(e costdrift.Estimate) {
	if math.IsNaN(e.Value) {
		s.skipped++
		return
	}
	s.objects++
	s.value += e.Value
	if e.OutsideRange {
		s.outOfRange++
	}
	if e.Negative {
		s.negative++
	}
	if math.IsNaN(e.SE) || !(e.DF > 0) {
		s.noTerms++
		return
	}
	v := e.SE * e.SE
	s.variance += v
	s.dfDenominator += v * v / e.DF
}

// estimate is the total with its intervals and warnings.
func (s *sum) estimate() costdrift.Estimate {
	e := unknown()
	e.Value = s.value
	if s.objects == 0 {
		e.Value = math.NaN()
	}
	switch {
	case s.noTerms > 0:
		e.Warnings = append(e.Warnings, fmt.Sprintf("no interval: %d of the objects have no prediction terms", s.noTerms))
	case s.variance == 0 && s.objects > 0:
		e.SE, e.DF = 0, math.Inf(1)
		e.Low80, e.High80, e.Low95, e.High95 = e.Value, e.Value, e.Value, e.Value
	case s.objects > 0:
		e.SE = math.Sqrt(s.variance)
		e.DF = s.variance * s.variance / s.dfDenominator
		interval(&e)
		cutAtZero(&e)
		e.Warnings = append(e.Warnings, fmt.Sprintf("%s (Welch–Satterthwaite df %.1f)", costdrift.Independence, e.DF))
	}
	if s.skipped > 0 {
		e.Warnings = append(e.Warnings, fmt.Sprintf("%d object(s) without a budget left out", s.skipped))
	}
	if s.outOfRange > 0 {
		e.Warnings = append(e.Warnings, fmt.Sprintf("%d object(s) planned outside their relevant range", s.outOfRange))
	}
	if s.negative > 0 {
		e.Warnings = append(e.Warnings, fmt.Sprintf("%d object(s) with a negative budget", s.negative))
	}
	return e
}

// Totals sums the object lines per period and cost centre and per period,
// in the order: for each period, each cost centre's total (by name), then
// the period's total.
func Totals(lines []costdrift.BudgetLine) []costdrift.BudgetLine {
	type key struct{ period, cc string }
	byCC := map[key]*sum{}
	byPeriod := map[string]*sum{}
	var periods []string
	ccs := map[string][]string{}
	for _, l := range lines {
		if l.Kind != costdrift.LineObject {
			continue
		}
		if byPeriod[l.Period] == nil {
			byPeriod[l.Period] = &sum{}
			periods = append(periods, l.Period)
		}
		k := key{l.Period, l.Object.CostCenter}
		if byCC[k] == nil {
			byCC[k] = &sum{}
			ccs[l.Period] = append(ccs[l.Period], l.Object.CostCenter)
		}
		byCC[k].add(l.Estimate)
		byPeriod[l.Period].add(l.Estimate)
	}
	var out []costdrift.BudgetLine
	for _, p := range periods {
		names := ccs[p]
		sort.Strings(names)
		for _, cc := range names {
			s := byCC[key{p, cc}]
			out = append(out, totalLine(costdrift.LineCostCenter, costdrift.CostObject{CostCenter: cc}, p, s))
		}
		out = append(out, totalLine(costdrift.LineTotal, costdrift.CostObject{}, p, byPeriod[p]))
	}
	return out
}

func totalLine(kind costdrift.LineKind, o costdrift.CostObject, period string, s *sum) costdrift.BudgetLine {
	l := costdrift.BudgetLine{Kind: kind, Object: o, Period: period, Objects: s.objects + s.skipped, Activity: math.NaN(), Activity2: math.NaN()}
	l.Estimate = s.estimate()
	l.Warning = strings.Join(l.Warnings, "; ")
	return l
}
