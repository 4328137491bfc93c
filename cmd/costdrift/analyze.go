package main

import (
	"fmt"
	"io"
	"os"
	"runtime/pprof"
	"sort"
	"strings"

	"github.com/spf13/cobra"

	"github.com/costdrift/costdrift/internal/pipeline"
	"github.com/costdrift/costdrift/internal/report"
	"github.com/costdrift/costdrift/internal/sqlite"
)

func (a *app) analyzeCommand() *cobra.Command {
	var all bool
	var cpuProfile string
	cmd := &cobra.Command{
		Use:   "analyze",
		Short: "Fit every driver to every cost object and classify its behaviour",
		Long: `analyze fits every driver at every lag to every cost object in scope and
classifies its behaviour. Objects whose costs, drivers and settings have not
changed since their last analysis are left as they were; --all refits them too.
The alerts that follow are raised and mailed, as in a cycle of the daemon.`,
		Args: cobra.NoArgs,
		RunE: func(cmd *cobra.Command, args []string) error {
			if cpuProfile != "" {
				stop, err := startCPUProfile(cpuProfile)
				if err != nil {
					return err
				}
				defer stop()
			}
			return a.withStoreToWrite(cmd.Context(), func(e *pipeline.Env, db *sqlite.DB) error {
				_, err := a.analyze(cmd, e, db, all)
				return err
			})
		},
	}
	cmd.Flags().BoolVar(&all, "all", false, "refit every object, changed or not")
	// For developers timing the command as a user runs it (make
	// bench-analyze); not a user's option, so not in --help.
	cmd.Flags().StringVar(&cpuProfile, "cpuprofile", "", "write a CPU profile of the command to this file")
	cmd.Flags().MarkHidden("cpuprofile")
	return cmd
}

// startCPUProfile writes a CPU profile to path until stop is called.
func startCPUProfile(path string) (stop func(), err error) {
	f, err := os.Create(path)
	if err != nil {
		return nil, fmt.Errorf("cpu profile: %w", err)
	}
	if err := pprof.StartCPUProfile(f); err != nil {
		f.Close()
		return nil, fmt.Errorf("cpu profile: %w", err)
	}
	return func() {
		pprof.StopCPUProfile()
		f.Close()
	}, nil
}

// analyze analyses, raises the alerts and mails them, printing each step.
func (a *app) analyze(cmd *cobra.Command, e *pipeline.Env, db *sqlite.DB, all bool) (*pipeline.AnalysisResult, error) {
	ctx := cmd.Context()
	res, err := pipeline.Analyze(ctx, e, db, all)
	if err != nil {
		return nil, err
	}
	printAnalysis(a.out, res)
	changes, err := pipeline.Raise(ctx, e, db, res)
	if err != nil {
		return nil, err
	}
	fmt.Fprintf(a.out, "alerts: %d new, %d escalated, %d reopened, %d resolved (costdrift alerts list)\n",
		len(changes.New), len(changes.Escalated), len(changes.Reopened), len(changes.Resolved))
	mail, err := pipeline.Deliver(ctx, e, db)
	printDeliveries(a.out, mail)
	if err != nil {
		return nil, fmt.Errorf("analyze: %w", err)
	}
	return res, nil
}

// printAnalysis says what an analysis did: the objects skipped, then one
// line with the window, the classes and the objects left as they were.
func printAnalysis(out io.Writer, res *pipeline.AnalysisResult) {
	for _, s := range res.Skipped {
		fmt.Fprintf(out, "analyze: %s skipped: %s\n", report.TerminalText(s.Object), report.TerminalText(s.Err.Error()))
	}
	if len(res.HeldBack) > 0 {
		for _, q := range res.HeldBack {
			period := q.Period
			if period == "" {
				period = "a file rejected whole"
			}
			fmt.Fprintf(out, "analyze: source %s, %s: %d of %d rows rejected, most in %s: %s\n", report.TerminalText(q.Source),
				report.TerminalText(period), q.Rejected, q.Read, report.TerminalText(q.File), report.TerminalText(q.Reason))
		}
		fmt.Fprintf(out, "analyze: all %d cost objects held back, each keeps its last analysis, until these periods are clean (costdrift alerts list --kind data_quality; README, When a sync goes wrong)\n",
			res.Run.Skipped)
		return
	}
	run := res.Run
	var counts []string
	for c, n := range res.Classes {
		counts = append(counts, fmt.Sprintf("%d %s", n, c))
	}
	sort.Strings(counts)
	fmt.Fprintf(out, "analysed %d cost objects over %s to %s (%d periods with postings)", run.Objects,
		run.WindowFrom, run.WindowTo, res.PeriodsWithPostings)
	if len(counts) > 0 {
		fmt.Fprintf(out, ": %s", strings.Join(counts, ", "))
	}
	if run.Skipped > 0 {
		fmt.Fprintf(out, "; %d unchanged since their last analysis were left as they were (--all refits them)", run.Skipped)
	}
	fmt.Fprintln(out)
}

// printDeliveries prints a line per digest of a delivery step.
func printDeliveries(out io.Writer, mail pipeline.DeliveryResult) {
	for _, d := range mail.Digests {
		switch {
		case d.Interrupted:
			fmt.Fprintf(out, "mail: %d alert(s) to %s not sent: interrupted; due again at the next cycle\n", d.Alerts, d.Recipient)
		case d.Err != "":
			fmt.Fprintf(out, "mail: %d alert(s) to %s not sent, retried on a later cycle: %s\n", d.Alerts, d.Recipient, d.Err)
		default:
			fmt.Fprintf(out, "mail: %d alert(s) to %s: %s\n", d.Alerts, d.Recipient, d.Answer)
		}
	}
}
