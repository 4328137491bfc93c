package main

import (
	"context"
	"crypto/sha256"
	"encoding/hex"
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"runtime/debug"
	"sort"
	"strings"

	"github.com/spf13/cobra"

	"github.com/costdrift/costdrift/internal/alerts"
	"github.com/costdrift/costdrift/internal/config"
	"github.com/costdrift/costdrift/internal/costdrift"
	"github.com/costdrift/costdrift/internal/report"
	"github.com/costdrift/costdrift/internal/sqlite"
)

func (a *app) syncCommand() *cobra.Command {
	var dryRun bool
	var forget []string
	cmd := &cobra.Command{
		Use:   "sync",
		Short: "Read every configured source into the store",
		Long: `sync reads every configured source into the store. Files that have not changed
since the last sync are skipped; a changed file replaces exactly the rows it
loaded before, in one transaction. A file that has disappeared keeps its rows
until you drop them with --forget.`,
		Args: cobra.NoArgs,
		RunE: func(cmd *cobra.Command, args []string) error {
			e, err := a.loadConfig()
			if err != nil {
				return err
			}
			if dryRun && len(forget) > 0 {
				return errors.New("--dry-run and --forget cannot be combined")
			}
			if dryRun {
				return a.dryRunSync(cmd.Context(), e)
			}
			db, closeStore, err := a.openStoreToWrite(cmd.Context(), e, len(forget) > 0)
			if err != nil {
				return err
			}
			defer closeStore()
			if len(forget) > 0 {
				return forgetFiles(cmd.Context(), e, db, forget, a.out)
			}
			_, err = syncAll(cmd.Context(), e, db, a.out)
			return err
		},
	}
	cmd.Flags().BoolVar(&dryRun, "dry-run", false, "read and check every source, report what would change, write nothing")
	cmd.Flags().StringArrayVar(&forget, "forget", nil, "drop the rows a vanished `FILE` loaded (repeatable); no sync is done")
	return cmd
}

// dryRunSync runs a whole sync inside one transaction that is rolled back.
// Without a store yet, it works on a throwaway one, so nothing is created.
func (a *app) dryRunSync(ctx context.Context, e *env) error {
	path := e.cfg.StorePath()
	if !sqlite.Exists(path) {
		tmp, err := os.MkdirTemp("", "costdrift-dry-run-")
		if err != nil {
			return err
		}
		defer os.RemoveAll(tmp)
		path = filepath.Join(tmp, "costdrift.db")
	}
	db, err := sqlite.Open(ctx, path, e.currency)
	if err != nil {
		return err
	}
	defer db.Close()
	db.Now = a.now
	dry, rollback, err := db.DryRun(ctx)
	if err != nil {
		return err
	}
	defer rollback()
	if err := dry.CheckCalendar(ctx, e.calendar.Kind()); err != nil {
		return err
	}
	_, err = syncAll(ctx, e, dry, a.out)
	fmt.Fprintln(a.out, "dry run: nothing was written to the store")
	return err
}

// syncAll syncs every source. Each file is one transaction; a failing file
// or source is reported and the others go on; the error says which failed.
func syncAll(ctx context.Context, e *env, db *sqlite.DB, out io.Writer) ([]costdrift.SyncRun, error) {
	// A sync allocates a little for every field of every row while its live
	// heap stays small (a batch at a time); collecting garbage at five times
	// the live heap instead of twice cuts the collector's share of a large
	// load by a third, and memory stays bounded by the batch, not the file.
	defer debug.SetGCPercent(debug.SetGCPercent(syncGCPercent))
	if isTerminal(out) {
		e.progress = func(display string, done, total int64) {
			fmt.Fprintf(out, "\r  %s  %3.0f %%  (%s of %s MB)\033[K", report.TerminalText(display), 100*float64(done)/float64(total),
				report.Number(float64(done)/1e6, 0), report.Number(float64(total)/1e6, 0))
			if done >= total {
				fmt.Fprint(out, "\r\033[K")
			}
		}
		defer func() { e.progress = nil }()
	}
	type job struct {
		role costdrift.Role
		src  config.Source
	}
	var jobs []job
	for _, s := range e.cfg.Sources.Accounts {
		jobs = append(jobs, job{costdrift.RoleAccounts, s})
	}
	for _, s := range e.cfg.Sources.Activity {
		jobs = append(jobs, job{costdrift.RoleActivity, s})
	}
	for _, s := range e.cfg.Sources.Ledger {
		jobs = append(jobs, job{costdrift.RoleLedger, s})
	}
	if len(jobs) == 0 {
		return nil, fmt.Errorf("no sources configured: add sources.ledger in %s", e.cfg.File)
	}
	var runs []costdrift.SyncRun
	var failed []string
	synced := 0
	for _, j := range jobs {
		run := costdrift.SyncRun{Source: j.src.Name, Role: j.role, Kind: j.src.Kind}
		if err := db.BeginSync(ctx, &run); err != nil {
			return runs, err
		}
		notes, err := syncSource(ctx, e, db, j.role, j.src, &run)
		// Recorded even when ctx was cancelled (a stopping daemon), so that
		// sync_runs does not claim the run is still going.
		if ferr := db.FinishSync(context.WithoutCancel(ctx), &run, err); ferr != nil && err == nil {
			err = ferr
		}
		runs = append(runs, run)
		printRun(out, db, &run, notes, err)
		if err == nil {
			synced++
			continue
		}
		if ctx.Err() != nil {
			// Stopped by a signal: say what was done, and that the
			// source in hand stored only whole files.
			return runs, fmt.Errorf("sync interrupted: %d of %d sources synced; %s stopped part way (each file is stored whole or not at all); sync again to complete it: %w",
				synced, len(jobs), j.src.Name, ctx.Err())
		}
		failed = append(failed, fmt.Sprintf("source %s failed: %v", j.src.Name, err))
	}
	var alertErr error
	if err := raiseSourceAlerts(ctx, e, db); err != nil {
		alertErr = fmt.Errorf("raising source alerts: %w", err)
	}
	var err error
	switch {
	case len(failed) == 1:
		err = errors.New(failed[0])
	case len(failed) > 1:
		err = fmt.Errorf("%d of %d sources failed: %s", len(failed), len(jobs), strings.Join(failed, "; "))
	}
	switch {
	case err != nil && alertErr != nil:
		return runs, fmt.Errorf("%w; %w", err, alertErr)
	case alertErr != nil:
		return runs, alertErr
	}
	return runs, err
}

// raiseSourceAlerts raises source_failure for every source whose latest sync
// failed, and resolves it for those that synced again.
func raiseSourceAlerts(ctx context.Context, e *env, db *sqlite.DB) error {
	a := &app{now: db.Now}
	states, err := a.sourceStates(ctx, e, db)
	if err != nil {
		return err
	}
	_, err = db.ApplyAlerts(ctx, alerts.SourceFailure(states), []costdrift.AlertKind{costdrift.AlertSourceFailure}, e.calendar.Period(db.Now()))
	return err
}

func printRun(out io.Writer, db *sqlite.DB, run *costdrift.SyncRun, notes []string, err error) {
	n := func(v int) string { return report.Number(float64(v), 0) }
	files, unchanged := "", ""
	if run.Kind == "sql" {
		unchanged = ", " + n(run.RowsUnchanged) + " unchanged"
	} else {
		files = fmt.Sprintf("files: %d read, %d unchanged | ", run.Files, run.FilesSkipped)
	}
	status := ""
	if err != nil {
		status = " | FAILED"
	}
	fmt.Fprintf(out, "%-10s %-8s %srows: %s read, %s stored%s, %s replaced, %s rejected%s\n", run.Source, run.Role, files,
		n(run.RowsRead), n(run.RowsLoaded), unchanged, n(run.RowsReplaced), n(run.RowsRejected), status)
	for _, w := range run.Warnings {
		fmt.Fprintf(out, "%-10s warning: %s\n", "", report.TerminalText(w))
	}
	for _, n := range notes {
		fmt.Fprintf(out, "%-10s note: %s\n", "", report.TerminalText(n))
	}
	if run.RowsRejected > 0 {
		fmt.Fprintf(out, "%-10s see why: sqlite3 %s \"SELECT location, reason FROM rejects WHERE sync_run_id = %d\"\n", "", db.Path(), run.ID)
	}
}

// syncSource syncs one source into its run. It returns notes for the
// operator (files that vanished) and the first error.
func syncSource(ctx context.Context, e *env, db *sqlite.DB, role costdrift.Role, src config.Source, run *costdrift.SyncRun) ([]string, error) {
	if read, ok := queryKinds[src.Kind]; ok {
		return nil, syncQuery(ctx, e, db, role, src, run, read)
	}
	read, ok := fileKinds[src.Kind]
	if !ok {
		return nil, fmt.Errorf("kind %q has no reader in this build", src.Kind)
	}
	pattern := e.cfg.Path(src.Path)
	matches, err := filepath.Glob(pattern)
	if err != nil {
		return nil, fmt.Errorf("path %q is not a valid glob: %v", src.Path, err)
	}
	if len(matches) == 0 {
		return nil, fmt.Errorf("no file matches %s (sources %s path in %s)", pattern, src.Name, e.cfg.File)
	}
	sort.Strings(matches)
	known, err := db.SourceFiles(ctx, src.Name)
	if err != nil {
		return nil, err
	}
	byPath := map[string]costdrift.SourceFile{}
	for _, f := range known {
		byPath[f.Path] = f
	}

	var failed []string
	seen := map[string]bool{}
	for _, path := range matches {
		abs, err := filepath.Abs(path)
		if err != nil {
			return nil, err
		}
		seen[abs] = true
		display := displayPath(e, src, path)
		file, err := fingerprint(abs, display)
		if err == nil {
			file.Source = src.Name
			if old, ok := byPath[abs]; ok && old.Size == file.Size && old.SHA256 == file.SHA256 {
				run.FilesSkipped++
				continue
			}
			err = db.LoadFile(ctx, run, file, func(w costdrift.SourceWriter) error {
				n, err := read(ctx, e, role, src, abs, display, w)
				run.RowsRead += n
				return err
			})
		}
		if err != nil {
			failed = append(failed, err.Error())
			if ctx.Err() != nil {
				break
			}
			continue
		}
		run.Files++
	}
	var notes []string
	// Counted again: this sync's loads may have taken rows over from the
	// files that are gone.
	if known, err = db.SourceFiles(context.WithoutCancel(ctx), src.Name); err != nil {
		failed = append(failed, err.Error())
	}
	for _, f := range known {
		switch {
		case seen[f.Path]:
		case f.Rows == 0:
			notes = append(notes, fmt.Sprintf("%s is gone; other files hold all its rows now (costdrift sync --forget %s drops its record)",
				f.Path, f.Path))
		default:
			notes = append(notes, fmt.Sprintf("%s is gone; its %d rows are kept (costdrift sync --forget %s drops them)",
				f.Path, f.Rows, f.Path))
		}
	}
	switch {
	case len(failed) == 1:
		return notes, errors.New(failed[0] + "; nothing of that file was stored")
	case len(failed) > 1:
		return notes, fmt.Errorf("%d files failed, nothing of them stored: %s", len(failed), strings.Join(failed, "; "))
	}
	return notes, nil
}

// syncQuery syncs a database source in one transaction: a full refresh
// (rows no longer returned are removed) or, with a watermark, only new rows.
func syncQuery(ctx context.Context, e *env, db *sqlite.DB, role costdrift.Role, src config.Source, run *costdrift.SyncRun, read queryReader) error {
	watermark := ""
	if src.Refresh == "watermark" {
		var err error
		if watermark, _, err = db.Watermark(ctx, src.Name); err != nil {
			return err
		}
	}
	var warnings []string
	err := db.LoadQuery(ctx, run, src.Refresh != "watermark", func(w costdrift.SourceWriter) (string, error) {
		n, mark, warns, err := read(ctx, e, role, src, watermark, w)
		run.RowsRead += n
		warnings = warns
		return mark, err
	})
	// After the load: a failed batch resets the run's counts, but a login
	// that can write is worth knowing about either way.
	run.Warnings = append(run.Warnings, warnings...)
	return err
}

// syncGCPercent is the garbage collector's target during a sync (Go's
// default is 100).
const syncGCPercent = 400

// progressMinBytes is the size from which a file shows a progress line.
const progressMinBytes = 20 << 20

// isTerminal reports whether w is a terminal, where a progress line that
// rewrites itself makes sense; in a log it would only be noise.
func isTerminal(w io.Writer) bool {
	f, ok := w.(*os.File)
	if !ok {
		return false
	}
	st, err := f.Stat()
	return err == nil && st.Mode()&os.ModeCharDevice != 0
}

// fingerprint reads a file's size and SHA-256, streaming.
func fingerprint(path, display string) (costdrift.SourceFile, error) {
	f, err := os.Open(path)
	if err != nil {
		return costdrift.SourceFile{}, fmt.Errorf("cannot read %s: %v", display, unwrapPath(err))
	}
	defer f.Close()
	st, err := f.Stat()
	if err != nil {
		return costdrift.SourceFile{}, fmt.Errorf("cannot read %s: %v", display, unwrapPath(err))
	}
	if st.IsDir() {
		return costdrift.SourceFile{}, fmt.Errorf("cannot read %s: it is a folder, not a file", display)
	}
	h := sha256.New()
	n, err := io.Copy(h, f)
	if err != nil {
		return costdrift.SourceFile{}, fmt.Errorf("cannot read %s: %v", display, unwrapPath(err))
	}
	return costdrift.SourceFile{Path: path, Size: n, SHA256: hex.EncodeToString(h.Sum(nil))}, nil
}

func unwrapPath(err error) error {
	var pe *os.PathError
	if errors.As(err, &pe) {
		return pe.Err
	}
	return err
}

// displayPath names a file relative to the config's folder when it was
// configured relatively.
func displayPath(e *env, src config.Source, path string) string {
	if filepath.IsAbs(src.Path) {
		return path
	}
	if rel, err := filepath.Rel(filepath.Dir(e.cfg.File), path); err == nil {
		return rel
	}
	return path
}

// forgetFiles drops what vanished files loaded, from whichever source
// loaded them.
func forgetFiles(ctx context.Context, e *env, db *sqlite.DB, files []string, out io.Writer) error {
	var sources []string
	for _, list := range [][]config.Source{e.cfg.Sources.Ledger, e.cfg.Sources.Activity, e.cfg.Sources.Accounts} {
		for _, s := range list {
			sources = append(sources, s.Name)
		}
	}
	for _, f := range files {
		candidates := []string{f}
		if abs, err := filepath.Abs(f); err == nil {
			candidates = append(candidates, abs)
		}
		if !filepath.IsAbs(f) {
			candidates = append(candidates, filepath.Join(filepath.Dir(mustAbs(e.cfg.File)), f))
		}
		done := false
		for _, s := range sources {
			for _, c := range candidates {
				removed, givenBack, err := db.ForgetFile(ctx, s, c)
				if errors.Is(err, sqlite.ErrUnknownFile) {
					continue
				}
				if err != nil {
					return fmt.Errorf("forget %s: %w", c, err)
				}
				fmt.Fprintf(out, "forgot %s (source %s): %s rows removed", report.TerminalText(c), s, report.Number(float64(removed), 0))
				if givenBack > 0 {
					fmt.Fprintf(out, ", %s given back to the files that still hold them", report.Number(float64(givenBack), 0))
				}
				fmt.Fprintln(out)
				done = true
				break
			}
			if done {
				break
			}
		}
		if !done {
			return fmt.Errorf("no source has loaded %s; `sqlite3 %s \"SELECT source, path FROM source_files\"` lists the files it knows", f, db.Path())
		}
	}
	return nil
}

func mustAbs(p string) string {
	abs, err := filepath.Abs(p)
	if err != nil {
		return p
	}
	return abs
}
