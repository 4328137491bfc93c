package pipeline

import (
	"context"
	"errors"
	"fmt"
	"math"
	"slices"
	"sort"
	"strings"

	"github.com/costdrift/costdrift/internal/analyze"
	"github.com/costdrift/costdrift/internal/chart"
	"github.com/costdrift/costdrift/internal/costdrift"
	"github.com/costdrift/costdrift/internal/report"
	"github.com/costdrift/costdrift/internal/series"
	"github.com/costdrift/costdrift/internal/sqlite"
)

// Charts are the charts of one cost object: its cost over the periods
// (every object has one) and its cost against the chosen driver (nil for
// an object without a driver).
type Charts struct {
	Timeline *chart.Timeline
	Scatter  *chart.Scatter
}

// Explain gathers the evidence behind one object's behaviour from what the
// latest analysis stored, and the data it was fitted on as the store holds
// them now; with withChart, its charts too: the cost over time for every
// object, and the cost against the chosen driver for one that has a driver.
func Explain(ctx context.Context, e *Env, db *sqlite.DB, object string, withChart bool) (report.Explanation, *Charts, error) {
	oa, err := db.ObjectAnalysis(ctx, object)
	switch {
	case errors.Is(err, sqlite.ErrNoAnalysis):
		return report.Explanation{}, nil, errors.New("no analysis stored yet: run `costdrift analyze` first")
	case errors.Is(err, sqlite.ErrNotAnalysed):
		return report.Explanation{}, nil, notAnalysed(ctx, e, db, object)
	case err != nil:
		return report.Explanation{}, nil, fmt.Errorf("explain %s: %w", object, err)
	}
	b := oa.Behaviour
	names, err := db.AccountNames(ctx)
	if err != nil {
		return report.Explanation{}, nil, fmt.Errorf("explain %s: %w", object, err)
	}
	decided, err := Decided(ctx, e, db, []costdrift.Behaviour{b})
	if err != nil {
		return report.Explanation{}, nil, fmt.Errorf("explain %s: %w", object, err)
	}
	excluded := decided[b.Object.String()].Excluded
	prices, index, err := objectPrices(ctx, e, db, oa)
	if err != nil {
		return report.Explanation{}, nil, fmt.Errorf("explain %s: %w", object, err)
	}
	note, err := refitLines(ctx, e, db, &oa, excluded, index)
	if err != nil {
		return report.Explanation{}, nil, fmt.Errorf("explain %s: %w", object, err)
	}
	ex := report.Explain(report.ExplainInput{
		Behaviour: b, AccountName: names[b.Object.Account], Run: oa.Run, Alpha: oa.Settings.Alpha, Fits: oa.Fits,
		Decided: decided[b.Object.String()], Prices: prices,
		ActivityPeriod: func(p string, lag int) string {
			if _, err := e.Calendar.Parse(p); err != nil {
				return p
			}
			return e.Calendar.Shift(p, -lag)
		},
	})
	if note != "" {
		ex.Notes = append(ex.Notes, note)
	}
	if err := explainAccruals(ctx, e, db, oa, &ex); err != nil {
		return report.Explanation{}, nil, fmt.Errorf("explain %s: %w", object, err)
	}
	maxLag := widestLag(oa.Settings, b.Lag)
	var charts *Charts
	if withChart {
		tl, err := timeline(ctx, e, db, db.CostPerPeriod, oa, names[b.Object.Account], ex.Formula, maxLag)
		if err != nil {
			return ex, nil, fmt.Errorf("explain %s: chart: %w", object, err)
		}
		charts = &Charts{Timeline: &tl}
	}
	if b.Driver == "" {
		return ex, charts, nil
	}
	pts, err := analysedPoints(ctx, e, db, db.CostPerPeriod, oa, maxLag)
	if err != nil {
		return ex, nil, fmt.Errorf("explain %s: %w", object, err)
	}
	if note := pointsNote(oa, fittedPoints(e, b, pts), excluded); note != "" {
		ex.Notes = append(ex.Notes, note)
	}
	if !withChart {
		return ex, nil, nil
	}
	sc, err := scatter(ctx, e, db, oa, pts, names[b.Object.Account], ex.Formula, maxLag)
	if err != nil {
		return ex, nil, fmt.Errorf("explain %s: chart: %w", object, err)
	}
	charts.Scatter = &sc
	return ex, charts, nil
}

// refitLines adds to the stored fits the straight lines the store does not
// keep (analyze.StoredLines): every driver-lag candidate is fitted again on
// the object's data as the store holds them now, over the periods the
// stored fits were made on (the run's window, or the periods from a break
// on). The stored fits stay as they are; a candidate fitted again is added
// only when the lines the store kept come out the same, so that the table
// is the analysis's. Otherwise the note says why the table is short.
func refitLines(ctx context.Context, e *Env, db *sqlite.DB, oa *sqlite.ObjectAnalysis, excluded []costdrift.Exclusion, index *series.PriceIndex) (string, error) {
	b := oa.Behaviour
	stored := map[[2]string]*costdrift.Fit{}
	for i, f := range oa.Fits {
		if f.Model == costdrift.ModelLinear {
			stored[[2]string{f.Driver, fmt.Sprint(f.Lag)}] = &oa.Fits[i]
		}
	}
	if b.Diagnostics == nil || len(stored) >= b.Diagnostics.Candidates || len(oa.Settings.Lags) == 0 {
		return "", nil
	}
	run := oa.Run
	for _, p := range []string{run.WindowFrom, run.WindowTo} {
		if _, err := e.Calendar.Parse(p); err != nil {
			return "", fmt.Errorf("analysis run %d window: %w", run.ID, err)
		}
	}
	scope, err := costdrift.ParseAccountScope(oa.Settings.Accounts)
	if err != nil {
		scope = costdrift.AccountScope{}
	}
	minor := int64(1)
	for range e.Currency.Exponent {
		minor *= 10
	}
	ss := series.Settings{Grain: run.Grain, Scope: scope, Window: oa.Settings.Window, MaxLag: slices.Max(oa.Settings.Lags),
		Minor: minor, Calendar: e.Calendar, Now: e.Now()}
	accountGrain := run.Grain == costdrift.GrainAccount
	totals, err := db.ObjectCostTotals(ctx, b.Object, accountGrain, run.WindowFrom, run.WindowTo)
	if err != nil {
		return "", err
	}
	ledger, err := db.LedgerPeriods(ctx)
	if err != nil {
		return "", err
	}
	activity, err := db.Activity(ctx)
	if err != nil {
		return "", err
	}
	as := analyze.Settings{MinPeriods: oa.Settings.MinPeriods, Lags: oa.Settings.Lags, Alpha: oa.Settings.Alpha}
	// A behaviour refitted from a break on was fitted on the periods since.
	froms := []string{run.WindowFrom}
	if b.Break != nil && !b.Break.Provisional && b.Break.Period > run.WindowFrom && b.Break.Period <= run.WindowTo {
		froms = []string{b.Break.Period, run.WindowFrom}
	}
	for _, from := range froms {
		w := series.WindowOf(from, run.WindowTo, ledger, ss)
		obj, ok := w.Object(totals)
		if !ok || obj.Unusable != "" {
			continue
		}
		excludePeriods(&obj, w.Periods, excluded)
		if !restateAsAnalysed(&obj, w.Periods, index, b.PriceBase) {
			continue
		}
		drivers := series.Drivers(activity, w.Periods, ss)
		if oa.Settings.Deflator != "" {
			drivers = withoutSeries(drivers, oa.Settings.Deflator)
		}
		p := w.Panel([]costdrift.ObjectSeries{obj}, drivers)
		lines := analyze.Lines(&p, &p.Objects[0], as)
		if len(lines) != b.Diagnostics.Candidates || !sameLines(lines, stored) {
			continue
		}
		for _, f := range lines {
			if stored[[2]string{f.Driver, fmt.Sprint(f.Lag)}] == nil {
				oa.Fits = append(oa.Fits, f)
			}
		}
		return "", nil
	}
	return fmt.Sprintf("the store keeps the straight lines of the best %d of the %d driver-lag candidates; the others could not be fitted again as the analysis fitted them, since the ledger or activity of %s changed since analysis run %d: run `costdrift analyze` to refresh them",
		len(stored), b.Diagnostics.Candidates, b.Object, run.ID), nil
}

// sameLines reports whether every stored line was fitted again on the same
// number of periods with the same coefficients (to rounding).
func sameLines(lines []costdrift.Fit, stored map[[2]string]*costdrift.Fit) bool {
	found := 0
	for _, f := range lines {
		s := stored[[2]string{f.Driver, fmt.Sprint(f.Lag)}]
		if s == nil {
			continue
		}
		found++
		if s.N != f.N || !near(s.Slope, f.Slope) || !near(s.Intercept, f.Intercept) {
			return false
		}
	}
	return found == len(stored)
}

func near(a, b float64) bool {
	return a == b || math.Abs(a-b) <= 1e-9*math.Max(math.Abs(a), math.Abs(b))
}

// widestLag is the largest lag the run tried, at least lag: the driver's
// values are read from that many periods before the window.
func widestLag(s costdrift.AnalysisSettings, lag int) int {
	if len(s.Lags) > 0 {
		return max(lag, slices.Max(s.Lags))
	}
	return lag
}

// notAnalysed says why an object has no behaviour: it has ledger lines but
// was not analysed (yet, or because it is out of scope), or it is unknown.
func notAnalysed(ctx context.Context, e *Env, db *sqlite.DB, object string) error {
	account, costCenter, _ := strings.Cut(object, "/")
	accountGrain := e.Config.Analysis.Grain == string(costdrift.GrainAccount)
	has, err := db.HasLedgerLines(ctx, costdrift.CostObject{Account: account, CostCenter: costCenter}, accountGrain)
	if err != nil {
		return fmt.Errorf("explain %s: %w", object, err)
	}
	if has && (!accountGrain || costCenter == "") {
		if scope, err := costdrift.ParseAccountScope(e.Config.Analysis.Accounts); err == nil && !scope.Contains(account) {
			return fmt.Errorf("%s has ledger lines but account %s is outside analysis.accounts, so `costdrift analyze` leaves it out", object, account)
		}
		return fmt.Errorf("%s has ledger lines but no analysis yet: run `costdrift analyze` first", object)
	}
	known, err := db.AnalysedObjects(ctx)
	if err != nil {
		return fmt.Errorf("explain %s: %w", object, err)
	}
	msg := fmt.Sprintf("unknown cost object %q", object)
	if near := nearestObjects(object, known, 3); len(near) > 0 {
		msg += "; did you mean " + strings.Join(near, ", ") + "?"
	}
	return errors.New(msg + " (`costdrift report` lists every object)")
}

// nearestObjects returns up to limit known names close to name: those that
// start with it (case aside), then those within an edit distance of a third
// of its length (at least 2), closest first.
func nearestObjects(name string, known []string, limit int) []string {
	type scored struct {
		name  string
		score int
	}
	lower := strings.ToLower(name)
	var found []scored
	for _, k := range known {
		lk := strings.ToLower(k)
		switch d := editDistance(lower, lk); {
		case strings.HasPrefix(lk, lower) || strings.HasPrefix(lower, lk+"/"):
			found = append(found, scored{k, -1})
		case d <= max(2, len([]rune(name))/3):
			found = append(found, scored{k, d})
		}
	}
	sort.SliceStable(found, func(i, j int) bool {
		if found[i].score != found[j].score {
			return found[i].score < found[j].score
		}
		return found[i].name < found[j].name
	})
	out := make([]string, 0, limit)
	for _, f := range found {
		if len(out) == limit {
			break
		}
		out = append(out, f.name)
	}
	return out
}

// editDistance is the Levenshtein distance between a and b, in runes.
func editDistance(a, b string) int {
	ra, rb := []rune(a), []rune(b)
	prev := make([]int, len(rb)+1)
	cur := make([]int, len(rb)+1)
	for j := range prev {
		prev[j] = j
	}
	for i := 1; i <= len(ra); i++ {
		cur[0] = i
		for j := 1; j <= len(rb); j++ {
			cost := 1
			if ra[i-1] == rb[j-1] {
				cost = 0
			}
			cur[j] = min(prev[j]+1, cur[j-1]+1, prev[j-1]+cost)
		}
		prev, cur = cur, prev
	}
	return prev[len(rb)]
}

// analysedPoints reads the periods the chosen formula was fitted on: for
// every period of the run's window in which the ledger has postings, the
// object's cost (zero when it posted nothing; restated at the formula's
// prices when the analysis restated it) beside the chosen driver's
// value lag periods before, read as the analysis reads it (the cost centre's
// own series, else the company-wide one). Periods without a driver value
// are left out, as the analysis leaves them out.
func analysedPoints(ctx context.Context, e *Env, db *sqlite.DB, costsOf costReader, oa sqlite.ObjectAnalysis, maxLag int) ([]chart.Point, error) {
	b, run := oa.Behaviour, oa.Run
	for _, p := range []string{run.WindowFrom, run.WindowTo} {
		if _, err := e.Calendar.Parse(p); err != nil {
			return nil, fmt.Errorf("analysis run %d window: %w", run.ID, err)
		}
	}
	accountGrain := run.Grain == costdrift.GrainAccount
	costs, ledger, err := costsOf(ctx, b.Object, accountGrain, run.WindowFrom, run.WindowTo)
	if err != nil {
		return nil, err
	}
	x, err := lagged(ctx, e, db, b.Object, accountGrain, b.Driver, b.Lag, run, maxLag)
	if err != nil {
		return nil, err
	}
	// The costs the formula was fitted on: restated, when they were.
	at, err := costsAtPrices(ctx, db, oa)
	if err != nil {
		return nil, err
	}
	outlier := map[string]bool{}
	for _, o := range b.Outliers {
		outlier[o.Period] = true
	}
	var pts []chart.Point
	for _, p := range e.Calendar.Between(run.WindowFrom, run.WindowTo) {
		v, ok := x[p]
		if !ledger[p] || !ok {
			continue
		}
		pts = append(pts, chart.Point{Period: p, Activity: v, Cost: at(p, e.Currency.Units(costs[p])), Outlier: outlier[p]})
	}
	return pts, nil
}

// costReader reads one object's cost per period and the periods in which
// the ledger has postings, as sqlite.DB.CostPerPeriod does.
type costReader func(ctx context.Context, o costdrift.CostObject, allCostCenters bool, first, last string) (map[string]int64, map[string]bool, error)

// lagged returns a driver's values keyed by the cost period they explain:
// the value of period p − lag under key p.
func lagged(ctx context.Context, e *Env, db *sqlite.DB, o costdrift.CostObject, accountGrain bool, driver string, lag int,
	run costdrift.AnalysisRun, maxLag int) (map[string]float64, error) {
	values, _, err := db.DriverValues(ctx, driver, o.CostCenter, accountGrain, e.Calendar.Shift(run.WindowFrom, -maxLag), run.WindowTo)
	if err != nil {
		return nil, err
	}
	out := make(map[string]float64, len(values))
	for _, p := range e.Calendar.Between(run.WindowFrom, run.WindowTo) {
		if v, ok := values[e.Calendar.Shift(p, -lag)]; ok {
			out[p] = v
		}
	}
	return out, nil
}

// fittedPoints are the points the behaviour was fitted on: after a change,
// those from its first period on.
func fittedPoints(e *Env, b costdrift.Behaviour, pts []chart.Point) []chart.Point {
	var out []chart.Point
	for _, p := range markBefore(e, b, pts) {
		if !p.Before {
			out = append(out, p)
		}
	}
	return out
}

// pointsNote compares the periods read now with what the analysis stored:
// a different count, or high-low ends with other values, mean the ledger or
// activity changed since the analysis.
func pointsNote(oa sqlite.ObjectAnalysis, pts []chart.Point, excluded []costdrift.Exclusion) string {
	b := oa.Behaviour
	// The excluded periods are drawn but were not fitted.
	pts = slices.DeleteFunc(slices.Clone(pts), func(p chart.Point) bool {
		return slices.ContainsFunc(excluded, func(x costdrift.Exclusion) bool { return x.Period == p.Period })
	})
	n := -1
	for _, f := range oa.Fits {
		if f.Model == costdrift.ModelLinear && f.Driver == b.Driver && f.Lag == b.Lag {
			n = f.N
		}
	}
	changed := n >= 0 && len(pts) != n
	if hl := b.HighLow; hl != nil && !changed {
		for _, end := range []struct {
			period         string
			activity, cost float64
		}{{hl.HighPeriod, hl.HighActivity, hl.HighCost}, {hl.LowPeriod, hl.LowActivity, hl.LowCost}} {
			i := slices.IndexFunc(pts, func(p chart.Point) bool { return p.Period == end.period })
			if i < 0 || math.Abs(pts[i].Activity-end.activity) > 1e-9*math.Max(1, math.Abs(end.activity)) ||
				math.Abs(pts[i].Cost-end.cost) > 0.005 {
				changed = true
			}
		}
	}
	if !changed {
		return ""
	}
	what := "the high or low activity period now has another cost or activity"
	if n >= 0 && len(pts) != n {
		what = fmt.Sprintf("%d periods now, %d fitted then", len(pts), n)
	}
	return fmt.Sprintf("the ledger or activity of %s changed since analysis run %d (%s): the numbers above are "+
		"the analysis's, a chart shows the data as stored now; run `costdrift analyze` to refresh them", b.Object, oa.Run.ID, what)
}

// scatter builds the chart of cost against the chosen driver: the periods,
// the formula across the relevant range (or the step levels), the high-low
// points, the outliers and the periods the accountant left out of the fit.
func scatter(ctx context.Context, e *Env, db *sqlite.DB, oa sqlite.ObjectAnalysis, pts []chart.Point, accountName, formula string, maxLag int) (chart.Scatter, error) {
	b := oa.Behaviour
	if len(pts) == 0 {
		return chart.Scatter{}, fmt.Errorf("no period of the analysis window has both cost and %s", b.Driver)
	}
	title := b.Object.String()
	if accountName != "" {
		title += " " + accountName
	}
	s := chart.Scatter{
		Title:  title + ": " + formula,
		XLabel: report.DriverLabel(b.Driver, b.Lag),
		YLabel: "cost per period (" + e.Currency.Code + ")",
		Points: markBefore(e, b, pts), RangeMin: b.RangeMin, RangeMax: b.RangeMax,
	}
	excluded, err := db.Exclusions(ctx)
	if err != nil {
		return s, err
	}
	for _, x := range excluded[b.Object.String()] {
		s.Excluded = append(s.Excluded, x.Period)
	}
	if b.Unit != "" && !strings.Contains(strings.ToLower(s.XLabel), strings.ToLower(b.Unit)) {
		s.XLabel += " (" + b.Unit + ")"
	}
	if math.IsNaN(s.RangeMin) || math.IsNaN(s.RangeMax) {
		s.RangeMin, s.RangeMax = 0, 0 // the chart takes the points' span
	}
	switch {
	case b.Class == costdrift.Step:
		// The stored outliers of a step cost are those of the straight line
		// on its driver, which a step cost does not follow: marked on the
		// levels they would flag points that sit on them.
		for i := range s.Points {
			s.Points[i].Outlier = false
		}
		for _, l := range b.Steps {
			s.Steps = append(s.Steps, chart.StepLevel{From: l.From, To: l.To, Level: l.Level})
		}
	case b.Driver2 != "":
		// Cost against the first driver alone: the formula with the second
		// driver held at its mean over the same periods.
		x2, err := lagged(ctx, e, db, b.Object, oa.Run.Grain == costdrift.GrainAccount, b.Driver2, b.Lag2, oa.Run, maxLag)
		if err != nil {
			return s, err
		}
		sum, n := 0.0, 0
		for _, p := range pts {
			if v, ok := x2[p.Period]; ok {
				sum, n = sum+v, n+1
			}
		}
		if n > 0 {
			mean := sum / float64(n)
			s.Fit = &chart.Line{Fixed: b.FixedPerPeriod + b.VariableRate2*mean, Rate: b.VariableRate,
				Label: fmt.Sprintf("formula at mean %s (%s)", strings.ReplaceAll(b.Driver2, "_", " "), report.Activity(mean))}
		}
	case b.Class == costdrift.Variable:
		s.Fit = &chart.Line{Fixed: 0, Rate: b.VariableRate, Label: "fitted formula (no fixed part)"}
	default:
		s.Fit = &chart.Line{Fixed: b.FixedPerPeriod, Rate: b.VariableRate}
	}
	if hl := b.HighLow; hl != nil {
		h := slices.IndexFunc(pts, func(p chart.Point) bool { return p.Period == hl.HighPeriod })
		l := slices.IndexFunc(pts, func(p chart.Point) bool { return p.Period == hl.LowPeriod })
		if h >= 0 && l >= 0 && h != l && pts[h].Activity >= pts[l].Activity {
			s.HighLow = &[2]int{h, l}
		}
	}
	return s, nil
}
