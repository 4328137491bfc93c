package main

import (
	"context"
	"errors"
	"fmt"
	"io"
	"path/filepath"
	"sort"
	"strings"

	"github.com/spf13/cobra"

	"github.com/costdrift/costdrift/internal/config"
	"github.com/costdrift/costdrift/internal/costdrift"
	"github.com/costdrift/costdrift/internal/report"
	"github.com/costdrift/costdrift/internal/sqlite"
)

func (a *app) syncCommand() *cobra.Command {
	return &cobra.Command{
		Use:   "sync",
		Short: "Read every configured source into the store",
		Args:  cobra.NoArgs,
		RunE: func(cmd *cobra.Command, args []string) error {
			e, err := a.loadConfig()
			if err != nil {
				return err
			}
			db, err := a.openStore(cmd.Context(), e, false)
			if err != nil {
				return err
			}
			defer db.Close()
			_, err = syncAll(cmd.Context(), e, db, a.out)
			return err
		},
	}
}

// syncAll syncs every source, each in its own transaction. A failing source
// is reported and the others go on; the error says which failed.
func syncAll(ctx context.Context, e *env, db *sqlite.DB, out io.Writer) ([]costdrift.SyncRun, error) {
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
	for _, j := range jobs {
		run := costdrift.SyncRun{Source: j.src.Name, Role: j.role, Kind: j.src.Kind}
		err := db.LoadSource(ctx, &run, func(w costdrift.SourceWriter) error {
			return readSource(ctx, e, j.role, j.src, &run, w)
		})
		runs = append(runs, run)
		if err != nil {
			reason := err
			if inner := errors.Unwrap(err); inner != nil {
				reason = inner
			}
			failed = append(failed, fmt.Sprintf("source %s failed, nothing of it stored: %v", j.src.Name, reason))
			fmt.Fprintf(out, "%-10s %s: failed\n", run.Source, run.Role)
			if ctx.Err() != nil {
				break
			}
			continue
		}
		fmt.Fprintf(out, "%-10s %s: %d file(s), %s rows read, %s stored, %s unchanged, %s rejected\n", run.Source, run.Role, run.Files,
			report.Number(float64(run.RowsRead), 0), report.Number(float64(run.RowsLoaded), 0),
			report.Number(float64(run.RowsUnchanged), 0), report.Number(float64(run.RowsRejected), 0))
		if run.RowsRejected > 0 {
			fmt.Fprintf(out, "%-10s see why: sqlite3 %s \"SELECT location, reason FROM rejects WHERE sync_run_id = %d\"\n", "", db.Path(), run.ID)
		}
	}
	switch {
	case len(failed) == 1:
		return runs, errors.New(failed[0])
	case len(failed) > 1:
		return runs, fmt.Errorf("%d of %d sources failed: %s", len(failed), len(jobs), strings.Join(failed, "; "))
	}
	return runs, nil
}

// readSource reads every file a source's path matches, in name order.
func readSource(ctx context.Context, e *env, role costdrift.Role, src config.Source, run *costdrift.SyncRun, w costdrift.SourceWriter) error {
	if read, ok := queryKinds[src.Kind]; ok {
		n, err := read(ctx, e, role, src, w)
		run.RowsRead += n
		return err
	}
	pattern := e.cfg.Path(src.Path)
	files, err := filepath.Glob(pattern)
	if err != nil {
		return fmt.Errorf("path %q is not a valid glob: %v", src.Path, err)
	}
	if len(files) == 0 {
		return fmt.Errorf("no file matches %s (sources %s path in %s)", pattern, src.Name, e.cfg.File)
	}
	sort.Strings(files)
	read, ok := fileKinds[src.Kind]
	if !ok {
		return fmt.Errorf("kind %q reads no files", src.Kind)
	}
	for _, f := range files {
		display := f
		if rel, err := filepath.Rel(filepath.Dir(e.cfg.File), f); err == nil && !filepath.IsAbs(src.Path) {
			display = rel
		}
		n, err := read(ctx, e, role, src, f, display, w)
		run.RowsRead += n
		if err != nil {
			return err
		}
		run.Files++
	}
	return nil
}
