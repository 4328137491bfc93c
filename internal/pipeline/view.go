package pipeline

import (
	"context"
	"errors"
	"fmt"

	"github.com/costdrift/costdrift/internal/costdrift"
	"github.com/costdrift/costdrift/internal/report"
	"github.com/costdrift/costdrift/internal/sqlite"
)

// Overview is what the web view's first page shows: the objects by class
// per cost centre, the open alerts by severity, the proposals waiting, and
// the latest sync runs and analysis.
type Overview struct {
	Classes   []sqlite.ClassCount
	Open      map[costdrift.Severity]int
	Proposals int
	Syncs     []costdrift.SyncRun // the latest run of each source, newest first
	Cycles    []costdrift.Cycle   // the daemon's latest cycle, when it has run
	Analysis  *costdrift.AnalysisRun
}

// ViewOverview gathers the overview from the store.
func ViewOverview(ctx context.Context, e *Env, db *sqlite.DB) (Overview, error) {
	var o Overview
	var err error
	if o.Classes, err = db.ClassCounts(ctx); err != nil {
		return o, fmt.Errorf("overview: %w", err)
	}
	open, err := db.Alerts(ctx, sqlite.AlertFilter{Status: costdrift.AlertOpen})
	if err != nil {
		return o, fmt.Errorf("overview: %w", err)
	}
	o.Open = make(map[costdrift.Severity]int)
	for _, a := range open {
		o.Open[a.Severity]++
	}
	if approvalRequired(e) {
		ps, err := Proposals(ctx, db)
		if err != nil {
			return o, fmt.Errorf("overview: %w", err)
		}
		o.Proposals = len(ps)
	}
	runs, err := db.SyncRuns(ctx, 200)
	if err != nil {
		return o, fmt.Errorf("overview: %w", err)
	}
	seen := map[string]bool{}
	for _, r := range runs {
		if !seen[r.Source] {
			seen[r.Source] = true
			o.Syncs = append(o.Syncs, r)
		}
	}
	if o.Cycles, err = db.Cycles(ctx, 1); err != nil {
		return o, fmt.Errorf("overview: %w", err)
	}
	run, err := db.LatestAnalysis(ctx)
	if err != nil {
		return o, fmt.Errorf("overview: %w", err)
	}
	o.Analysis = run
	return o, nil
}

// ObjectList is one page of the objects, as report rows with the
// accountant's decisions beside the data's estimate, and how many objects
// match the query in all.
type ObjectList struct {
	Rows  []report.Row
	Total int
}

// ViewObjects reads the page of objects q selects; only the page is read.
func ViewObjects(ctx context.Context, e *Env, db *sqlite.DB, q sqlite.ObjectQuery) (ObjectList, error) {
	bs, total, err := db.ObjectPage(ctx, q)
	if err != nil {
		return ObjectList{}, err
	}
	names, err := db.AccountNames(ctx)
	if err != nil {
		return ObjectList{}, fmt.Errorf("objects: %w", err)
	}
	decided, err := Decided(ctx, e, db, bs)
	if err != nil {
		return ObjectList{}, fmt.Errorf("objects: %w", err)
	}
	return ObjectList{Rows: report.DecidedRows(bs, names, decided), Total: total}, nil
}

// ObjectAnalysed says whether the store holds a current behaviour of
// object, so that a page can answer "not found" rather than fail.
func ObjectAnalysed(ctx context.Context, db *sqlite.DB, object string) (bool, error) {
	_, err := db.ObjectAnalysis(ctx, object)
	switch {
	case errors.Is(err, sqlite.ErrNoAnalysis), errors.Is(err, sqlite.ErrNotAnalysed):
		return false, nil
	case err != nil:
		return false, fmt.Errorf("object %s: %w", object, err)
	}
	return true, nil
}
