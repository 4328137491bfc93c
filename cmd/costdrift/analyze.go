package main

import (
	"context"
	"encoding/json"
	"fmt"
	"io"
	"slices"
	"sort"
	"strings"

	"github.com/spf13/cobra"

	"github.com/costdrift/costdrift/internal/alerts"
	"github.com/costdrift/costdrift/internal/analyze"
	"github.com/costdrift/costdrift/internal/costdrift"
	"github.com/costdrift/costdrift/internal/series"
	"github.com/costdrift/costdrift/internal/sqlite"
)

// bootstrapSeed fixes the resampling behind break p-values, so that the same
// data give the same verdict on every run and machine.
const bootstrapSeed uint64 = 0x636f737464726966

func (a *app) analyzeCommand() *cobra.Command {
	var all bool
	cmd := &cobra.Command{
		Use:   "analyze",
		Short: "Fit every driver to every cost object and classify its behaviour",
		Long: `analyze fits every driver at every lag to every cost object in scope and
classifies its behaviour. Objects whose costs, drivers and settings have not
changed since their last analysis are left as they were; --all refits them too.`,
		Args: cobra.NoArgs,
		RunE: func(cmd *cobra.Command, args []string) error {
			e, err := a.loadConfig()
			if err != nil {
				return err
			}
			db, err := a.openStore(cmd.Context(), e, true)
			if err != nil {
				return err
			}
			defer db.Close()
			_, err = a.analyzeAll(cmd.Context(), e, db, a.out, all)
			return err
		},
	}
	cmd.Flags().BoolVar(&all, "all", false, "refit every object, changed or not")
	return cmd
}

// analyzeAll builds the panel from the store, analyses every object and
// stores the run, its fits and the behaviours in one transaction.
func (a *app) analyzeAll(ctx context.Context, e *env, db *sqlite.DB, out io.Writer, all bool) (*costdrift.AnalysisRun, error) {
	started := a.now()
	cfg := e.cfg.Analysis
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
	minor := int64(1)
	for range e.currency.Exponent {
		minor *= 10
	}
	panel, err := series.Build(costs, activity, series.Settings{
		Grain: costdrift.Grain(cfg.Grain), Scope: scope, Window: cfg.Window, MaxLag: slices.Max(cfg.Lags),
		Minor: minor, Calendar: e.calendar, Now: a.now(),
	})
	if err != nil {
		return nil, fmt.Errorf("analyze: %w; run `costdrift sync` once the ledger has a closed period", err)
	}
	settings, _ := json.Marshal(map[string]any{"grain": cfg.Grain, "accounts": cfg.Accounts, "window": cfg.Window,
		"min_periods": cfg.MinPeriods, "lags": cfg.Lags, "alpha": cfg.Alpha, "currency": e.currency.Code,
		"break_alpha": cfg.BreakAlpha, "bootstrap_replicates": cfg.BootstrapReplicates, "seed": bootstrapSeed})
	inputs := analyze.InputHashes(&panel, string(settings))
	total := len(panel.Objects)
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
	results := analyze.Panel(&panel, analyze.Settings{MinPeriods: cfg.MinPeriods, Lags: cfg.Lags, Alpha: cfg.Alpha,
		BreakAlpha: cfg.BreakAlpha, Replicates: cfg.BootstrapReplicates, Seed: bootstrapSeed})

	var fits []costdrift.Fit
	behaviours := make([]costdrift.Behaviour, 0, len(results))
	classes := map[costdrift.Class]int{}
	for _, r := range results {
		fits = append(fits, r.Fits...)
		behaviours = append(behaviours, r.Behaviour)
		classes[r.Behaviour.Class]++
	}
	run := &costdrift.AnalysisRun{Inputs: map[string]string{}, Skipped: total - len(panel.Objects),
		StartedAt: started, FinishedAt: a.now(), Grain: costdrift.Grain(cfg.Grain), Objects: len(behaviours),
		WindowFrom: panel.Periods[0], WindowTo: panel.Periods[len(panel.Periods)-1], Settings: string(settings),
	}
	for _, o := range panel.Objects {
		run.Inputs[o.Object.String()] = inputs[o.Object.String()]
	}
	if err := db.SaveAnalysis(ctx, run, fits, behaviours); err != nil {
		return nil, fmt.Errorf("analyze: %w", err)
	}
	changes, err := raiseBehaviourAlerts(ctx, db, run.WindowTo)
	if err != nil {
		return nil, fmt.Errorf("analyze: alerts: %w", err)
	}
	var counts []string
	for c, n := range classes {
		counts = append(counts, fmt.Sprintf("%d %s", n, c))
	}
	sort.Strings(counts)
	fmt.Fprintf(out, "analysed %d cost objects over %s to %s (%d periods with postings)", len(behaviours),
		run.WindowFrom, run.WindowTo, panel.PeriodsWithPostings)
	if len(counts) > 0 {
		fmt.Fprintf(out, ": %s", strings.Join(counts, ", "))
	}
	if run.Skipped > 0 {
		fmt.Fprintf(out, "; %d unchanged since their last analysis were left as they were (--all refits them)", run.Skipped)
	}
	fmt.Fprintln(out)
	fmt.Fprintf(out, "alerts: %d new, %d escalated, %d reopened, %d resolved (costdrift alerts list)\n",
		len(changes.New), len(changes.Escalated), len(changes.Reopened), len(changes.Resolved))
	return run, nil
}

// raiseBehaviourAlerts evaluates the rules on changes in behaviour over
// every object's current behaviour (not only the refitted ones, so that the
// alerts of unchanged objects hold) and lets the store open, update and
// resolve alerts.
func raiseBehaviourAlerts(ctx context.Context, db *sqlite.DB, period string) (sqlite.AlertChanges, error) {
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
	return db.ApplyAlerts(ctx, alerts.Behaviour(current, previous, names), alerts.BehaviourKinds, period)
}
