package pipeline

import (
	"context"
	"errors"
	"fmt"
	"log/slog"
	"strings"
	"time"

	"github.com/costdrift/costdrift/internal/costdrift"
	"github.com/costdrift/costdrift/internal/sqlite"
)

// CycleResult is what one cycle did, for the caller's metrics.
type CycleResult struct {
	Cycle    costdrift.Cycle
	Sync     []SourceResult
	Analysis *AnalysisResult // nil when the analysis did not run or failed
	Mail     DeliveryResult
	// OpenAlerts counts the open alerts by kind after the cycle, and
	// DeliveriesFailing the deliveries whose latest attempt failed; both
	// are read only when the cycle was not stopped (Counted).
	OpenAlerts        map[costdrift.AlertKind]int
	DeliveriesFailing int
	Counted           bool
	Duration          time.Duration
	Err               error
}

// RowsSynced and RowsRejected add up the cycle's sync runs.
func (r *CycleResult) RowsSynced() (loaded, rejected int) {
	for _, s := range r.Sync {
		loaded += s.Run.RowsLoaded
		rejected += s.Run.RowsRejected
	}
	return loaded, rejected
}

// RunCycle is one scheduled pass, the same steps as the sync and analyze
// commands: the store checked, every source synced, then the analysis, its
// alerts and their mail. A failing source fails its part and the analysis
// still runs on what the store holds; a store that fails its check is not
// written at all. The cycle is recorded in the store's cycles table and
// logged to log; observe, when not nil, sees the result before the
// cycle's last log line, so that what it exports is up to date once that
// line is written.
func RunCycle(ctx context.Context, e *Env, db *sqlite.DB, log *slog.Logger, observe func(*CycleResult)) (*CycleResult, error) {
	res := &CycleResult{Cycle: costdrift.Cycle{Stages: map[string]time.Duration{}}}
	c := &res.Cycle
	// A page damaged since the store was opened stops the cycle before it
	// writes: more writes could spread the damage.
	if err := db.Check(ctx); err != nil {
		if ctx.Err() != nil {
			log.Info("cycle not started: stopped during the store's check")
			return res, err
		}
		log.Error("cycle not started: the store fails its check", "error", err)
		return res, err
	}
	if err := db.BeginCycle(ctx, c); err != nil {
		log.Error("cycle could not start", "error", err)
		return res, err
	}
	start := time.Now()
	log.Info("cycle started", "cycle", c.ID)
	var failed []string

	syncFailure, stored := syncStage(ctx, e, db, log, res)
	if syncFailure != "" {
		failed = append(failed, syncFailure)
	}
	stage, analysed, mailStarted := "sync", false, false
	if ctx.Err() == nil {
		stage = "analyze"
		var err error
		mailStarted, err = analyzeStage(ctx, e, db, log, res)
		analysed = err == nil
		if err != nil {
			failed = append(failed, oneLineError(err))
		}
	}

	var cause error
	switch {
	case ctx.Err() != nil && !analysed:
		cause = errors.New(stopMessage(e, stage, stored, mailStarted, syncFailure))
	case len(failed) > 0:
		cause = errors.New(strings.Join(failed, "; "))
	}
	// The cycle's own context may be cancelled by now; its record is still
	// written, briefly.
	rec, cancel := context.WithTimeout(context.WithoutCancel(ctx), 5*time.Second)
	defer cancel()
	if err := db.FinishCycle(rec, c, cause); err != nil {
		log.Error("cycle not recorded", "cycle", c.ID, "error", err)
	}
	res.Duration = time.Since(start)
	res.Err = cause
	if observe != nil {
		observe(res)
	}
	summary := []any{"cycle", c.ID, "status", c.Status, "duration", res.Duration.Round(time.Millisecond),
		"mail_sent", res.Mail.Sent(), "mail_failed", len(res.Mail.Failed())}
	if cause != nil {
		log.Error("cycle finished", append(summary, "error", cause.Error())...)
		return res, fmt.Errorf("cycle %d failed: %w", c.ID, cause)
	}
	log.Info("cycle finished", summary...)
	return res, nil
}

// syncStage syncs every source for a cycle and logs each source and the
// stage. It returns the stage's failure for the cycle's error ("" when it
// succeeded) and how many sources synced.
func syncStage(ctx context.Context, e *Env, db *sqlite.DB, log *slog.Logger, res *CycleResult) (failure string, stored int) {
	t := time.Now()
	runs, err := Sync(ctx, e, db, nil)
	res.Sync = runs
	res.Cycle.Stages["sync"] = time.Since(t)
	var loaded, rejected, read, files int
	for _, sr := range runs {
		r := sr.Run
		read += r.RowsRead
		loaded += r.RowsLoaded
		rejected += r.RowsRejected
		files += r.Files
		lvl := slog.LevelInfo
		if r.Status != "ok" {
			lvl = slog.LevelWarn
		} else {
			stored++
		}
		log.Log(ctx, lvl, "source synced", "cycle", res.Cycle.ID, "source", r.Source, "role", string(r.Role), "kind", r.Kind,
			"status", r.Status, "files", r.Files, "files_skipped", r.FilesSkipped, "rows_read", r.RowsRead,
			"rows_loaded", r.RowsLoaded, "rows_rejected", r.RowsRejected, "error", r.Error)
		for _, w := range r.Warnings {
			log.Warn("source warning", "cycle", res.Cycle.ID, "source", r.Source, "warning", w)
		}
	}
	status := "ok"
	if err != nil {
		status, failure = "failed", "sync: "+oneLineError(err)
	}
	log.Info("stage finished", "cycle", res.Cycle.ID, "stage", "sync", "status", status, "sources", len(runs),
		"files", files, "rows_read", read, "rows_loaded", loaded, "rows_rejected", rejected,
		"duration", res.Cycle.Stages["sync"].Round(time.Millisecond))
	return failure, stored
}

// analyzeStage analyses, raises the alerts and mails them for a cycle,
// and logs the stage: each object skipped, each digest not delivered (so
// that a mail server that is down shows in the log and not only in the
// store), and the open alerts. It reports whether the mail step started.
func analyzeStage(ctx context.Context, e *Env, db *sqlite.DB, log *slog.Logger, res *CycleResult) (mailStarted bool, err error) {
	t := time.Now()
	defer func() {
		res.Cycle.Stages["analyze"] = time.Since(t)
		attrs := []any{"cycle", res.Cycle.ID, "stage", "analyze", "status", "ok", "duration", res.Cycle.Stages["analyze"].Round(time.Millisecond)}
		if err != nil {
			attrs[5] = "failed"
			attrs = append(attrs, "error", oneLineError(err))
		} else {
			attrs = append(attrs, "objects", res.Analysis.Run.Objects, "unchanged", res.Analysis.Run.Skipped, "window_to", res.Analysis.Run.WindowTo)
		}
		if ctx.Err() == nil {
			attrs = append(attrs, countAlerts(ctx, db, res)...)
		}
		log.Info("stage finished", attrs...)
	}()
	a, err := Analyze(ctx, e, db, false)
	if err != nil {
		return false, err
	}
	for _, s := range a.Skipped {
		attrs := []any{"cycle", res.Cycle.ID, "object", s.Object, "error", s.Err}
		if s.Stack != "" {
			attrs = append(attrs, "stack", s.Stack)
		}
		log.Error("cost object skipped", attrs...)
	}
	if _, err := Raise(ctx, e, db, a); err != nil {
		return false, err
	}
	res.Analysis = a
	mail, err := Deliver(ctx, e, db)
	res.Mail = mail
	for _, f := range mail.Failed() {
		log.Warn("mail delivery failed", "cycle", res.Cycle.ID, "recipient", f.Recipient, "alerts", f.Alerts, "error", f.Err)
	}
	if err != nil {
		return true, fmt.Errorf("analyze: %w", err)
	}
	return true, nil
}

// stopMessage says what a cycle stopped by the daemon's stop had stored:
// each source batch and the analysis commit on their own, so it is said
// as it is, not more or less.
func stopMessage(e *Env, stage string, stored int, mailStarted bool, syncFailure string) string {
	var why string
	switch {
	case stage == "sync":
		why = fmt.Sprintf("interrupted: the daemon was stopped during the sync; %d of %d source(s) were synced, what the sync had not committed was rolled back and is synced at the next cycle, and no analysis ran",
			stored, len(e.sources()))
	case mailStarted:
		why = "interrupted: the daemon was stopped while the alerts were mailed; the cycle's sync, analysis and alerts are stored, and the digests not sent go out at the next cycle"
	default:
		why = "interrupted: the daemon was stopped during the analysis; the cycle's sync is stored, and what the analysis had not committed was rolled back and is redone at the next cycle"
	}
	if stage != "sync" && syncFailure != "" {
		why += "; " + syncFailure
	}
	return why
}

// countAlerts counts the open alerts by kind and the failing deliveries
// into res, for the cycle's log line and the caller's metrics.
func countAlerts(ctx context.Context, db *sqlite.DB, res *CycleResult) []any {
	open, err := db.Alerts(ctx, sqlite.AlertFilter{Status: costdrift.AlertOpen})
	if err != nil {
		return []any{"alerts_error", err.Error()}
	}
	res.OpenAlerts = map[costdrift.AlertKind]int{}
	for _, al := range open {
		res.OpenAlerts[al.Kind]++
	}
	if past, err := db.Deliveries(ctx, ""); err == nil {
		for _, byRecipient := range past {
			for _, d := range byRecipient {
				if d.Status == sqlite.DeliveryFailed {
					res.DeliveriesFailing++
				}
			}
		}
	}
	res.Counted = true
	return []any{"alerts_open", len(open), "deliveries_failing", res.DeliveriesFailing}
}
