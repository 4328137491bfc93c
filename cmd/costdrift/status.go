package main

import (
	"fmt"
	"io"
	"sort"
	"strings"
	"time"

	"github.com/spf13/cobra"

	"github.com/costdrift/costdrift/internal/costdrift"
	"github.com/costdrift/costdrift/internal/pipeline"
	"github.com/costdrift/costdrift/internal/report"
	"github.com/costdrift/costdrift/internal/sqlite"
)

func (a *app) statusCommand() *cobra.Command {
	var limit int
	cmd := &cobra.Command{
		Use:   "status",
		Short: "Show the latest daemon cycles and sync runs from the store",
		Args:  cobra.NoArgs,
		RunE: func(cmd *cobra.Command, args []string) error {
			if limit < 1 {
				return fmt.Errorf("--limit must be at least 1, not %d", limit)
			}
			// Reading only: no lock, so status works beside a running daemon.
			return a.withStore(cmd.Context(), func(_ *pipeline.Env, db *sqlite.DB) error {
				cycles, err := db.Cycles(cmd.Context(), limit)
				if err != nil {
					return fmt.Errorf("status: %w", err)
				}
				runs, err := db.SyncRuns(cmd.Context(), limit)
				if err != nil {
					return fmt.Errorf("status: %w", err)
				}
				writeStatus(a.out, cycles, runs)
				return nil
			})
		},
	}
	cmd.Flags().IntVar(&limit, "limit", 10, "how many cycles and sync runs to show")
	return cmd
}

func writeStatus(w io.Writer, cycles []costdrift.Cycle, runs []costdrift.SyncRun) {
	fmt.Fprintln(w, "Cycles, newest first")
	if len(cycles) == 0 {
		fmt.Fprintln(w, "  none yet: the daemon (costdrift run) has not run a cycle on this store")
	}
	for _, c := range cycles {
		took := "-"
		if !c.FinishedAt.IsZero() {
			took = c.FinishedAt.Sub(c.StartedAt).String()
		}
		names := make([]string, 0, len(c.Stages))
		for n := range c.Stages {
			names = append(names, n)
		}
		sort.Strings(names)
		stages := make([]string, len(names))
		for i, n := range names {
			stages[i] = fmt.Sprintf("%s %s", n, c.Stages[n].Round(time.Millisecond))
		}
		fmt.Fprintf(w, "  #%-5d %s  %-7s %-8s %s\n", c.ID, clockTime(c.StartedAt), c.Status, took, strings.Join(stages, ", "))
		if c.Error != "" {
			fmt.Fprintf(w, "         %s\n", report.TerminalText(c.Error))
		}
	}
	fmt.Fprintln(w)
	fmt.Fprintln(w, "Sync runs, newest first")
	if len(runs) == 0 {
		fmt.Fprintln(w, "  none yet")
	}
	for _, r := range runs {
		fmt.Fprintf(w, "  #%-5d %s  %-7s %s (%s, %s): %d file(s), %d unchanged; rows %d read, %d loaded, %d rejected\n",
			r.ID, clockTime(r.StartedAt), r.Status, report.TerminalText(r.Source), r.Role, r.Kind, r.Files, r.FilesSkipped,
			r.RowsRead, r.RowsLoaded, r.RowsRejected)
		if r.Error != "" {
			fmt.Fprintf(w, "         %s\n", report.TerminalText(r.Error))
		}
		for _, warning := range r.Warnings {
			fmt.Fprintf(w, "         warning: %s\n", report.TerminalText(warning))
		}
	}
}
