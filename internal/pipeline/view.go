package pipeline

import (
	"context"
	"errors"
	"fmt"
	"strings"
	"time"

	"github.com/costdrift/costdrift/internal/config"
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

// Acknowledge marks alert id as seen, until period until ("" until its
// condition changes), and adds the note, when there is one, to its thread
// under by, as `costdrift alerts ack` does.
func Acknowledge(ctx context.Context, e *Env, db *sqlite.DB, id int64, until, by, note string) error {
	if until = strings.TrimSpace(until); until != "" {
		if _, err := e.Calendar.Parse(until); err != nil {
			return fmt.Errorf("until: %v; give a period of the %s calendar the store uses", err, e.Calendar.Kind())
		}
	}
	if err := db.AckAlert(ctx, id, until); err != nil {
		if errors.Is(err, sqlite.ErrAlertNotFound) {
			return fmt.Errorf("no alert %d", id)
		}
		return fmt.Errorf("alert %d: %w", id, err)
	}
	if note = strings.TrimSpace(note); note != "" {
		if err := db.NoteAlert(ctx, id, by, note, e.Now()); err != nil {
			return fmt.Errorf("alert %d: note: %w", id, err)
		}
	}
	return nil
}

// AlertView is an alert with its thread of notes.
type AlertView struct {
	costdrift.Alert
	Notes []costdrift.Decision
}

// ViewAlerts lists the alerts of a status (open, acknowledged, resolved,
// or sqlite.AlertStatusAll), each with its notes.
func ViewAlerts(ctx context.Context, db *sqlite.DB, status string) ([]AlertView, error) {
	as, err := db.Alerts(ctx, sqlite.AlertFilter{Status: status})
	if err != nil {
		return nil, fmt.Errorf("alerts: %w", err)
	}
	out := make([]AlertView, len(as))
	for i, a := range as {
		notes, err := db.AlertNotes(ctx, a.ID)
		if err != nil {
			return nil, fmt.Errorf("alert %d: %w", a.ID, err)
		}
		out[i] = AlertView{Alert: a, Notes: notes}
	}
	return out, nil
}

// ProposalView is a formula waiting for approval, as the proposals page
// shows it: the object, the analysis's formula, and the one budgets use
// until it is approved ("" before any approval).
type ProposalView struct {
	Object      string
	AccountName string
	Class       costdrift.Class
	Proposed    string
	Since       string
	ProposedAt  time.Time
	Approved    string
	ApprovedBy  string
	Declined    bool // the latest decision on this formula was to decline it
	Reason      string
}

// ViewProposals lists what waits for approval, oldest first, and whether
// analysis.approval requires it at all.
func ViewProposals(ctx context.Context, e *Env, db *sqlite.DB) ([]ProposalView, bool, error) {
	if !approvalRequired(e) {
		return nil, false, nil
	}
	ps, err := Proposals(ctx, db)
	if err != nil {
		return nil, true, fmt.Errorf("proposals: %w", err)
	}
	names, err := db.AccountNames(ctx)
	if err != nil {
		return nil, true, fmt.Errorf("proposals: %w", err)
	}
	out := make([]ProposalView, len(ps))
	for i, p := range ps {
		v := ProposalView{Object: p.Current.Object.String(), AccountName: names[p.Current.Object.Account], Class: p.Current.Class,
			Proposed: report.Formula(p.Current), Since: p.State.CurrentSince, ProposedAt: p.State.ProposedAt, Reason: p.Current.Reason,
			Declined: p.State.LastKind == costdrift.DecisionDecline && p.State.LastID == p.State.CurrentID}
		if p.Approved != nil {
			v.Approved, v.ApprovedBy = report.Formula(*p.Approved), p.State.ApprovedBy
		}
		out[i] = v
	}
	return out, true, nil
}

// Budgets is the budgets page: the names saved, and the lines of the one
// asked for.
type Budgets struct {
	BudgetNames, VarianceNames []string
	Budget                     []sqlite.SavedBudgetLine
	Variance                   []sqlite.SavedVarianceLine
}

// ViewBudgets reads the saved budget plan and variance report name (either
// may be ""), with the names of every saved one.
func ViewBudgets(ctx context.Context, db *sqlite.DB, plan, name string) (Budgets, error) {
	var b Budgets
	var err error
	if b.BudgetNames, b.VarianceNames, err = db.SavedNames(ctx); err != nil {
		return b, err
	}
	if plan != "" {
		if b.Budget, err = db.SavedBudget(ctx, plan); err != nil {
			return b, err
		}
	}
	if name != "" {
		if b.Variance, err = db.SavedVariance(ctx, name); err != nil {
			return b, err
		}
	}
	return b, nil
}

// Sources is the sources page: the latest sync runs, the files loaded and
// the newest rejects with their reasons.
type Sources struct {
	Runs     []costdrift.SyncRun
	Files    []SourceFileView
	Rejects  []costdrift.Reject
	Rejected int // rejects the store holds in all
}

// SourceFileView is a file loaded, named as its rejects' locations name it
// (relative to the config's folder for a source configured so), with the
// rows rejected by the sync that loaded it.
type SourceFileView struct {
	sqlite.SourceFileRow
	Display  string
	Rejected int
}

// ViewSources reads the sources page: up to runs sync runs and rejects
// rejects.
func ViewSources(ctx context.Context, e *Env, db *sqlite.DB, runs, rejects int) (Sources, error) {
	var s Sources
	var err error
	if s.Runs, err = db.SyncRuns(ctx, runs); err != nil {
		return s, fmt.Errorf("sources: %w", err)
	}
	files, err := db.SourceFileRows(ctx)
	if err != nil {
		return s, err
	}
	byFile, err := db.RejectsByFile(ctx)
	if err != nil {
		return s, err
	}
	configured := map[string]config.Source{}
	for _, rs := range e.sources() {
		configured[rs.src.Name] = rs.src
	}
	for _, f := range files {
		display := f.Path
		if src, ok := configured[f.Source]; ok {
			display = displayPath(e, src, f.Path)
		}
		s.Files = append(s.Files, SourceFileView{SourceFileRow: f, Display: display,
			Rejected: byFile[sqlite.RejectFile{SyncRunID: f.SyncRunID, Source: f.Source, File: display}]})
	}
	if s.Rejects, s.Rejected, err = db.RecentRejects(ctx, rejects); err != nil {
		return s, err
	}
	return s, nil
}

// ViewDecisions lists the decisions recorded on object, as the audit
// trail keeps them.
func ViewDecisions(ctx context.Context, db *sqlite.DB, object string) ([]costdrift.Decision, error) {
	ds, err := db.Decisions(ctx, object)
	if err != nil {
		return nil, fmt.Errorf("decisions of %s: %w", object, err)
	}
	return ds, nil
}
