package main

import (
	"context"
	"errors"
	"fmt"
	"os"
	"os/user"
	"strings"
	"text/tabwriter"

	"github.com/spf13/cobra"

	"github.com/costdrift/costdrift/internal/pipeline"
	"github.com/costdrift/costdrift/internal/report"
	"github.com/costdrift/costdrift/internal/sqlite"
)

// Decision commands write one short transaction each and take no lock, so
// that they work while the daemon runs (README "The accountant's
// decisions").

// decider is who a decision is recorded under: --by, else the
// operating-system user.
func decider(by string) (string, error) {
	if by = strings.TrimSpace(by); by != "" {
		return by, nil
	}
	if u, err := user.Current(); err == nil && u.Username != "" {
		return u.Username, nil
	}
	if name := os.Getenv("USER"); name != "" {
		return name, nil
	}
	return "", errors.New("cannot tell who you are: give --by NAME")
}

func (a *app) pinCommand() *cobra.Command {
	var in pipeline.PinInput
	cmd := &cobra.Command{
		Use:   "pin OBJECT",
		Short: "Set an object's formula by decision: reports, budgets and variances use it",
		Long: `pin records the formula you know an object follows (a rent fixed by contract,
a rate agreed with a supplier). Reports show it beside the data's estimate,
with who pinned it, when and why; budgets and variances use it until it is
unpinned or --until has passed. The analysis goes on fitting the data and
raises an alert when they contradict the pinned formula.

  fixed     --fixed AMOUNT
  variable  --driver D --rate AMOUNT
  mixed     --driver D --fixed AMOUNT --rate AMOUNT
  step      --fixed AMOUNT (the level in force) [--driver D]`,
		Args: cobra.ExactArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			by, err := decider(in.By)
			if err != nil {
				return err
			}
			in.Object, in.By = args[0], by
			return a.withStore(cmd.Context(), func(e *pipeline.Env, db *sqlite.DB) error {
				p, err := pipeline.Pin(cmd.Context(), e, db, in)
				if err != nil {
					return err
				}
				until := ""
				if p.Until != "" {
					until = " until " + p.Until
				}
				_, err = fmt.Fprintf(a.out, "pinned %s as %s%s (decision %d, by %s)\n", report.TerminalText(p.Object), p.Class, report.TerminalText(until), p.DecisionID, report.TerminalText(p.By))
				return err
			})
		},
	}
	f := cmd.Flags()
	f.StringVar(&in.Class, "class", "", "fixed, variable, mixed or step")
	f.StringVar(&in.Driver, "driver", "", "the activity driver of a variable or mixed formula")
	f.IntVar(&in.Lag, "lag", 0, "periods the driver leads the cost")
	f.StringVar(&in.Fixed, "fixed", "", "the fixed cost per period, in the store's currency")
	f.StringVar(&in.Rate, "rate", "", "the cost per unit of the driver")
	f.StringVar(&in.Until, "until", "", "the last period the pin holds (default: until unpinned)")
	f.StringVar(&in.Reason, "reason", "", "why (required)")
	f.StringVar(&in.By, "by", "", "who decides (default: your user name)")
	return cmd
}

func (a *app) unpinCommand() *cobra.Command {
	var by, reason string
	cmd := &cobra.Command{
		Use:   "unpin OBJECT",
		Short: "Take a pin off: the object's formula is the data's again",
		Args:  cobra.ExactArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			who, err := decider(by)
			if err != nil {
				return err
			}
			return a.withStore(cmd.Context(), func(e *pipeline.Env, db *sqlite.DB) error {
				if err := pipeline.Unpin(cmd.Context(), e, db, args[0], who, reason); err != nil {
					return err
				}
				_, err := fmt.Fprintf(a.out, "unpinned %s\n", report.TerminalText(args[0]))
				return err
			})
		},
	}
	cmd.Flags().StringVar(&reason, "reason", "", "why (required)")
	cmd.Flags().StringVar(&by, "by", "", "who decides (default: your user name)")
	return cmd
}

func (a *app) excludeCommand() *cobra.Command {
	return a.periodsCommand("exclude OBJECT", "Leave periods out of an object's fit (a one-off, a booking error)",
		`exclude leaves periods out of the object's fit from the next analysis on: they
are not fitted and not counted in n, explain lists them and its chart draws
them apart. The ledger is not changed. include undoes it.`, "why (required)", pipeline.Exclude,
		"excluded %s from %s's fit; the next analysis fits it without them\n")
}

func (a *app) includeCommand() *cobra.Command {
	return a.periodsCommand("include OBJECT", "Fit excluded periods again", "", "why", pipeline.Include,
		"included %s in %s's fit again from the next analysis\n")
}

// periodsCommand is exclude or include: a decision on some periods of one
// object, made by decide and told by done (periods, then the object).
func (a *app) periodsCommand(use, short, long, reasonHelp string,
	decide func(ctx context.Context, e *pipeline.Env, db *sqlite.DB, object string, periods []string, by, reason string) error,
	done string) *cobra.Command {
	var by, reason string
	var periods []string
	cmd := &cobra.Command{
		Use:   use,
		Short: short,
		Long:  long,
		Args:  cobra.ExactArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			who, err := decider(by)
			if err != nil {
				return err
			}
			return a.withStore(cmd.Context(), func(e *pipeline.Env, db *sqlite.DB) error {
				if err := decide(cmd.Context(), e, db, args[0], periods, who, reason); err != nil {
					return err
				}
				_, err := fmt.Fprintf(a.out, done, report.TerminalText(strings.Join(periods, ",")), report.TerminalText(args[0]))
				return err
			})
		},
	}
	cmd.Flags().StringSliceVar(&periods, "period", nil, "the period, or periods separated by commas")
	cmd.Flags().StringVar(&reason, "reason", "", reasonHelp)
	cmd.Flags().StringVar(&by, "by", "", "who decides (default: your user name)")
	return cmd
}

func (a *app) approveCommand() *cobra.Command {
	return a.approvalCommand("approve", "Approve an object's new formula: budgets and variances use it from now on",
		"why (optional)", func(cmd *cobra.Command, e *pipeline.Env, db *sqlite.DB, object, by, reason string) error {
			return pipeline.Approve(cmd.Context(), e, db, object, by, reason)
		})
}

func (a *app) declineCommand() *cobra.Command {
	return a.approvalCommand("decline", "Decline an object's new formula: budgets keep the approved one until the analysis finds another",
		"why (required)", func(cmd *cobra.Command, e *pipeline.Env, db *sqlite.DB, object, by, reason string) error {
			return pipeline.Decline(cmd.Context(), e, db, object, by, reason)
		})
}

func (a *app) approvalCommand(name, short, reasonDoc string, do func(*cobra.Command, *pipeline.Env, *sqlite.DB, string, string, string) error) *cobra.Command {
	var by, reason string
	cmd := &cobra.Command{
		Use:   name + " OBJECT",
		Short: short,
		Long: short + `.
With analysis.approval: required, a new class, driver or formula the analysis
finds waits for approval; ` + "`costdrift proposals`" + ` lists what waits.`,
		Args: cobra.ExactArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			who, err := decider(by)
			if err != nil {
				return err
			}
			return a.withStore(cmd.Context(), func(e *pipeline.Env, db *sqlite.DB) error {
				if err := do(cmd, e, db, args[0], who, reason); err != nil {
					return err
				}
				past := map[string]string{"approve": "approved", "decline": "declined"}[name]
				_, err := fmt.Fprintf(a.out, "%s the formula of %s (by %s)\n", past, report.TerminalText(args[0]), report.TerminalText(who))
				return err
			})
		},
	}
	cmd.Flags().StringVar(&reason, "reason", "", reasonDoc)
	cmd.Flags().StringVar(&by, "by", "", "who decides (default: your user name)")
	return cmd
}

func (a *app) proposalsCommand() *cobra.Command {
	return &cobra.Command{
		Use:   "proposals",
		Short: "List the formulas that wait for approval, oldest first",
		Args:  cobra.NoArgs,
		RunE: func(cmd *cobra.Command, args []string) error {
			return a.withStore(cmd.Context(), func(e *pipeline.Env, db *sqlite.DB) error {
				ps, err := pipeline.Proposals(cmd.Context(), db)
				if err != nil {
					return fmt.Errorf("proposals: %w", err)
				}
				if len(ps) == 0 {
					note := ""
					if e.Config.Analysis.Approval != "required" {
						note = " (analysis.approval is none: budgets use each new formula at once)"
					}
					_, err := fmt.Fprintf(a.out, "nothing waits for approval%s\n", note)
					return err
				}
				tw := tabwriter.NewWriter(a.out, 0, 0, 2, ' ', 0)
				fmt.Fprintf(tw, "OBJECT\tFOUND\tPROPOSED (%s per period)\tAPPROVED\n", e.Currency.Code)
				for _, p := range ps {
					approved := "-"
					if p.Approved != nil {
						approved = report.Formula(*p.Approved) + " (" + p.State.ApprovedBy + ", " + p.State.ApprovedAt.UTC().Format("2006-01-02") + ")"
					}
					fmt.Fprintf(tw, "%s\t%s\t%s\t%s\n", report.TerminalText(p.Current.Object.String()), p.State.ProposedAt.UTC().Format("2006-01-02"),
						report.TerminalText(report.Formula(p.Current)), report.TerminalText(approved))
				}
				if err := tw.Flush(); err != nil {
					return err
				}
				_, err = fmt.Fprintln(a.out, "\n`costdrift approve OBJECT` adopts a proposed formula; `costdrift decline OBJECT --reason TEXT` keeps the approved one.")
				return err
			})
		},
	}
}
