package main

import (
	"errors"
	"fmt"
	"io"
	"os"

	"github.com/spf13/cobra"

	"github.com/costdrift/costdrift/internal/pipeline"
	"github.com/costdrift/costdrift/internal/report"
)

func (a *app) syncCommand() *cobra.Command {
	var dryRun bool
	var forget []string
	cmd := &cobra.Command{
		Use:   "sync",
		Short: "Read every configured source into the store",
		Long: `sync reads every configured source into the store. Files that have not changed
since the last sync, and whose source's reading settings (columns, date_format,
decimal_comma, ...) have not changed either, are skipped; a changed file
replaces exactly the rows it loaded before, in one transaction. A file that has
disappeared keeps its rows until you drop them with --forget.`,
		Args: cobra.NoArgs,
		RunE: func(cmd *cobra.Command, args []string) error {
			e, err := a.loadConfig()
			if err != nil {
				return err
			}
			if dryRun && len(forget) > 0 {
				return errors.New("--dry-run and --forget cannot be combined")
			}
			a.showProgress(e)
			if dryRun {
				_, err := pipeline.DryRun(cmd.Context(), e, func(r pipeline.SourceResult) { printRun(a.out, "", r) })
				fmt.Fprintln(a.out, "dry run: nothing was written to the store")
				return err
			}
			db, closeStore, err := e.OpenToWrite(cmd.Context(), len(forget) > 0)
			if err != nil {
				return err
			}
			defer closeStore()
			if len(forget) > 0 {
				done, err := pipeline.Forget(cmd.Context(), e, db, forget)
				for _, f := range done {
					fmt.Fprintf(a.out, "forgot %s (source %s): %s rows removed", report.TerminalText(f.Path), report.TerminalText(f.Source), report.Number(float64(f.Removed), 0))
					if f.GivenBack > 0 {
						fmt.Fprintf(a.out, ", %s given back to the files that still hold them", report.Number(float64(f.GivenBack), 0))
					}
					fmt.Fprintln(a.out)
				}
				return err
			}
			_, err = pipeline.Sync(cmd.Context(), e, db, func(r pipeline.SourceResult) { printRun(a.out, db.Path(), r) })
			return err
		},
	}
	cmd.Flags().BoolVar(&dryRun, "dry-run", false, "read and check every source, report what would change, write nothing")
	cmd.Flags().StringArrayVar(&forget, "forget", nil, "drop the rows a vanished `FILE` loaded (repeatable); no sync is done")
	return cmd
}

// showProgress shows, on a terminal, how far a long file has been read, on
// a line that rewrites itself; in a log it would only be noise.
func (a *app) showProgress(e *pipeline.Env) {
	if !isTerminal(a.out) {
		return
	}
	out := a.out
	e.Progress = func(display string, done, total int64) {
		fmt.Fprintf(out, "\r  %s  %3.0f %%  (%s of %s MB)\033[K", report.TerminalText(display), 100*float64(done)/float64(total),
			report.Number(float64(done)/1e6, 0), report.Number(float64(total)/1e6, 0))
		if done >= total {
			fmt.Fprint(out, "\r\033[K")
		}
	}
}

// printRun prints one source's sync as a line, with its warnings and
// notes; store, when not empty, is where its rejects can be read.
func printRun(out io.Writer, store string, r pipeline.SourceResult) {
	run := r.Run
	n := func(v int) string { return report.Number(float64(v), 0) }
	files, unchanged := "", ""
	if run.Kind == "sql" {
		unchanged = ", " + n(run.RowsUnchanged) + " unchanged"
	} else {
		files = fmt.Sprintf("files: %d read, %d unchanged | ", run.Files, run.FilesSkipped)
	}
	status := ""
	if r.Err != nil {
		status = " | FAILED"
	}
	fmt.Fprintf(out, "%-10s %-8s %srows: %s read, %s stored%s, %s replaced, %s rejected%s\n", report.TerminalText(run.Source), run.Role, files,
		n(run.RowsRead), n(run.RowsLoaded), unchanged, n(run.RowsReplaced), n(run.RowsRejected), status)
	for _, w := range run.Warnings {
		fmt.Fprintf(out, "%-10s warning: %s\n", "", report.TerminalText(w))
	}
	for _, note := range r.Notes {
		fmt.Fprintf(out, "%-10s note: %s\n", "", report.TerminalText(note))
	}
	if run.RowsRejected > 0 && store != "" {
		fmt.Fprintf(out, "%-10s see why: sqlite3 %s \"SELECT location, reason FROM rejects WHERE sync_run_id = %d\"\n", "", report.TerminalText(store), run.ID)
	}
}

// isTerminal reports whether w is a terminal.
func isTerminal(w io.Writer) bool {
	f, ok := w.(*os.File)
	if !ok {
		return false
	}
	st, err := f.Stat()
	return err == nil && st.Mode()&os.ModeCharDevice != 0
}
