package pipeline

import (
	"context"
	"crypto/sha256"
	"encoding/hex"
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"runtime"
	"runtime/debug"
	"sort"
	"strings"

	"github.com/costdrift/costdrift/internal/alerts"
	"github.com/costdrift/costdrift/internal/config"
	"github.com/costdrift/costdrift/internal/costdrift"
	"github.com/costdrift/costdrift/internal/sqlite"
)

// SourceResult is what one source's sync did: its run as recorded in
// sync_runs, notes for the operator (files that vanished) and its error.
type SourceResult struct {
	Run   costdrift.SyncRun
	Notes []string
	Err   error
}

// Sync syncs every configured source, each file or query batch in one
// transaction; a failing file or source is recorded and the others go on.
// done, when not nil, is called as each source finishes, so that a caller
// can show progress. The error says which sources failed.
func Sync(ctx context.Context, e *Env, db *sqlite.DB, done func(SourceResult)) ([]SourceResult, error) {
	// A sync allocates a little for every field of every row while its live
	// heap stays small (a batch at a time); collecting garbage at five times
	// the live heap instead of twice cuts the collector's share of a large
	// load by a third, and memory stays bounded by the batch, not the file.
	defer debug.SetGCPercent(debug.SetGCPercent(syncGCPercent))
	// Five times a live heap that holds a large buffer (the balance
	// check's filter of a file of many unbalanced entries) is more than
	// the sync needs: the limit has the collector run sooner then. It
	// is counted from what the process holds already (a daemon's), so
	// that the collector does not run without end.
	var held runtime.MemStats
	runtime.ReadMemStats(&held)
	defer debug.SetMemoryLimit(debug.SetMemoryLimit(int64(held.HeapAlloc) + syncMemoryHeadroom))
	jobs := e.sources()
	if len(jobs) == 0 {
		return nil, fmt.Errorf("no sources configured: add sources.ledger in %s", e.Config.File)
	}
	var results []SourceResult
	var failed []string
	synced := 0
	for _, j := range jobs {
		run := costdrift.SyncRun{Source: j.src.Name, Role: j.role, Kind: j.src.Kind}
		if err := db.BeginSync(ctx, &run); err != nil {
			if ctx.Err() != nil {
				return results, fmt.Errorf("sync interrupted: %d of %d sources synced; %s not begun; sync again to complete it: %w",
					synced, len(jobs), j.src.Name, ctx.Err())
			}
			return results, err
		}
		notes, err := syncSource(ctx, e, db, j.role, j.src, &run)
		if err == nil && j.role == costdrift.RoleActivity && (run.Files > 0 || sourceKinds[j.src.Kind].query != nil && run.RowsLoaded > 0) {
			var warnings []string
			warnings, err = driverWarnings(ctx, db, j.src.Name)
			run.Warnings = append(run.Warnings, warnings...)
		}
		// Recorded even when ctx was cancelled (a stopping daemon), so that
		// sync_runs does not claim the run is still going.
		if ferr := db.FinishSync(context.WithoutCancel(ctx), &run, err); ferr != nil && err == nil {
			err = ferr
		}
		r := SourceResult{Run: run, Notes: notes, Err: err}
		results = append(results, r)
		if done != nil {
			done(r)
		}
		if err == nil {
			synced++
			continue
		}
		if ctx.Err() != nil {
			// Stopped by a signal: say what was done, and that the
			// source in hand stored only whole files.
			return results, fmt.Errorf("sync interrupted: %d of %d sources synced; %s stopped part way (each file is stored whole or not at all); sync again to complete it: %w",
				synced, len(jobs), j.src.Name, ctx.Err())
		}
		failed = append(failed, fmt.Sprintf("source %s failed: %v", j.src.Name, err))
	}
	// A file mostly rejected fails the sync, though its good rows are
	// stored: the data-quality alert holds the analysis back meanwhile.
	partial, qerr := mostlyRejected(ctx, db, results)
	if qerr != nil {
		partial = append(partial, fmt.Sprintf("reading what the files rejected: %v", qerr))
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
	case len(partial) > 0 && err != nil:
		err = fmt.Errorf("%w; %s", err, strings.Join(partial, "; "))
	case len(partial) > 0:
		err = errors.New(strings.Join(partial, "; "))
	}
	switch {
	case err != nil && alertErr != nil:
		return results, fmt.Errorf("%w; %w", err, alertErr)
	case alertErr != nil:
		return results, alertErr
	}
	return results, err
}

// raiseSourceAlerts raises source_failure for every source whose latest sync
// failed, and resolves it for those that synced again; and data_quality for
// every source period with too many rows rejected.
func raiseSourceAlerts(ctx context.Context, e *Env, db *sqlite.DB) error {
	states, err := sourceStates(ctx, e, db)
	if err != nil {
		return err
	}
	q, err := quality(ctx, e, db)
	if err != nil {
		return err
	}
	raised := append(alerts.SourceFailure(states), alerts.DataQuality(q, e.Config.Analysis.MaxRejectedShare)...)
	_, err = db.ApplyAlerts(ctx, raised, []costdrift.AlertKind{costdrift.AlertSourceFailure, costdrift.AlertDataQuality}, e.Calendar.Period(db.Now()))
	return err
}

// syncSource syncs one source into its run. It returns notes for the
// operator (files that vanished) and the first error.
func syncSource(ctx context.Context, e *Env, db *sqlite.DB, role costdrift.Role, src config.Source, run *costdrift.SyncRun) ([]string, error) {
	kind, ok := sourceKinds[src.Kind]
	if kind.query != nil {
		return syncQuery(ctx, e, db, role, src, run, kind.query)
	}
	read := kind.file
	if !ok || read == nil {
		return nil, fmt.Errorf("kind %q has no reader in this build", src.Kind)
	}
	pattern := e.Config.Path(src.Path)
	matches, err := filepath.Glob(pattern)
	if err != nil {
		return nil, fmt.Errorf("path %q is not a valid glob: %v", src.Path, err)
	}
	if len(matches) == 0 {
		return nil, fmt.Errorf("no file matches %s (sources %s path in %s)", pattern, src.Name, e.Config.File)
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

	var failed, notes []string
	settings := readingSettings(src)
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
			file.Source, file.Settings = src.Name, settings
			if old, ok := byPath[abs]; ok && old.Size == file.Size && old.SHA256 == file.SHA256 {
				changed := changedSettings(old.Settings, settings)
				if len(changed) == 0 {
					run.FilesSkipped++
					if old.Settings == "" {
						file.ID = old.ID
						if err := db.KeepSettings(ctx, file); err != nil {
							failed = append(failed, fmt.Sprintf("%s: recording its reading settings: %v", display, err))
						}
					}
					continue
				}
				notes = append(notes, fmt.Sprintf("%s read again: its reading settings changed (%s)", display, strings.Join(changed, ", ")))
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
// A watermark source whose reading settings (its query, its columns...)
// changed since its watermark was stored is refreshed in full once: rows
// past the watermark alone would leave the ones read the old way as they
// were.
func syncQuery(ctx context.Context, e *Env, db *sqlite.DB, role costdrift.Role, src config.Source, run *costdrift.SyncRun, read queryReader) ([]string, error) {
	watermark, settings, full := "", "", src.Refresh != "watermark"
	var notes []string
	if !full {
		settings = readingSettings(src)
		mark, kept, _, err := db.Watermark(ctx, src.Name)
		if err != nil {
			return nil, err
		}
		watermark = mark
		if changed := changedSettings(kept, settings); len(changed) > 0 {
			watermark, full = "", true
			notes = append(notes, fmt.Sprintf("%s read again in full: its reading settings changed (%s)",
				src.Name, strings.Join(changed, ", ")))
		}
	}
	var warnings []string
	err := db.LoadQuery(ctx, run, full, settings, func(w costdrift.SourceWriter) (string, error) {
		n, mark, warns, err := read(ctx, e, role, src, watermark, w)
		run.RowsRead += n
		warnings = warns
		return mark, err
	})
	// After the load: a failed batch resets the run's counts, but a login
	// that can write is worth knowing about either way.
	run.Warnings = append(run.Warnings, warnings...)
	return notes, err
}

// syncGCPercent is the garbage collector's target during a sync (Go's
// default is 100).
const syncGCPercent = 400

// syncMemoryHeadroom is how much memory the Go runtime may take during a
// sync beyond what it held before (SQLite's page cache is apart from it);
// it is a target, not a cap: a larger live heap still gets memory.
const syncMemoryHeadroom = 64 << 20

// progressMinBytes is the size from which a file shows a progress line.
const progressMinBytes = 20 << 20

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
func displayPath(e *Env, src config.Source, path string) string {
	if filepath.IsAbs(src.Path) {
		return path
	}
	if rel, err := filepath.Rel(filepath.Dir(e.Config.File), path); err == nil {
		return rel
	}
	return path
}
