package pipeline

import (
	"context"
	"errors"
	"fmt"
	"math"
	"slices"
	"strconv"
	"strings"

	"github.com/costdrift/costdrift/internal/costdrift"
	"github.com/costdrift/costdrift/internal/money"
	"github.com/costdrift/costdrift/internal/series"
	"github.com/costdrift/costdrift/internal/sqlite"
)

// PinInput is a pin as the accountant typed it: the amounts as text, ""
// for a figure not given.
type PinInput struct {
	Object string
	Class  string
	Driver string
	Lag    int
	Fixed  string
	Rate   string
	Until  string
	Reason string
	By     string
}

// Pin checks a pin against the store and records it. Every refusal is one
// line naming the problem, and stores nothing.
func Pin(ctx context.Context, e *Env, db *sqlite.DB, in PinInput) (costdrift.Pin, error) {
	reason := strings.TrimSpace(in.Reason)
	if reason == "" {
		return costdrift.Pin{}, errors.New("--reason is required: say why the formula is pinned")
	}
	if err := knownObject(ctx, e, db, in.Object); err != nil {
		return costdrift.Pin{}, err
	}
	p := costdrift.Pin{Object: in.Object, Class: costdrift.Class(in.Class), Driver: in.Driver, Lag: in.Lag, Until: in.Until,
		By: in.By, At: e.Now().UTC(), Reason: reason}
	needs := map[costdrift.Class]struct{ driver, fixed, rate bool }{
		costdrift.Fixed:    {fixed: true},
		costdrift.Variable: {driver: true, rate: true},
		costdrift.Mixed:    {driver: true, fixed: true, rate: true},
		costdrift.Step:     {fixed: true},
	}
	need, ok := needs[p.Class]
	if !ok {
		return p, fmt.Errorf("--class must be fixed, variable, mixed or step, not %q", in.Class)
	}
	switch {
	case need.driver && in.Driver == "":
		return p, fmt.Errorf("a %s formula needs --driver", p.Class)
	case need.fixed && in.Fixed == "":
		return p, fmt.Errorf("a %s formula needs --fixed, the cost per period%s", p.Class, map[bool]string{true: " at the level in force", false: ""}[p.Class == costdrift.Step])
	case need.rate && in.Rate == "":
		return p, fmt.Errorf("a %s formula needs --rate, the cost per unit of %s", p.Class, in.Driver)
	case !need.rate && in.Rate != "":
		return p, fmt.Errorf("a %s formula has no rate: leave --rate out", p.Class)
	case !need.fixed && in.Fixed != "":
		return p, fmt.Errorf("a %s formula has no fixed part: leave --fixed out", p.Class)
	case p.Class == costdrift.Fixed && in.Driver != "":
		return p, errors.New("a fixed formula has no driver: leave --driver out")
	case in.Lag < 0:
		return p, fmt.Errorf("--lag must be 0 or more, not %d", in.Lag)
	case in.Lag > 0 && in.Driver == "":
		return p, errors.New("--lag needs --driver")
	}
	if in.Driver != "" {
		known, err := db.DriverKnown(ctx, in.Driver)
		if err != nil {
			return p, fmt.Errorf("pin: %w", err)
		}
		if !known {
			return p, fmt.Errorf("the store has no activity for driver %q: `costdrift explain %s` lists the drivers tried", in.Driver, in.Object)
		}
		if lags := e.Config.Analysis.Lags; len(lags) > 0 && in.Lag > slices.Max(lags) {
			return p, fmt.Errorf("--lag %d is beyond the largest lag the analysis reads (analysis.lags, %d)", in.Lag, slices.Max(lags))
		}
	}
	if in.Fixed != "" {
		minor, err := e.Currency.Parse(in.Fixed, money.Notation{})
		if err != nil {
			return p, fmt.Errorf("--fixed %q: %w", in.Fixed, err)
		}
		p.Fixed = e.Currency.Units(minor)
	}
	if in.Rate != "" {
		rate, err := strconv.ParseFloat(strings.TrimSpace(in.Rate), 64)
		if err != nil || math.IsNaN(rate) || math.IsInf(rate, 0) {
			return p, fmt.Errorf("--rate %q is not a number", in.Rate)
		}
		if rate < 0 {
			return p, fmt.Errorf("--rate %s is negative: a cost does not fall as its driver rises", in.Rate)
		}
		p.Rate = rate
	}
	if in.Until != "" {
		if _, err := e.Calendar.Parse(in.Until); err != nil {
			return p, fmt.Errorf("--until: %v; give a period of the %s calendar the store uses", err, e.Calendar.Kind())
		}
		if now := e.Calendar.Period(e.Now()); in.Until < now {
			return p, fmt.Errorf("--until %s is in the past (the current period is %s)", in.Until, now)
		}
	}
	id, err := db.Pin(ctx, p)
	if err != nil {
		return p, fmt.Errorf("pin %s: %w", in.Object, err)
	}
	p.DecisionID = id
	return p, nil
}

// Unpin records that object's formula is the data's again.
func Unpin(ctx context.Context, e *Env, db *sqlite.DB, object, by, reason string) error {
	reason = strings.TrimSpace(reason)
	if reason == "" {
		return errors.New("--reason is required: say why the pin is taken off")
	}
	err := db.Unpin(ctx, object, by, reason, e.Now().UTC())
	if errors.Is(err, sqlite.ErrNotPinned) {
		return fmt.Errorf("%s has no pin to take off", object)
	}
	if err != nil {
		return fmt.Errorf("unpin %s: %w", object, err)
	}
	return nil
}

// Exclude records that periods are left out of object's fit from the next
// analysis on. It refuses a period the calendar does not know, and
// exclusions that would leave fewer than analysis.min_periods periods of
// the next analysis's window to fit.
func Exclude(ctx context.Context, e *Env, db *sqlite.DB, object string, periods []string, by, reason string) error {
	reason = strings.TrimSpace(reason)
	if reason == "" {
		return errors.New("--reason is required: say why the periods are left out")
	}
	periods, err := checkPeriods(e, periods)
	if err != nil {
		return err
	}
	if err := knownObject(ctx, e, db, object); err != nil {
		return err
	}
	known, _, err := ObjectPeriods(ctx, e, db, object)
	if err != nil {
		return fmt.Errorf("exclude: %w", err)
	}
	all, err := db.Exclusions(ctx)
	if err != nil {
		return fmt.Errorf("exclude: %w", err)
	}
	left := map[string]bool{}
	for _, p := range known {
		left[p] = true
	}
	for _, x := range all[object] {
		delete(left, x.Period)
	}
	for _, p := range periods {
		delete(left, p)
	}
	if need := e.Config.Analysis.MinPeriods; len(left) < need {
		what := strings.Join(periods, ", ")
		if len(periods) > 3 {
			what = fmt.Sprintf("these %d periods", len(periods))
		}
		return fmt.Errorf("excluding %s would leave %s %d periods with ledger data to fit, fewer than analysis.min_periods (%d)",
			what, object, len(left), need)
	}
	if err := db.Exclude(ctx, object, periods, by, reason, e.Now().UTC()); err != nil {
		return fmt.Errorf("exclude: %w", err)
	}
	return nil
}

// Include records that excluded periods are fitted again from the next
// analysis on.
func Include(ctx context.Context, e *Env, db *sqlite.DB, object string, periods []string, by, reason string) error {
	periods, err := checkPeriods(e, periods)
	if err != nil {
		return err
	}
	reason = strings.TrimSpace(reason)
	if reason == "" {
		reason = "included again"
	}
	if err := db.Include(ctx, object, periods, by, reason, e.Now().UTC()); err != nil {
		return fmt.Errorf("include: %w", err)
	}
	return nil
}

// checkPeriods parses each period (a comma list may be given in one
// value) and drops repeats.
func checkPeriods(e *Env, given []string) ([]string, error) {
	var out []string
	for _, g := range given {
		for _, p := range strings.Split(g, ",") {
			p = strings.TrimSpace(p)
			if p == "" {
				continue
			}
			if _, err := e.Calendar.Parse(p); err != nil {
				return nil, fmt.Errorf("--period: %v; give a period of the %s calendar the store uses", err, e.Calendar.Kind())
			}
			if !slices.Contains(out, p) {
				out = append(out, p)
			}
		}
	}
	if len(out) == 0 {
		return nil, errors.New("--period is required: name the period, or periods separated by commas")
	}
	return out, nil
}

// knownObject refuses an object that is neither analysed nor, before its
// first analysis, a cost object in scope with ledger lines, with the reason
// explain gives.
func knownObject(ctx context.Context, e *Env, db *sqlite.DB, object string) error {
	_, err := db.ObjectAnalysis(ctx, object)
	if err == nil {
		return nil
	}
	if !errors.Is(err, sqlite.ErrNoAnalysis) && !errors.Is(err, sqlite.ErrNotAnalysed) {
		return fmt.Errorf("%s: %w", object, err)
	}
	account, costCenter, _ := strings.Cut(object, "/")
	accountGrain := e.Config.Analysis.Grain == string(costdrift.GrainAccount)
	if accountGrain && costCenter != "" {
		return notAnalysed(ctx, e, db, object)
	}
	scope, err := costdrift.ParseAccountScope(e.Config.Analysis.Accounts)
	if err != nil || !scope.Contains(account) {
		return notAnalysed(ctx, e, db, object)
	}
	has, err := db.HasLedgerLines(ctx, costdrift.CostObject{Account: account, CostCenter: costCenter}, accountGrain)
	if err != nil {
		return fmt.Errorf("%s: %w", object, err)
	}
	if !has {
		return notAnalysed(ctx, e, db, object)
	}
	return nil
}

// ObjectPeriods lists the periods of the next analysis's window in which
// object has a cost to fit (the ledger has postings then), with the cost,
// before any exclusion.
func ObjectPeriods(ctx context.Context, e *Env, db *sqlite.DB, object string) (periods []string, costs []float64, err error) {
	cfg := e.Config.Analysis
	scope, err := costdrift.ParseAccountScope(cfg.Accounts)
	if err != nil {
		return nil, nil, err
	}
	ledger, err := db.LedgerPeriods(ctx)
	if err != nil {
		return nil, nil, err
	}
	ss := series.Settings{Grain: costdrift.Grain(cfg.Grain), Scope: scope, Window: cfg.Window, MaxLag: slices.Max(cfg.Lags),
		Minor: minorPerUnit(e), Calendar: e.Calendar, Now: e.Now()}
	w, err := series.NewWindow(ledger, ss)
	if err != nil {
		return nil, nil, nil // no closed period yet: nothing to fit
	}
	account, costCenter, _ := strings.Cut(object, "/")
	totals, err := db.ObjectCostTotals(ctx, costdrift.CostObject{Account: account, CostCenter: costCenter},
		ss.Grain == costdrift.GrainAccount, w.From(), w.To())
	if err != nil {
		return nil, nil, err
	}
	obj, ok := w.Object(totals)
	if !ok {
		return nil, nil, nil
	}
	for i, v := range obj.Cost {
		if !math.IsNaN(v) {
			periods, costs = append(periods, w.Periods[i]), append(costs, v)
		}
	}
	return periods, costs, nil
}

// minorPerUnit is how many minor units the currency's unit holds.
func minorPerUnit(e *Env) int64 {
	minor := int64(1)
	for range e.Currency.Exponent {
		minor *= 10
	}
	return minor
}

// excludePeriods leaves the excluded periods out of an object's series:
// their cost becomes unknown (NaN), which the analysis neither fits nor
// counts, as it does a period without ledger postings.
func excludePeriods(o *costdrift.ObjectSeries, periods []string, excluded []costdrift.Exclusion) {
	if len(excluded) == 0 {
		return
	}
	out := map[string]bool{}
	for _, x := range excluded {
		out[x.Period] = true
	}
	for i, p := range periods {
		if i < len(o.Cost) && out[p] {
			o.Cost[i] = math.NaN()
		}
	}
}
