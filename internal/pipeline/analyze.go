package pipeline

import (
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"slices"
	"strings"
	"sync"

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

	// What the alert rules evaluate after the analysis, over every object
	// in scope (not only those refitted): the data gaps found as the
	// objects were read, and the activity read.
	gaps     []costdrift.Alert
	activity []costdrift.ActivityValue
	// The rules on behaviours, evaluated as each batch was stored, on the
	// objects refitted (refitted, by object name): when they are all the
	// objects with a behaviour, Raise need not read the behaviours again.
	behaviourAlerts, spendingAlerts, rangeAlerts []costdrift.Alert
	refitted                                     map[string]bool
}

// SkippedObject is an object that could not be analysed: its costs cannot
// be added up, or a defect panicked in its analysis (Stack is then set).
type SkippedObject struct {
	Object string
	Err    error
	Stack  string
}

// BatchObjects is how many cost objects an analysis reads, fits and stores
// at a time: what it holds in memory depends on this, not on the number of
// objects in the ledger.
const BatchObjects = 250

// batchObjects is BatchObjects; tests make it small to analyse in many batches.
var batchObjects = BatchObjects

// Analyze reads the ledger from the store object by object, analyses every
// object in scope whose data or settings changed since its last analysis
// (every one with all), and stores the run, the fits and the behaviours in
// one transaction, written a batch of BatchObjects at a time while the next
// batch is fitted. Once ctx ends, nothing is stored and ctx's error is
// returned. The alerts that follow are raised by Raise.
//
// The window is found from the periods the loads recorded, which spares a
// pass over every line of the ledger before the one that reads the costs;
// that pass notes the periods it meets, and in the rare store where the
// recorded periods hold one without lines in the window (every line of it
// restated into another period), the analysis is rolled back and run again
// on the periods read from the lines.
func Analyze(ctx context.Context, e *Env, db *sqlite.DB, all bool) (*AnalysisResult, error) {
	recorded, ok, err := db.RecordedLedgerPeriods(ctx)
	if err != nil {
		return nil, fmt.Errorf("analyze: read ledger periods: %w", err)
	}
	if ok {
		res, err := analyzeOver(ctx, e, db, all, recorded, true)
		if !errors.Is(err, errWindowMoved) {
			return res, err
		}
	}
	ledger, err := db.LedgerPeriods(ctx)
	if err != nil {
		return nil, fmt.Errorf("analyze: read ledger periods: %w", err)
	}
	return analyzeOver(ctx, e, db, all, ledger, false)
}

// errWindowMoved: the ledger as read has postings in other periods of the
// window than the periods the window was found from.
var errWindowMoved = errors.New("the ledger's periods differ from the recorded ones")

// analyzeOver is Analyze with the window found from ledger, the periods in
// which the ledger has postings; with check, a list that may hold periods
// without lines, checked against the ledger as it is read (errWindowMoved
// when they differ, with nothing stored).
func analyzeOver(ctx context.Context, e *Env, db *sqlite.DB, all bool, ledger []string, check bool) (*AnalysisResult, error) {
	started := e.Now()
	cfg := e.Config.Analysis
	scope, err := costdrift.ParseAccountScope(cfg.Accounts)
	if err != nil {
		return nil, err // validated with the config
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
	ss := series.Settings{Grain: costdrift.Grain(cfg.Grain), Scope: scope, Window: cfg.Window, MaxLag: slices.Max(cfg.Lags),
		Minor: minor, Calendar: e.Calendar, Now: e.Now()}
	window, err := series.NewWindow(ledger, ss)
	if err != nil {
		return nil, fmt.Errorf("analyze: %w; run `costdrift sync` once the ledger has a closed period", err)
	}
	var postings *series.Postings
	if check {
		postings = window.Postings()
	}
	drivers := series.Drivers(activity, window.Periods, ss)
	// Costs are restated at the newest period's prices before they are
	// fitted and tested for breaks; the index is then no driver.
	prices, err := deflationOf(cfg.Deflator, cfg.DeflatorExempt, activity, postedPeriods(window.Periods, ledger), e.Config.File)
	if err != nil {
		return nil, fmt.Errorf("analyze: %w", err)
	}
	if prices != nil {
		drivers = withoutSeries(drivers, cfg.Deflator)
	}
	settings, _ := json.Marshal(costdrift.AnalysisSettings{Grain: costdrift.Grain(cfg.Grain), Accounts: cfg.Accounts, Window: cfg.Window,
		MinPeriods: cfg.MinPeriods, Lags: cfg.Lags, Alpha: cfg.Alpha, Currency: e.Currency.Code,
		BreakAlpha: cfg.BreakAlpha, BootstrapReplicates: cfg.BootstrapReplicates, Seed: bootstrapSeed,
		Deflator: cfg.Deflator, DeflatorExempt: cfg.DeflatorExempt})
	run := &costdrift.AnalysisRun{StartedAt: started, Grain: costdrift.Grain(cfg.Grain),
		WindowFrom: window.From(), WindowTo: window.To(), Settings: string(settings)}
	res := &AnalysisResult{Classes: map[costdrift.Class]int{}, PeriodsWithPostings: window.WithPostings, activity: activity, Run: run,
		refitted: map[string]bool{}}
	q, err := quality(ctx, e, db)
	if err != nil {
		return nil, fmt.Errorf("analyze: %w", err)
	}
	accountGrain := costdrift.Grain(cfg.Grain) == costdrift.GrainAccount
	// A rejected row may belong to any object, so a source period with too
	// many rejects holds every object back: costs or drivers counted from
	// part of a period would read as a change in behaviour.
	if held := heldBack(q, cfg.MaxRejectedShare, window.From()); len(held) > 0 {
		err := db.EachObjectCosts(ctx, accountGrain, window.From(), window.To(), func(totals []costdrift.CostTotal) error {
			if postings != nil {
				postings.Note(totals)
			}
			if _, ok := window.Object(totals); ok {
				run.Skipped++
			}
			return nil
		})
		if err != nil {
			return nil, fmt.Errorf("analyze: read ledger totals: %w", err)
		}
		if postings != nil && !postings.Match() {
			return nil, errWindowMoved
		}
		run.FinishedAt, res.HeldBack = e.Now(), held
		return res, nil
	}
	var previous map[string]string
	if !all {
		if previous, err = db.ObjectInputs(ctx); err != nil {
			return nil, fmt.Errorf("analyze: %w", err)
		}
	}
	names, err := db.AccountNames(ctx)
	if err != nil {
		return nil, fmt.Errorf("analyze: %w", err)
	}
	as := analyze.Settings{MinPeriods: cfg.MinPeriods, Lags: cfg.Lags, Alpha: cfg.Alpha,
		BreakAlpha: cfg.BreakAlpha, Replicates: cfg.BootstrapReplicates, Seed: bootstrapSeed, StoredOnly: true}
	// The periods the accountant left out are read once: a decision made
	// while the analysis runs counts from the next one.
	excluded, err := db.Exclusions(ctx)
	if err != nil {
		return nil, fmt.Errorf("analyze: %w", err)
	}

	w, err := db.BeginAnalysis(ctx, run)
	if err != nil {
		return nil, fmt.Errorf("analyze: %w", err)
	}
	s := &stream{ctx: ctx, db: db, w: w, res: res, settings: as, names: names, currency: e.Currency.Code, previous: previous,
		hasher: analyze.NewInputHasher(&costdrift.Panel{Periods: window.Periods, Drivers: drivers}, string(settings)),
		window: window, postings: postings, drivers: drivers, excluded: excluded, prices: prices,
		jobs: make(chan job, 1), saved: make(chan batch, 1), stop: make(chan struct{}), finished: make(chan struct{})}
	go s.analyse()
	go s.save()
	err = db.EachObjectCosts(ctx, accountGrain, window.From(), window.To(), s.read)
	if err == nil {
		err = s.flush()
	}
	close(s.jobs)
	<-s.finished
	if err == nil {
		err = s.failed()
	}
	if err == nil {
		err = ctx.Err()
	}
	if err == nil && postings != nil && !postings.Match() {
		w.Rollback()
		return nil, errWindowMoved
	}
	if err != nil {
		w.Rollback()
		return nil, fmt.Errorf("analyze: %w", err)
	}
	run.FinishedAt, run.Objects, run.Skipped = e.Now(), s.stored, s.total-s.analysed
	if err := w.Commit(ctx); err != nil {
		return nil, fmt.Errorf("analyze: %w", err)
	}
	return res, nil
}

// stream is one analysis on its way through the ledger, in three stages
// that run at the same time: the objects are read from the store (with
// their prior behaviour) a batch at a time, the batch before is fitted on
// every core, and the one before that stored. A stage that fails stops the
// others.
type stream struct {
	ctx      context.Context
	db       *sqlite.DB
	w        *sqlite.AnalysisWriter
	res      *AnalysisResult
	settings analyze.Settings
	names    map[string]string
	currency string            // the currency code the alerts' messages give amounts in
	previous map[string]string // input hash by object; nil to analyse all
	hasher   *analyze.InputHasher
	window   *series.Window
	postings *series.Postings // the periods met, to check the window against; nil when it needs no check
	drivers  []costdrift.DriverSeries
	excluded map[string][]costdrift.Exclusion // by object
	prices   *deflation                       // nil: costs as posted

	objects []costdrift.ObjectSeries // every object in scope read since the last batch
	changed []int                    // which of them to analyse
	inputs  []string                 // their input hashes
	bases   []string                 // and the periods whose prices their costs are at ("" as posted)

	// total counts the objects in scope, analysed those handed to the
	// analysis; stored counts those stored (set by save alone).
	total, analysed, stored int

	jobs     chan job   // read → analyse
	saved    chan batch // analyse → save
	stop     chan struct{}
	once     sync.Once
	err      error // the first stage's error, set once before stop closes
	finished chan struct{}
}

// job is one batch to fit.
type job struct {
	panel    costdrift.Panel
	settings analyze.Settings
	inputs   []string
	bases    []string
}

// batch is what one batch's analysis leaves to store.
type batch struct {
	results []analyze.Result
	inputs  []string
	bases   []string
}

// fail stops every stage with err, the first error only.
func (s *stream) fail(err error) {
	s.once.Do(func() {
		s.err = err
		close(s.stop)
	})
}

// failed returns the error a stage stopped the stream with, if any.
func (s *stream) failed() error {
	select {
	case <-s.stop:
		return s.err
	default:
		return nil
	}
}

// read takes one object's cost totals from the store.
func (s *stream) read(totals []costdrift.CostTotal) error {
	if s.postings != nil {
		s.postings.Note(totals)
	}
	o, ok := s.window.Object(totals)
	if !ok {
		return nil
	}
	s.total++
	// An excluded period's cost is unknown to the fit, and to the input
	// hash, so that excluding or including a period refits the object.
	excludePeriods(&o, s.window.Periods, s.excluded[o.Object.String()])
	// Restated costs enter the input hash, so that a revised index refits
	// the objects it restates.
	base := s.prices.restate(&o, s.window.Periods)
	s.objects = append(s.objects, o)
	hash := s.hasher.Hash(&o)
	if s.previous == nil || s.previous[o.Object.String()] != hash {
		s.changed = append(s.changed, len(s.objects)-1)
		s.inputs = append(s.inputs, hash)
		s.bases = append(s.bases, base)
	}
	if len(s.objects) < batchObjects {
		return nil
	}
	return s.flush()
}

// flush raises the data gaps of the objects read, reads the prior
// behaviour of those that changed and hands them to be fitted.
func (s *stream) flush() error {
	defer func() { s.objects, s.changed, s.inputs, s.bases = nil, nil, nil, nil }()
	read := s.window.Panel(s.objects, s.drivers)
	s.res.gaps = append(s.res.gaps, alerts.DataGap(&read, s.names)...)
	if len(s.changed) == 0 {
		return s.failed()
	}
	s.analysed += len(s.changed)
	objects := make([]costdrift.ObjectSeries, len(s.changed))
	names := make([]string, len(s.changed))
	for i, j := range s.changed {
		objects[i] = s.objects[j]
		names[i] = objects[i].Object.String()
	}
	// Each object's behaviour so far, so that a cost near a boundary keeps
	// its class and driver unless the new evidence is clearly better. The
	// store is read outside the analysis's transaction, as it was before.
	prior, err := s.db.CurrentChoiceOf(s.ctx, names)
	if err != nil {
		return err
	}
	settings := s.settings
	settings.Prior = prior
	select {
	case s.jobs <- job{panel: s.window.Panel(objects, s.drivers), settings: settings, inputs: s.inputs, bases: s.bases}:
		return nil
	case <-s.stop:
		return s.err
	}
}

// analyse fits each batch on every core and hands the results on.
func (s *stream) analyse() {
	defer close(s.saved)
	for j := range s.jobs {
		if s.failed() != nil {
			continue // drain
		}
		results, err := analyze.Panel(s.ctx, &j.panel, j.settings)
		if err != nil {
			s.fail(err)
			continue
		}
		select {
		case s.saved <- batch{results: results, inputs: j.inputs, bases: j.bases}:
		case <-s.stop:
		}
	}
}

// save stores each batch as it comes: the fits the store keeps
// (analyze.Result.Stored), the behaviours and the input hashes. An object
// whose analysis failed keeps its earlier analysis and input hash, so that
// it is tried again.
func (s *stream) save() {
	defer close(s.finished)
	for b := range s.saved {
		if s.failed() != nil {
			continue // drain
		}
		var fits []costdrift.Fit
		behaviours := make([]costdrift.Behaviour, 0, len(b.results))
		inputs := make(map[string]string, len(b.results))
		for i := range b.results {
			r := &b.results[i]
			name := r.Behaviour.Object.String()
			if r.Err != nil {
				s.res.Skipped = append(s.res.Skipped, SkippedObject{Object: name, Err: r.Err, Stack: r.Stack})
				continue
			}
			fits = append(fits, r.Fits...) // already the fits the store keeps: the settings ask for StoredOnly
			r.Behaviour.PriceBase = b.bases[i]
			behaviours = append(behaviours, r.Behaviour)
			inputs[name] = b.inputs[i]
			s.res.Classes[r.Behaviour.Class]++
		}
		s.stored += len(behaviours)
		if err := s.w.Save(s.ctx, fits, behaviours, inputs); err != nil {
			s.fail(err)
			continue
		}
		if err := s.raise(behaviours); err != nil {
			s.fail(err)
		}
	}
}

// raise evaluates the rules on behaviours for a batch just stored, as Raise
// would once the analysis is committed: on the behaviours the store now
// holds open for the objects (a change still pending leaves the earlier
// one open) and their latest closed ones.
func (s *stream) raise(saved []costdrift.Behaviour) error {
	objects := make([]string, len(saved))
	for i := range saved {
		objects[i] = saved[i].Object.String()
	}
	current, previous, err := s.w.Stored(s.ctx, objects)
	if err != nil {
		return fmt.Errorf("read the behaviours stored: %w", err)
	}
	res := s.res
	res.behaviourAlerts = append(res.behaviourAlerts, alerts.Behaviour(current, previous, s.names, s.currency)...)
	res.spendingAlerts = append(res.spendingAlerts, alerts.Spending(current, s.names, s.currency)...)
	res.rangeAlerts = append(res.rangeAlerts, alerts.OutOfRange(current, newestActivity(current, res.activity, res.Run.WindowTo), s.names)...)
	for _, o := range objects {
		res.refitted[o] = true
	}
	return nil
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
	changes, err := raiseAnalysisAlerts(ctx, e, db, res)
	if err != nil {
		return changes, fmt.Errorf("analyze: alerts: %w", err)
	}
	return changes, nil
}

// raiseAnalysisAlerts evaluates the rules on every object's behaviour.
// When the analysis refitted every object that has one, it has already
// evaluated them batch by batch; otherwise the current behaviours are read
// a batch at a time, so that the rules over every object need not hold all
// of them.
func raiseAnalysisAlerts(ctx context.Context, e *Env, db *sqlite.DB, res *AnalysisResult) (sqlite.AlertChanges, error) {
	raised, err := analysisAlerts(ctx, e, db, res)
	if err != nil {
		return sqlite.AlertChanges{}, err
	}
	return db.ApplyAlerts(ctx, raised, alerts.AnalysisKinds, res.Run.WindowTo)
}

// analysisAlerts is every alert the rules after an analysis raise.
func analysisAlerts(ctx context.Context, e *Env, db *sqlite.DB, res *AnalysisResult) ([]costdrift.Alert, error) {
	period := res.Run.WindowTo
	open, err := db.OpenBehaviours(ctx)
	if err != nil {
		return nil, err
	}
	names, err := db.AccountNames(ctx)
	if err != nil {
		return nil, err
	}
	pins, err := db.Pins(ctx)
	if err != nil {
		return nil, err
	}
	var pinned []costdrift.Behaviour
	behaviour := slices.Clone(res.behaviourAlerts)
	spending, outOfRange := res.spendingAlerts, res.rangeAlerts
	if open != len(res.refitted) {
		previous, err := db.PreviousBehaviour(ctx)
		if err != nil {
			return nil, err
		}
		behaviour, spending, outOfRange = nil, nil, nil
		err = db.EachCurrentBehaviour(ctx, batchObjects, func(current []costdrift.Behaviour) error {
			for _, b := range current {
				if _, ok := pins[b.Object.String()]; ok {
					pinned = append(pinned, b)
				}
			}
			behaviour = append(behaviour, alerts.Behaviour(current, previous, names, e.Currency.Code)...)
			spending = append(spending, alerts.Spending(current, names, e.Currency.Code)...)
			outOfRange = append(outOfRange, alerts.OutOfRange(current, newestActivity(current, res.activity, period), names)...)
			return nil
		})
		if err != nil {
			return nil, err
		}
	} else if pinned, err = pinnedBehaviours(ctx, db, pins); err != nil {
		return nil, err
	}
	if err := markAwaiting(ctx, e, db, behaviour); err != nil {
		return nil, err
	}
	raised := slices.Concat(behaviour, spending, outOfRange, res.gaps)
	review, err := reviewPins(ctx, e, db, pins, pinned, names)
	if err != nil {
		return nil, err
	}
	raised = append(raised, review...)
	states, err := sourceStates(ctx, e, db)
	if err != nil {
		return nil, err
	}
	raised = append(raised, alerts.StaleSource(states)...)
	q, err := quality(ctx, e, db)
	if err != nil {
		return nil, err
	}
	return append(raised, alerts.DataQuality(q, e.Config.Analysis.MaxRejectedShare)...), nil
}

// pinnedBehaviours is the open behaviour of each pinned object, in the
// order EachCurrentBehaviour reads them (by account, then cost centre).
func pinnedBehaviours(ctx context.Context, db *sqlite.DB, pins map[string]costdrift.Pin) ([]costdrift.Behaviour, error) {
	if len(pins) == 0 {
		return nil, nil
	}
	objects := make([]string, 0, len(pins))
	for o := range pins {
		objects = append(objects, o)
	}
	current, err := db.CurrentBehaviourOf(ctx, objects)
	if err != nil {
		return nil, err
	}
	out := make([]costdrift.Behaviour, 0, len(current))
	for _, b := range current {
		out = append(out, b)
	}
	slices.SortFunc(out, func(a, b costdrift.Behaviour) int {
		if c := strings.Compare(a.Object.Account, b.Object.Account); c != 0 {
			return c
		}
		return strings.Compare(a.Object.CostCenter, b.Object.CostCenter)
	})
	return out, nil
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
