package main

import (
	"errors"
	"fmt"
	"os"
	"os/user"
	"strings"

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
	var by, reason string
	var periods []string
	cmd := &cobra.Command{
		Use:   "exclude OBJECT",
		Short: "Leave periods out of an object's fit (a one-off, a booking error)",
		Long: `exclude leaves periods out of the object's fit from the next analysis on: they
are not fitted and not counted in n, explain lists them and its chart draws
them apart. The ledger is not changed. include undoes it.`,
		Args: cobra.ExactArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			who, err := decider(by)
			if err != nil {
				return err
			}
			return a.withStore(cmd.Context(), func(e *pipeline.Env, db *sqlite.DB) error {
				if err := pipeline.Exclude(cmd.Context(), e, db, args[0], periods, who, reason); err != nil {
					return err
				}
				_, err := fmt.Fprintf(a.out, "excluded %s from %s's fit; the next analysis fits it without them\n",
					report.TerminalText(strings.Join(periods, ",")), report.TerminalText(args[0]))
				return err
			})
		},
	}
	cmd.Flags().StringSliceVar(&periods, "period", nil, "the period, or periods separated by commas")
	cmd.Flags().StringVar(&reason, "reason", "", "why (required)")
	cmd.Flags().StringVar(&by, "by", "", "who decides (default: your user name)")
	return cmd
}

func (a *app) includeCommand() *cobra.Command {
	var by, reason string
	var periods []string
	cmd := &cobra.Command{
		Use:   "include OBJECT",
		Short: "Fit excluded periods again",
		Args:  cobra.ExactArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			who, err := decider(by)
			if err != nil {
				return err
			}
			return a.withStore(cmd.Context(), func(e *pipeline.Env, db *sqlite.DB) error {
				if err := pipeline.Include(cmd.Context(), e, db, args[0], periods, who, reason); err != nil {
					return err
				}
				_, err := fmt.Fprintf(a.out, "included %s in %s's fit again from the next analysis\n",
					report.TerminalText(strings.Join(periods, ",")), report.TerminalText(args[0]))
				return err
			})
		},
	}
	cmd.Flags().StringSliceVar(&periods, "period", nil, "the period, or periods separated by commas")
	cmd.Flags().StringVar(&reason, "reason", "", "why")
	cmd.Flags().StringVar(&by, "by", "", "who decides (default: your user name)")
	return cmd
}
