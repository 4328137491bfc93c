package pipeline

import (
	"context"
	"errors"
	"fmt"
	"path/filepath"
	"sort"
	"strings"

	"github.com/costdrift/costdrift/internal/budget"
	"github.com/costdrift/costdrift/internal/costdrift"
	"github.com/costdrift/costdrift/internal/csvsource"
	"github.com/costdrift/costdrift/internal/report"
	"github.com/costdrift/costdrift/internal/sqlite"
	"github.com/costdrift/costdrift/internal/xlsxsource"
)

// BudgetResult is a plan's flexible budget: each object's line per planned
// period, then the cost-centre totals and the total.
type BudgetResult struct {
	Plan  string // the plan's name: its file name without extension
	Lines []costdrift.BudgetLine
	Names map[string]string // account names
}

// Budget budgets every current formula in scope at the planned activity
// of the plan file at planPath. With a name to save it under (save not
// ""), it keeps the plan and the budget in the store (plans, budget_lines),
// replacing what was saved under that name; nothing else is written, so it
// runs beside a daemon. Without one it is a trial run and writes nothing.
func Budget(ctx context.Context, e *Env, db *sqlite.DB, planPath, save string) (BudgetResult, error) {
	return budgetPlan(ctx, e, db, planPath, save, budget.Flexible)
}

// BudgetSpread is Budget with each cost posted at a cadence spread evenly
// over the periods a posting covers (`budget --spread`) rather than put in
// the periods it is posted in.
func BudgetSpread(ctx context.Context, e *Env, db *sqlite.DB, planPath, save string) (BudgetResult, error) {
	return budgetPlan(ctx, e, db, planPath, save, budget.FlexibleSpread)
}

// budgetPlan is Budget with the flexible budget flexible.
func budgetPlan(ctx context.Context, e *Env, db *sqlite.DB, planPath, save string,
	flexible func([]costdrift.Behaviour, []string, budget.Lookup, func(string, int) string) []costdrift.BudgetLine) (BudgetResult, error) {
	actual, known, err := storedActivity(ctx, db)
	if err != nil {
		return BudgetResult{}, err
	}
	plan, err := readPlan(ctx, e, planPath, known)
	if err != nil {
		return BudgetResult{}, err
	}
	bs, err := db.CurrentBehaviour(ctx)
	if err != nil {
		return BudgetResult{}, fmt.Errorf("budget: %w", err)
	}
	bs, err = inScope(e, bs)
	if err != nil {
		return BudgetResult{}, err
	}
	if len(bs) == 0 {
		return BudgetResult{}, errors.New("budget: no cost behaviour stored yet: run `costdrift analyze` first")
	}
	// A pin in force now holds for the whole plan; one that has expired
	// leaves the data's formula.
	bs, source, err := effective(ctx, e, db, bs, e.Calendar.Period(e.Now()))
	if err != nil {
		return BudgetResult{}, fmt.Errorf("budget: %w", err)
	}
	lookup, gaps := plannedLookup(e, actual, &plan)
	lines := flexibleAtPrices(newBudgetPrices(e, actual, plan.activityIndex), flexible, bs, plan.periods(), lookup, e.Calendar.Shift)
	if err := gaps.err(plan.name); err != nil {
		return BudgetResult{}, err
	}
	gaps.flagBudget(lines, e.Calendar.Shift)
	noteSource(lines, source)
	lines = append(lines, budget.Totals(lines)...)
	lines = orderBudget(lines)
	if save != "" {
		if err := db.SaveBudget(ctx, save, plan.values, lines, e.Now()); err != nil {
			return BudgetResult{}, fmt.Errorf("budget: store: %w", err)
		}
	}
	names, err := db.AccountNames(ctx)
	if err != nil {
		return BudgetResult{}, err
	}
	return BudgetResult{Plan: plan.name, Lines: lines, Names: names}, nil
}

// sourceNotes say on a line whose formula is not the data's current one
// where it comes from.
var sourceNotes = map[string]string{
	report.SourcePinned:   PinnedNote,
	report.SourceApproved: ApprovedNote,
}

// noteSource puts on each object line of a pinned or approved formula
// where it comes from.
func noteSource(lines []costdrift.BudgetLine, source map[string]string) {
	for i := range lines {
		if note := sourceNotes[source[lines[i].Object.String()]]; lines[i].Kind == costdrift.LineObject && note != "" {
			lines[i].Warning = joinNote(note, lines[i].Warning)
		}
	}
}

// joinNote puts note before the warnings a line has.
func joinNote(note, warning string) string {
	if warning == "" {
		return note
	}
	return note + "; " + warning
}

// orderBudget puts each period's object lines before its totals.
func orderBudget(lines []costdrift.BudgetLine) []costdrift.BudgetLine {
	rank := map[costdrift.LineKind]int{costdrift.LineObject: 0, costdrift.LineCostCenter: 1, costdrift.LineTotal: 2}
	sort.SliceStable(lines, func(i, j int) bool {
		if lines[i].Period != lines[j].Period {
			return lines[i].Period < lines[j].Period
		}
		return rank[lines[i].Kind] < rank[lines[j].Kind]
	})
	return lines
}

// VarianceResult is a closed period's variance report: a line per object,
// then the totals.
type VarianceResult struct {
	Period, Plan string // Plan is "" without one
	Lines        []costdrift.VarianceLine
	Names        map[string]string // account names
	// LeftOut says, per object left out, why (its lines cannot be added
	// up).
	LeftOut []string
}

// Variance compares each object's actual cost in a closed period with its
// flexible budget and, with a plan (planPath not ""), the plan's static
// budget. With a name to save it under (save not ""), it keeps the report
// in the store (variance_lines), replacing what was saved under that name;
// nothing else is written, so it runs beside a daemon. Without one it
// writes nothing.
func Variance(ctx context.Context, e *Env, db *sqlite.DB, period, planPath, save string) (VarianceResult, error) {
	res := VarianceResult{Period: period}
	if _, err := e.Calendar.Parse(period); err != nil {
		return res, fmt.Errorf("--period %q: %w", period, err)
	}
	if !e.Calendar.Closed(period, e.Now()) {
		return res, fmt.Errorf("--period %s is not closed yet (calendar.close_after_days: %d); a variance needs the period's books closed",
			period, e.Config.Calendar.CloseAfterDays)
	}
	actualActivity, known, err := storedActivity(ctx, db)
	if err != nil {
		return res, err
	}
	var plan *planFile
	var planLookup budget.Lookup
	var gaps *planGaps
	if planPath != "" {
		p, err := readPlan(ctx, e, planPath, known)
		if err != nil {
			return res, err
		}
		plan = &p
		planLookup, gaps = plannedLookup(e, actualActivity, plan)
	}
	costs, unknown, posted, err := periodCosts(ctx, e, db, period)
	if err != nil {
		return res, err
	}
	if !posted {
		return res, fmt.Errorf("the ledger has no postings in %s: run `costdrift sync` once it has", period)
	}
	bs, err := db.BehaviourIn(ctx, period)
	if err != nil {
		return res, fmt.Errorf("variance: %w", err)
	}
	bs, err = inScope(e, bs)
	if err != nil {
		return res, err
	}
	countable := bs[:0]
	for _, b := range bs {
		if unknown[b.Object.String()] {
			res.LeftOut = append(res.LeftOut, fmt.Sprintf("%s left out: its lines in %s add up to more than an int64 of minor units holds; "+
				"they include amounts beyond the bound sync enforces", b.Object, period))
			continue
		}
		countable = append(countable, b)
	}
	bs = countable
	if len(bs) == 0 {
		return res, fmt.Errorf("variance: no cost behaviour covers %s: run `costdrift analyze` first", period)
	}
	bs, source, err := effective(ctx, e, db, bs, period)
	if err != nil {
		return res, fmt.Errorf("variance: %w", err)
	}
	// Each formula at the period's prices, by the index as synced: the
	// period is closed.
	prices := newBudgetPrices(e, actualActivity, nil)
	priceNotes := make([]string, len(bs))
	moved := make([]costdrift.Behaviour, len(bs))
	for i := range bs {
		moved[i], priceNotes[i] = prices.at(bs[i], period)
	}
	lines := budget.Variances(moved, period, costs, activityLookup(actualActivity, actualActivity), planLookup, e.Calendar.Shift)
	for i := range lines { // one line per behaviour, in order
		addNote(&lines[i].Flexible, &lines[i].Warning, priceNotes[i])
		if gaps != nil {
			if n := gaps.note(period, lines[i].Driver, lines[i].Object.CostCenter, lines[i].Lag, e.Calendar.Shift, "static budget"); n != "" {
				lines[i].Warning = strings.TrimPrefix(lines[i].Warning+"; "+n, "; ")
			}
		}
		if note := sourceNotes[source[bs[i].Object.String()]]; note != "" {
			lines[i].Warning = joinNote(note, lines[i].Warning)
			if source[bs[i].Object.String()] == report.SourcePinned {
				continue
			}
		}
		if b := bs[i]; b.Since <= period && period <= b.Until {
			note := "the formula was fitted on data that include this period"
			if lines[i].Warning != "" {
				note = lines[i].Warning + "; " + note
			}
			lines[i].Warning = note
		}
	}
	lines = append(lines, budget.VarianceTotals(lines)...)
	planName := ""
	if plan != nil {
		planName = plan.name
	}
	if save != "" {
		if err := db.SaveVariances(ctx, save, period, planName, lines, e.Now()); err != nil {
			return res, fmt.Errorf("variance: store: %w", err)
		}
	}
	names, err := db.AccountNames(ctx)
	if err != nil {
		return res, err
	}
	res.Plan, res.Lines, res.Names = planName, lines, names
	return res, nil
}

// inScope keeps the behaviours of the accounts analysis.accounts covers.
func inScope(e *Env, bs []costdrift.Behaviour) ([]costdrift.Behaviour, error) {
	scope, err := costdrift.ParseAccountScope(e.Config.Analysis.Accounts)
	if err != nil {
		return nil, err
	}
	out := bs[:0]
	for _, b := range bs {
		if scope.Contains(b.Object.Account) {
			out = append(out, b)
		}
	}
	return out, nil
}

// periodCosts is each object's actual cost in period, in currency units,
// at the configured grain, and whether the ledger has any posting then. An
// object whose lines add up to more than the store can total has no actual
// cost but is listed in unknown, rather than given a wrong one.
func periodCosts(ctx context.Context, e *Env, db *sqlite.DB, period string) (costs map[string]float64, unknown map[string]bool, posted bool, err error) {
	totals, err := db.CostTotals(ctx)
	if err != nil {
		return nil, nil, false, fmt.Errorf("variance: read ledger totals: %w", err)
	}
	minor := 1.0
	for range e.Currency.Exponent {
		minor *= 10
	}
	costs, unknown = map[string]float64{}, map[string]bool{}
	for _, c := range totals {
		if c.Period != period {
			continue
		}
		posted = true
		o := costdrift.CostObject{Account: c.Account}
		if costdrift.Grain(e.Config.Analysis.Grain) == costdrift.GrainAccountCostCenter {
			o.CostCenter = c.CostCenter
		}
		if c.Overflow {
			unknown[o.String()] = true
			continue
		}
		costs[o.String()] += float64(c.AmountMinor) / minor
	}
	return costs, unknown, posted, nil
}

// activityIndex holds driver values by period, driver and cost centre ("" for
// company-wide).
type activityIndex struct {
	values map[[3]string]float64
	// perCenter sums a driver's cost-centre values per period, for a
	// company-wide question about a driver kept only per cost centre.
	perCenter map[[2]string]float64
	// own marks the drivers a cost centre has a series of its own for.
	own map[[2]string]bool
}

func newActivityIndex() *activityIndex {
	return &activityIndex{values: map[[3]string]float64{}, perCenter: map[[2]string]float64{}, own: map[[2]string]bool{}}
}

func (x *activityIndex) add(v costdrift.ActivityValue) {
	x.values[[3]string{v.Period, v.Driver, v.CostCenter}] += v.Value
	if v.CostCenter != "" {
		x.perCenter[[2]string{v.Period, v.Driver}] += v.Value
		x.own[[2]string{v.Driver, v.CostCenter}] = true
	}
}

// get is the value of the series a formula uses: the cost centre's own
// when own, else the company-wide one, which for a company-wide question
// about a driver kept only per cost centre is their sum.
func (x *activityIndex) get(period, driver, costCenter string, own bool) (float64, bool) {
	if own {
		v, ok := x.values[[3]string{period, driver, costCenter}]
		return v, ok
	}
	if v, ok := x.values[[3]string{period, driver, ""}]; ok {
		return v, true
	}
	if costCenter == "" {
		v, ok := x.perCenter[[2]string{period, driver}]
		return v, ok
	}
	return 0, false
}

// activityLookup finds a driver's value as the analysis saw it: a cost
// centre with a series of its own in the store was fitted on that series,
// so only the same cost centre's figure stands for it (a company-wide plan
// figure is another quantity); other objects take the company-wide series.
// Each source is asked in turn: the plan, then the actual activity.
func activityLookup(actual *activityIndex, sources ...*activityIndex) budget.Lookup {
	return func(period, driver, costCenter string) (float64, bool) {
		own := costCenter != "" && actual.own[[2]string{driver, costCenter}]
		for _, x := range sources {
			if v, ok := x.get(period, driver, costCenter, own); ok {
				return v, true
			}
		}
		return 0, false
	}
}

// storedActivity indexes the store's actual activity and names its drivers.
func storedActivity(ctx context.Context, db *sqlite.DB) (*activityIndex, map[string]bool, error) {
	values, err := db.Activity(ctx)
	if err != nil {
		return nil, nil, fmt.Errorf("read activity: %w", err)
	}
	x := newActivityIndex()
	known := map[string]bool{}
	for _, v := range values {
		x.add(v)
		known[v.Driver] = true
	}
	return x, known, nil
}

// planFile is a plan read and checked.
type planFile struct {
	name   string
	values []costdrift.ActivityValue
	*activityIndex
}

func (p *planFile) periods() []string {
	seen := map[string]bool{}
	var out []string
	for _, v := range p.values {
		if !seen[v.Period] {
			seen[v.Period] = true
			out = append(out, v.Period)
		}
	}
	sort.Strings(out)
	return out
}

// planWriter collects a plan's values; a row the reader rejects is an
// error naming the row.
type planWriter struct {
	values  []costdrift.ActivityValue
	rejects []costdrift.Reject
}

func (w *planWriter) LedgerLine(costdrift.LedgerLine) error {
	return errors.New("a plan holds no ledger lines")
}
func (w *planWriter) Account(costdrift.Account) error { return errors.New("a plan holds no accounts") }
func (w *planWriter) Activity(v costdrift.ActivityValue) error {
	w.values = append(w.values, v)
	return nil
}
func (w *planWriter) Reject(r costdrift.Reject) error {
	w.rejects = append(w.rejects, r)
	return nil
}

// readPlan reads planned activity, in the activity file formats (long or
// wide), and checks every row: a bad period or value, a driver the store
// has no activity for, or the same period, driver and cost centre twice is
// an error naming the row.
func readPlan(ctx context.Context, e *Env, path string, known map[string]bool) (planFile, error) {
	display := filepath.Base(path)
	name := strings.TrimSuffix(display, filepath.Ext(display))
	var w planWriter
	var err error
	switch strings.ToLower(filepath.Ext(path)) {
	case ".xlsx", ".xlsm":
		_, err = xlsxsource.ReadActivity(ctx, path, display, xlsxsource.Options{Source: "plan", Currency: e.Currency, Period: e.Calendar.Period, Fixed: true}, &w)
	default:
		_, err = csvsource.ReadActivity(ctx, path, display, csvsource.Options{Source: "plan", Currency: e.Currency, Period: e.Calendar.Period, Fixed: true}, &w)
	}
	if err != nil {
		return planFile{}, fmt.Errorf("plan %s", planError(err, path))
	}
	if len(w.rejects) > 0 {
		r := w.rejects[0]
		more := ""
		if len(w.rejects) > 1 {
			more = fmt.Sprintf(" (and %d more bad rows)", len(w.rejects)-1)
		}
		return planFile{}, fmt.Errorf("plan %s: %s%s", r.Location, r.Reason, more)
	}
	if len(w.values) == 0 {
		return planFile{}, fmt.Errorf("plan %s holds no planned activity", display)
	}
	names := make([]string, 0, len(known))
	for d := range known {
		names = append(names, d)
	}
	sort.Strings(names)
	first := map[[3]string]string{}
	x := newActivityIndex()
	for _, v := range w.values {
		if _, err := e.Calendar.Parse(v.Period); err != nil {
			return planFile{}, fmt.Errorf("plan %s: period %q: %v", v.Location, v.Period, err)
		}
		if !known[v.Driver] {
			return planFile{}, fmt.Errorf("plan %s: driver %q has no activity in the store (drivers: %s)", v.Location, v.Driver, strings.Join(names, ", "))
		}
		k := [3]string{v.Period, v.Driver, v.CostCenter}
		if at, dup := first[k]; dup {
			return planFile{}, fmt.Errorf("plan %s: %s %s%s is planned twice (first at %s)", v.Location, v.Driver, v.Period, ccText(v.CostCenter), at)
		}
		first[k] = v.Location
		x.add(v)
	}
	return planFile{name: name, values: w.values, activityIndex: x}, nil
}

func ccText(cc string) string {
	if cc == "" {
		return ""
	}
	return " for " + cc
}

// planError says a plan file could not be read, with the path when the
// reader's message does not name it.
func planError(err error, path string) string {
	msg := err.Error()
	if strings.Contains(msg, filepath.Base(path)) {
		return msg
	}
	return path + ": " + msg
}
