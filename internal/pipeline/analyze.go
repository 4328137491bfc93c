package pipeline

import (
	"context"
	"encoding/json"
	"fmt"
	"slices"

	"github.com/costdrift/costdrift/internal/alerts"
	"github.com/costdrift/costdrift/internal/analyze"
	"github.com/costdrift/costdrift/internal/config"
	"github.com/costdrift/costdrift/internal/costdrift"
	"github.com/costdrift/costdrift/internal/series"
	"github.com/costdrift/costdrift/internal/sqlite"
)

// bootstrapSeed fixes the resampling behind break p-values, so that the same
// data give the same verdict on every run and machine.
const bootstrapSeed uint64 = 0x636f737464726966

// AnalysisResult is what one analysis did.
type AnalysisResult struct {
	Run *costdrift.AnalysisRun
	// Classes counts the objects analysed by the class they were given.
	Classes map[costdrift.Class]int
	// PeriodsWithPostings counts the window's periods in which the ledger
	// has postings.
	PeriodsWithPostings int
	// Skipped lists the objects that could not be analysed; each keeps its
	// previous behaviour and is tried again at the next analysis.
	Skipped []SkippedObject
	// HeldBack lists the source periods with too many rows rejected: while
	// there are any, no object is analysed (Run is then not stored) and only
	// the rules on sources and data quality are evaluated.
	HeldBack []alerts.PeriodQuality

	// What the alert rules evaluate after the analysis: every object in
	// scope (not only those refitted), and the activity read.
	panel    costdrift.Panel
	activity []costdrift.ActivityValue
}

// SkippedObject is an object that could not be analysed: its costs cannot
// be added up, or a defect panicked in its analysis (Stack is then set).
type SkippedObject struct {
	Object string
	Err    error
	Stack  string
}

// Analyze builds the panel from the store, analyses every object in scope
// whose data or settings changed since its last analysis (every one with
// all), and stores the run, its fits and the behaviours in one
// transaction. The alerts that follow are raised by Raise.
func Analyze(ctx context.Context, e *Env, db *sqlite.DB, all bool) (*AnalysisResult, error) {
	started := e.Now()
	cfg := e.Config.Analysis
	scope, err := costdrift.ParseAccountScope(cfg.Accounts)
	if err != nil {
		return nil, err // validated with the config
	}
	costs, err := db.CostTotals(ctx)
	if err != nil {
		return nil, fmt.Errorf("analyze: read ledger totals: %w", err)
	}
	activity, err := db.Activity(ctx)
	if err != nil {
		return nil, fmt.Errorf("analyze: read activity: %w", err)
	}
	if len(activity) == 0 {
		// Without drivers every cost would be called unexplained.
		return nil, fmt.Errorf("analyze: the store holds no activity data, so no cost can be explained by a driver; add an activity source (sources.activity in %s) and run costdrift sync", e.Config.File)
	}
	minor := int64(1)
	for range e.Currency.Exponent {
		minor *= 10
	}
	panel, err := series.Build(costs, activity, series.Settings{
		Grain: costdrift.Grain(cfg.Grain), Scope: scope, Window: cfg.Window, MaxLag: slices.Max(cfg.Lags),
		Minor: minor, Calendar: e.Calendar, Now: e.Now(),
	})
	if err != nil {
		return nil, fmt.Errorf("analyze: %w; run `costdrift sync` once the ledger has a closed period", err)
	}
	settings, _ := json.Marshal(costdrift.AnalysisSettings{Grain: costdrift.Grain(cfg.Grain), Accounts: cfg.Accounts, Window: cfg.Window,
		MinPeriods: cfg.MinPeriods, Lags: cfg.Lags, Alpha: cfg.Alpha, Currency: e.Currency.Code,
		BreakAlpha: cfg.BreakAlpha, BootstrapReplicates: cfg.BootstrapReplicates, Seed: bootstrapSeed})
	inputs := analyze.InputHashes(&panel, string(settings))
	total := len(panel.Objects)
	whole := panel // every object in scope, for the rules on data gaps
	q, err := quality(ctx, e, db)
	if err != nil {
		return nil, fmt.Errorf("analyze: %w", err)
	}
	// A rejected row may belong to any object, so a source period with too
	// many rejects holds every object back: costs or drivers counted from
	// part of a period would read as a change in behaviour.
	if held := heldBack(q, cfg.MaxRejectedShare, panel.Periods[0]); len(held) > 0 {
		return &AnalysisResult{Classes: map[costdrift.Class]int{}, PeriodsWithPostings: panel.PeriodsWithPostings, HeldBack: held,
			panel: whole, activity: activity,
			Run: &costdrift.AnalysisRun{Skipped: total, StartedAt: started, FinishedAt: e.Now(), Grain: costdrift.Grain(cfg.Grain),
				WindowFrom: panel.Periods[0], WindowTo: panel.Periods[len(panel.Periods)-1], Settings: string(settings)}}, nil
	}
	if !all {
		previous, err := db.ObjectInputs(ctx)
		if err != nil {
			return nil, fmt.Errorf("analyze: %w", err)
		}
		changed := panel.Objects[:0:0]
		for _, o := range panel.Objects {
			if previous[o.Object.String()] != inputs[o.Object.String()] {
				changed = append(changed, o)
			}
		}
		panel.Objects = changed
	}
	// Each object's behaviour so far, so that a cost near a boundary keeps
	// its class and driver unless the new evidence is clearly better.
	before, err := db.CurrentBehaviour(ctx)
	if err != nil {
		return nil, fmt.Errorf("analyze: %w", err)
	}
	prior := make(map[string]costdrift.Behaviour, len(before))
	for _, b := range before {
		prior[b.Object.String()] = b
	}
	results, err := analyze.Panel(ctx, &panel, analyze.Settings{MinPeriods: cfg.MinPeriods, Lags: cfg.Lags, Alpha: cfg.Alpha,
		BreakAlpha: cfg.BreakAlpha, Replicates: cfg.BootstrapReplicates, Seed: bootstrapSeed, Prior: prior})
	if err != nil {
		return nil, fmt.Errorf("analyze: %w", err)
	}

	res := &AnalysisResult{Classes: map[costdrift.Class]int{}, PeriodsWithPostings: panel.PeriodsWithPostings,
		panel: whole, activity: activity}
	var fits []costdrift.Fit
	behaviours := make([]costdrift.Behaviour, 0, len(results))
	failed := map[string]bool{}
	for _, r := range results {
		if r.Err != nil {
			failed[r.Behaviour.Object.String()] = true
			res.Skipped = append(res.Skipped, SkippedObject{Object: r.Behaviour.Object.String(), Err: r.Err, Stack: r.Stack})
			continue
		}
		fits = append(fits, r.Fits...)
		behaviours = append(behaviours, r.Behaviour)
		res.Classes[r.Behaviour.Class]++
	}
	run := &costdrift.AnalysisRun{Inputs: map[string]string{}, Skipped: total - len(panel.Objects),
		StartedAt: started, FinishedAt: e.Now(), Grain: costdrift.Grain(cfg.Grain), Objects: len(behaviours),
		WindowFrom: panel.Periods[0], WindowTo: panel.Periods[len(panel.Periods)-1], Settings: string(settings),
	}
	for _, o := range panel.Objects {
		if !failed[o.Object.String()] {
			run.Inputs[o.Object.String()] = inputs[o.Object.String()]
		}
	}
	if err := db.SaveAnalysis(ctx, run, fits, behaviours); err != nil {
		return nil, fmt.Errorf("analyze: %w", err)
	}
	res.Run = run
	return res, nil
}

// Raise evaluates the rules that follow an analysis over every object in
// scope (not only the refitted ones, so that the alerts of unchanged
// objects hold) and lets the store open, update and resolve alerts:
// behaviour changes, spending outliers, activity out of range, data gaps
// and stale ledger sources.
func Raise(ctx context.Context, e *Env, db *sqlite.DB, res *AnalysisResult) (sqlite.AlertChanges, error) {
	if len(res.HeldBack) > 0 {
		changes, err := raiseHeldBack(ctx, e, db, res.Run.WindowTo)
		if err != nil {
			return changes, fmt.Errorf("analyze: alerts: %w", err)
		}
		return changes, nil
	}
	changes, err := raiseAnalysisAlerts(ctx, e, db, &res.panel, res.activity, res.Run.WindowTo)
	if err != nil {
		return changes, fmt.Errorf("analyze: alerts: %w", err)
	}
	return changes, nil
}

func raiseAnalysisAlerts(ctx context.Context, e *Env, db *sqlite.DB, panel *costdrift.Panel,
	activity []costdrift.ActivityValue, period string) (sqlite.AlertChanges, error) {
	current, err := db.CurrentBehaviour(ctx)
	if err != nil {
		return sqlite.AlertChanges{}, err
	}
	previous, err := db.PreviousBehaviour(ctx)
	if err != nil {
		return sqlite.AlertChanges{}, err
	}
	names, err := db.AccountNames(ctx)
	if err != nil {
		return sqlite.AlertChanges{}, err
	}
	raised := alerts.Behaviour(current, previous, names)
	raised = append(raised, alerts.Spending(current, names)...)
	raised = append(raised, alerts.OutOfRange(current, newestActivity(current, activity, period), names)...)
	raised = append(raised, alerts.DataGap(panel, names)...)
	states, err := sourceStates(ctx, e, db)
	if err != nil {
		return sqlite.AlertChanges{}, err
	}
	raised = append(raised, alerts.StaleSource(states)...)
	q, err := quality(ctx, e, db)
	if err != nil {
		return sqlite.AlertChanges{}, err
	}
	raised = append(raised, alerts.DataQuality(q, e.Config.Analysis.MaxRejectedShare)...)
	return db.ApplyAlerts(ctx, raised, alerts.AnalysisKinds, period)
}

// raiseHeldBack evaluates, for an analysis held back, only the rules that
// do not read behaviours or the panel: the alerts on objects stay as the
// last analysis left them, neither raised from partial data nor resolved.
func raiseHeldBack(ctx context.Context, e *Env, db *sqlite.DB, period string) (sqlite.AlertChanges, error) {
	states, err := sourceStates(ctx, e, db)
	if err != nil {
		return sqlite.AlertChanges{}, err
	}
	q, err := quality(ctx, e, db)
	if err != nil {
		return sqlite.AlertChanges{}, err
	}
	raised := append(alerts.StaleSource(states), alerts.DataQuality(q, e.Config.Analysis.MaxRejectedShare)...)
	return db.ApplyAlerts(ctx, raised, []costdrift.AlertKind{costdrift.AlertStaleSource, costdrift.AlertDataQuality}, period)
}

// newestActivity finds, for each behaviour with a driver, the newest value
// of that driver after the analysed window (the cost centre's own series,
// else the company-wide one): activity the formula has not seen.
func newestActivity(current []costdrift.Behaviour, activity []costdrift.ActivityValue, windowTo string) map[string]alerts.NewestActivity {
	type key struct{ driver, cc string }
	newest := map[key]alerts.NewestActivity{}
	for _, v := range activity {
		k := key{v.Driver, v.CostCenter}
		if v.Period > windowTo && v.Period > newest[k].Period {
			newest[k] = alerts.NewestActivity{Period: v.Period, Value: v.Value}
		}
	}
	out := map[string]alerts.NewestActivity{}
	for _, b := range current {
		if b.Driver == "" {
			continue
		}
		if v, ok := newest[key{b.Driver, b.Object.CostCenter}]; ok && b.Object.CostCenter != "" {
			out[b.Object.String()] = v
		} else if v, ok := newest[key{b.Driver, ""}]; ok {
			out[b.Object.String()] = v
		}
	}
	return out
}

// sourceStates reads, per configured source, its failures in a row and how
// many closed periods its newest data lag the newest closed period any
// source has data for.
func sourceStates(ctx context.Context, e *Env, db *sqlite.DB) ([]alerts.SourceState, error) {
	runs, err := db.SyncRuns(ctx, 500)
	if err != nil {
		return nil, err
	}
	newest, err := db.NewestPeriods(ctx)
	if err != nil {
		return nil, err
	}
	// A source is behind when the others have newer closed periods: an
	// export that stopped on purpose is analysed up to where it stops, so
	// the calendar alone does not make a source stale.
	closed := ""
	for _, p := range newest {
		if p > closed && e.Calendar.Closed(p, e.Now()) {
			closed = p
		}
	}
	var states []alerts.SourceState
	for _, list := range []struct {
		role costdrift.Role
		srcs []config.Source
	}{{costdrift.RoleLedger, e.Config.Sources.Ledger}, {costdrift.RoleActivity, e.Config.Sources.Activity}, {costdrift.RoleAccounts, e.Config.Sources.Accounts}} {
		for _, src := range list.srcs {
			s := alerts.SourceState{Name: src.Name, Role: list.role}
			for _, r := range runs { // newest first
				if r.Source != src.Name {
					continue
				}
				if r.Status != "failed" {
					break
				}
				if s.Failures == 0 {
					s.LastError = r.Error
				}
				s.Failures++
			}
			if p := newest[src.Name]; p != "" {
				s.NewestPeriod = p
				for q := p; q < closed && s.PeriodsBehind < 400; q = e.Calendar.Shift(q, 1) {
					s.PeriodsBehind++
				}
			}
			states = append(states, s)
		}
	}
	return states, nil
}
