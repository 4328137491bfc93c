package pipeline

import (
	"context"
	"fmt"
	"math"
	"slices"

	"github.com/costdrift/costdrift/internal/alerts"
	"github.com/costdrift/costdrift/internal/analyze"
	"github.com/costdrift/costdrift/internal/costdrift"
	"github.com/costdrift/costdrift/internal/report"
	"github.com/costdrift/costdrift/internal/sqlite"
)

// PinnedNote is what a budget or variance line of a pinned formula says
// about its interval.
const PinnedNote = "pinned formula: its interval comes from the data's scatter around it"

// ApprovedNote is what a budget or variance line of an approved formula
// says while a newer one waits for approval or was declined.
const ApprovedNote = "approved formula: the analysis's newer one awaits approval (costdrift proposals)"

// pinPoints are the periods of an object's current behaviour (Since to
// Until) with a cost, less the excluded ones: the cost (y) beside the
// pin's driver at the pin's lag (x, 0 without a driver). A period without
// a driver value is left out, as the analysis leaves it out.
func pinPoints(ctx context.Context, e *Env, db *sqlite.DB, b costdrift.Behaviour, p costdrift.Pin, excluded []costdrift.Exclusion) (x, y []float64, err error) {
	if b.Since == "" || b.Until == "" {
		return nil, nil, nil
	}
	for _, per := range []string{b.Since, b.Until} {
		if _, err := e.Calendar.Parse(per); err != nil {
			return nil, nil, nil
		}
	}
	accountGrain := e.Config.Analysis.Grain == string(costdrift.GrainAccount)
	costs, ledger, err := db.CostPerPeriod(ctx, b.Object, accountGrain, b.Since, b.Until)
	if err != nil {
		return nil, nil, err
	}
	var values map[string]float64
	if p.Driver != "" {
		values, _, err = db.DriverValues(ctx, p.Driver, b.Object.CostCenter, accountGrain, e.Calendar.Shift(b.Since, -p.Lag), b.Until)
		if err != nil {
			return nil, nil, err
		}
	}
	for _, per := range e.Calendar.Between(b.Since, b.Until) {
		if !ledger[per] || slices.ContainsFunc(excluded, func(x costdrift.Exclusion) bool { return x.Period == per }) {
			continue
		}
		xv := 0.0
		if p.Driver != "" {
			v, ok := values[e.Calendar.Shift(per, -p.Lag)]
			if !ok {
				continue
			}
			xv = v
		}
		x, y = append(x, xv), append(y, e.Currency.Units(costs[per]))
	}
	return x, y, nil
}

// pinnedBehaviour is b with the pinned formula in place of the data's.
// Its prediction terms take the pinned coefficients as known, so that a
// new period's cost varies around the formula by the data's scatter about
// it: se = s = sqrt(Σ(y − F − R·x)² / n) with n degrees of freedom, no
// coefficient having been estimated from these data (common practice for a
// prediction from a model with known coefficients). Without data points
// it has no prediction terms.
func pinnedBehaviour(b costdrift.Behaviour, p costdrift.Pin, x, y []float64) costdrift.Behaviour {
	nb := b
	nb.Class, nb.Lag = p.Class, p.Lag
	nb.FixedPerPeriod, nb.VariableRate = p.Fixed, p.Rate
	if p.Class == costdrift.Variable {
		nb.FixedPerPeriod = 0
	}
	if p.Driver != b.Driver {
		nb.Unit = ""
		nb.RangeMin, nb.RangeMax = math.NaN(), math.NaN()
		if p.Driver != "" && len(x) > 0 {
			nb.RangeMin, nb.RangeMax = slices.Min(x), slices.Max(x)
		}
	}
	nb.Driver = p.Driver
	nb.Driver2, nb.Unit2, nb.Lag2, nb.VariableRate2 = "", "", 0, 0
	nb.Steps, nb.Break, nb.Pending, nb.Spending = nil, nil, nil, nil
	nb.Prediction = nil
	nb.PriceBase = "" // a pinned formula is taken as the accountant entered it
	n := len(y)
	if n == 0 {
		return nb
	}
	ss, mean := 0.0, 0.0
	for i := range y {
		r := y[i] - nb.FixedPerPeriod - nb.VariableRate*x[i]
		ss += r * r
		mean += x[i]
	}
	mean /= float64(n)
	t := &costdrift.PredictionTerms{S: math.Sqrt(ss / float64(n)), N: n, DF: n}
	switch p.Class {
	case costdrift.Variable:
		t.Coef, t.Cov = []float64{p.Rate}, []float64{0}
	case costdrift.Mixed:
		t.Intercept, t.Centre = true, []float64{mean}
		t.Coef, t.Cov = []float64{p.Fixed + p.Rate*mean, p.Rate}, []float64{0, 0, 0, 0}
	default: // fixed, and step at the level in force
		t.Intercept = true
		t.Coef, t.Cov = []float64{p.Fixed}, []float64{0}
	}
	if t.Check() == nil {
		nb.Prediction = t
	}
	return nb
}

// effective puts in place of each behaviour the formula budgets and
// variances use in period: the pinned one while a pin is in force; else,
// with analysis.approval: required, the approved row while the current one
// waits or was declined (bs must then be current rows, or the rows in
// force in period); else the data's. source names, by object, where a
// replaced formula comes from (report.SourcePinned, SourceApproved).
func effective(ctx context.Context, e *Env, db *sqlite.DB, bs []costdrift.Behaviour, period string) (out []costdrift.Behaviour, source map[string]string, err error) {
	pins, err := db.Pins(ctx)
	if err != nil {
		return nil, nil, err
	}
	var states map[string]costdrift.ApprovalState
	var approved map[string]costdrift.Behaviour
	if approvalRequired(e) {
		if states, err = db.ApprovalStates(ctx); err != nil {
			return nil, nil, err
		}
		if approved, err = db.ApprovedBehaviours(ctx); err != nil {
			return nil, nil, err
		}
	}
	if len(pins) == 0 && len(approved) == 0 {
		return bs, nil, nil
	}
	excluded, err := db.Exclusions(ctx)
	if err != nil {
		return nil, nil, err
	}
	out = make([]costdrift.Behaviour, len(bs))
	source = map[string]string{}
	for i, b := range bs {
		out[i] = b
		name := b.Object.String()
		if p, ok := pins[name]; ok && !p.Expired(period) {
			x, y, err := pinPoints(ctx, e, db, b, p, excluded[name])
			if err != nil {
				return nil, nil, fmt.Errorf("pinned formula of %s: %w", b.Object, err)
			}
			out[i] = pinnedBehaviour(b, p, x, y)
			source[name] = report.SourcePinned
			continue
		}
		st, ok := states[name]
		a, has := approved[name]
		// The row given is the current one when it starts where the
		// current row starts; an older row in force in a past period was
		// approved or replaced in its time and stays as it is.
		if ok && has && st.KeepsApproved() && b.Since == st.CurrentSince {
			out[i] = a
			source[name] = report.SourceApproved
		}
	}
	return out, source, nil
}

// approvalRequired reports whether analysis.approval is required.
func approvalRequired(e *Env) bool { return e.Config.Analysis.Approval == "required" }

// Decided reads what the accountant decided about each object, with the
// formula budgets use now, for the report and explain.
func Decided(ctx context.Context, e *Env, db *sqlite.DB, bs []costdrift.Behaviour) (map[string]report.Decided, error) {
	pins, err := db.Pins(ctx)
	if err != nil {
		return nil, err
	}
	excluded, err := db.Exclusions(ctx)
	if err != nil {
		return nil, err
	}
	now := e.Calendar.Period(e.Now())
	eff, source, err := effective(ctx, e, db, bs, now)
	if err != nil {
		return nil, err
	}
	var states map[string]costdrift.ApprovalState
	var approved map[string]costdrift.Behaviour
	if approvalRequired(e) {
		if states, err = db.ApprovalStates(ctx); err != nil {
			return nil, err
		}
		if approved, err = db.ApprovedBehaviours(ctx); err != nil {
			return nil, err
		}
	}
	out := make(map[string]report.Decided, len(bs))
	for i, b := range bs {
		name := b.Object.String()
		d := report.Decided{Excluded: excluded[name], Effective: eff[i], EffectiveSource: report.SourceData}
		if p, ok := pins[name]; ok {
			d.Pin = &p
		}
		if s := source[name]; s != "" {
			d.EffectiveSource = s
		}
		if states != nil {
			st := states[name]
			ap := &report.ApprovalInput{State: st}
			if st.ApprovedID != 0 {
				if a, ok := approved[name]; ok {
					ap.Approved = &a
				}
			}
			d.Approval = ap
		}
		out[name] = d
	}
	return out, nil
}

// reviewPins tests the data of every object with a pin in force against
// its pinned formula, weighs the tests across the portfolio at
// analysis.break_alpha (the level a break must reach), and raises the
// alerts of the pins the data contradict and of the pins that expired.
func reviewPins(ctx context.Context, e *Env, db *sqlite.DB, pins map[string]costdrift.Pin, current []costdrift.Behaviour,
	names map[string]string) ([]costdrift.Alert, error) {
	if len(pins) == 0 {
		return nil, nil
	}
	excluded, err := db.Exclusions(ctx)
	if err != nil {
		return nil, err
	}
	now := e.Calendar.Period(e.Now())
	var tests []costdrift.PinTest
	for _, b := range current {
		p := pins[b.Object.String()]
		if p.Expired(now) || b.Class == costdrift.InsufficientData {
			continue
		}
		x, y, err := pinPoints(ctx, e, db, b, p, excluded[b.Object.String()])
		if err != nil {
			return nil, fmt.Errorf("pin of %s: %w", b.Object, err)
		}
		t, err := analyze.TestPin(p, x, y)
		if err != nil {
			continue // too few periods to test: nothing to say yet
		}
		tests = append(tests, t)
	}
	analyze.ControlPins(tests, e.Config.Analysis.BreakAlpha)
	return alerts.PinReview(pins, tests, now, names, e.Currency.Code), nil
}
