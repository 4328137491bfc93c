package main

import (
	"context"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"

	"github.com/spf13/cobra"

	"github.com/costdrift/costdrift/internal/atomicfile"
	"github.com/costdrift/costdrift/internal/config"
	"github.com/costdrift/costdrift/internal/costdrift"
	"github.com/costdrift/costdrift/internal/demo"
	"github.com/costdrift/costdrift/internal/pipeline"
	"github.com/costdrift/costdrift/internal/report"
	"github.com/costdrift/costdrift/internal/sqlite"
)

func (a *app) demoCommand() *cobra.Command {
	var dir string
	cmd := &cobra.Command{
		Use:   "demo",
		Short: "Write an invented company's books, then sync, analyse and report on them",
		Long: `demo writes 36 months of ledger and activity data for Quillfeather Frames, an
invented bicycle-frame workshop, with a config beside them; then it syncs,
analyses and prints the report, and says how to query the store.`,
		Args: cobra.NoArgs,
		RunE: func(cmd *cobra.Command, args []string) error {
			return a.demo(cmd, dir)
		},
	}
	cmd.Flags().StringVar(&dir, "dir", "costdrift-demo", "folder for the demo's data, config and store")
	return cmd
}

func (a *app) demo(cmd *cobra.Command, dir string) error {
	ctx := cmd.Context()
	if err := os.MkdirAll(dir, 0o700); err != nil {
		return fmt.Errorf("demo folder %s: %w", dir, err)
	}
	files, err := demo.Write(dir, demo.DefaultSeed)
	if err != nil {
		return fmt.Errorf("demo data: %w", err)
	}
	a.configPath = filepath.Join(dir, "costdrift.yaml")
	// Whole or not at all: a half-written config would be kept by the
	// next demo as "the existing" one.
	text, err := demoConfig()
	if err != nil {
		return err
	}
	err = atomicfile.WriteNew(a.configPath, 0o600, func(w io.Writer) error {
		_, err := io.WriteString(w, text)
		return err
	})
	switch {
	case errors.Is(err, fs.ErrExist):
		fmt.Fprintf(a.out, "keeping the existing %s\n", a.configPath)
	case err != nil:
		return err
	}
	fmt.Fprintf(a.out, "%s (an invented company): 36 months of ledger and activity written to %s\n\n", demo.Company, filepath.Join(dir, "data"))

	e, err := a.loadConfig()
	if err != nil {
		return err
	}
	db, closeStore, err := e.OpenToWrite(ctx, false)
	if err != nil {
		return err
	}
	defer closeStore()
	a.showProgress(e)
	if _, err := pipeline.Sync(ctx, e, db, func(r pipeline.SourceResult) { printRun(a.out, db.Path(), r) }); err != nil {
		return err
	}
	if err := a.demoDecisions(cmd, e, db); err != nil {
		return err
	}
	res, err := a.analyze(cmd, e, db, false)
	if err != nil {
		return err
	}
	run := res.Run
	fmt.Fprintln(a.out)
	if err := a.writeReport(ctx, e, db, outputFlags{format: "table"}, report.Filter{}); err != nil {
		return err
	}

	bs, err := db.CurrentBehaviour(ctx)
	if err != nil {
		return err
	}
	found := map[string]string{}
	for _, b := range bs {
		found[b.Object.String()] = string(b.Class) + " " + b.Driver
		if b.Driver != "" && b.Lag > 0 {
			found[b.Object.String()] += fmt.Sprintf(" (lag %d)", b.Lag)
		}
	}
	fmt.Fprintln(a.out, "\nDesigned into the demo data, and what the analysis found:")
	for _, x := range demo.Expectations() {
		obj := x.Account + "/" + x.CostCenter
		designed := x.Class + " " + x.Driver
		if x.Lag > 0 {
			designed += fmt.Sprintf(" (lag %d)", x.Lag)
		}
		line := fmt.Sprintf("  %-10s %-24s designed %-32s found %s", obj, x.AccountName, designed, report.TerminalText(found[obj]))
		if x.Drift != "" {
			line += "   [drift: " + x.Drift + "]"
		}
		fmt.Fprintln(a.out, line)
	}
	fmt.Fprintf(a.out, "  Prices rise 3 %% a year (%s, 100 at 2026-06); every cost but those fixed by contract (accounts %s) follows\n"+
		"  them. analysis.deflator restates the others at prices of 2026-06 before the fit, so the designed formulas are found again.\n",
		demo.Deflator, strings.Join(demo.DeflatorExempt(), ", "))
	fmt.Fprintln(a.out, "\nAlerts (costdrift alerts list):")
	if err := a.listAlerts(ctx, db); err != nil {
		return err
	}

	// The budget and the variance report are kept under the plan's and the
	// period's names, for the queries printed below.
	next, closed := filepath.Join(dir, files.PlanNext), filepath.Join(dir, files.PlanClosed)
	nextName := strings.TrimSuffix(filepath.Base(next), filepath.Ext(next))
	fmt.Fprintf(a.out, "\nThe company's plan for the next quarter, budgeted with the formulas (costdrift budget --plan %s --save %s):\n\n", next, nextName)
	if err := a.budget(ctx, e, db, next, nextName, false, outputFlags{format: "table"}); err != nil {
		return err
	}
	fmt.Fprintf(a.out, "\n%s against its flexible budget and the quarter's plan (costdrift variance --period %s --plan %s --save %s):\n\n",
		run.WindowTo, run.WindowTo, closed, run.WindowTo)
	if err := a.variance(ctx, e, db, run.WindowTo, closed, run.WindowTo, outputFlags{format: "table"}); err != nil {
		return err
	}
	fmt.Fprintf(a.out, "\nThe frames' break-even at %s a frame, with the plan's first month as reference (costdrift breakeven --volume frames_built --price %s --plan %s):\n\n",
		strconv.FormatFloat(demoFramePrice, 'f', -1, 64), strconv.FormatFloat(demoFramePrice, 'f', -1, 64), next)
	if err := a.breakeven(ctx, e, db, pipeline.BreakEvenRequest{Driver: "frames_built", Price: demoFramePrice, PlanPath: next}, "table"); err != nil {
		return err
	}
	if e.Config.Mail.SMTP.Host == "" {
		fmt.Fprintf(a.out, "\nAlert mail goes to the folder %s while mail.smtp.host is empty: open its .eml files in a mail client.\n",
			e.Config.Path(e.Config.Mail.Outbox))
	}
	fmt.Fprintf(a.out, "\nThe store is %s. Query it with sqlite3, for example:\n", db.Path())
	fmt.Fprintf(a.out, "  sqlite3 -header -column %s \"SELECT object, class, driver, round(fixed_per_period, 2) AS fixed, round(variable_rate, 4) AS rate, round(r2, 3) AS r2 FROM current_behaviour\"\n", db.Path())
	fmt.Fprintf(a.out, "  sqlite3 -header -column %s \"SELECT driver, lag, model, round(r2, 3) AS r2, slope_adjusted_p FROM fits WHERE object = '6200/WELD' AND model = 'linear' ORDER BY press LIMIT 5\"\n", db.Path())
	fmt.Fprintf(a.out, "  sqlite3 -header -column %s \"SELECT period, amount, driver_value FROM cost_with_drivers WHERE account = '5100' AND driver = 'frames_built' LIMIT 6\"\n", db.Path())
	fmt.Fprintf(a.out, "  sqlite3 -header -column %s \"SELECT period, cost_center, round(budget) AS budget, round(low95) AS low95, round(high95) AS high95 FROM flexible_budget WHERE line <> 'object'\"\n", db.Path())
	return nil
}

// demoAccountant is who the demo's decisions are recorded under.
const demoAccountant = "demo"

// demoDecisions records what the company's accountant knows and the ledger
// does not (README "The accountant's decisions"), before the analysis: the
// assembly hall's rent is fixed by its lease at the designed amount, so it
// is pinned there; the paint shop's rent carries a one-off service-charge
// true-up in one period (the one farthest from its lease amount), which is
// left out of its fit.
func (a *app) demoDecisions(cmd *cobra.Command, e *pipeline.Env, db *sqlite.DB) error {
	ctx := cmd.Context()
	lease := map[string]float64{}
	for _, x := range demo.Expectations() {
		if x.Account == "6100" {
			lease[x.Account+"/"+x.CostCenter] = x.Fixed
		}
	}
	pinned, excluded := "6100/ASSY", "6100/PAINT"
	amount := fmt.Sprintf("%.2f", lease[pinned])
	reason := "lease contract: " + report.Number(lease[pinned], 2) + " a month"
	if _, err := pipeline.Pin(ctx, e, db, pipeline.PinInput{Object: pinned, Class: string(costdrift.Fixed), Fixed: amount,
		Reason: reason, By: demoAccountant}); err != nil {
		return fmt.Errorf("demo: %w", err)
	}
	periods, costs, err := pipeline.ObjectPeriods(ctx, e, db, excluded)
	if err != nil {
		return fmt.Errorf("demo: %w", err)
	}
	period, far := "", -1.0
	for i, p := range periods {
		if d := math.Abs(costs[i] - lease[excluded]); d > far {
			period, far = p, d
		}
	}
	if period == "" {
		return fmt.Errorf("demo: %s has no cost in the window", excluded)
	}
	why := "service-charge true-up for the prior year, booked once"
	if err := pipeline.Exclude(ctx, e, db, excluded, []string{period}, demoAccountant, why); err != nil {
		return fmt.Errorf("demo: %w", err)
	}
	fmt.Fprintf(a.out, "\nThe accountant's decisions, recorded with who, when and why (README, The accountant's decisions):\n")
	fmt.Fprintf(a.out, "  costdrift pin %s --class fixed --fixed %s --reason %q --by %s\n", pinned, amount, reason, demoAccountant)
	fmt.Fprintf(a.out, "  costdrift exclude %s --period %s --reason %q --by %s\n\n", excluded, period, why, demoAccountant)
	return nil
}

// listAlerts prints the open and acknowledged alerts as `alerts list` does.
func (a *app) listAlerts(ctx context.Context, db *sqlite.DB) error {
	list, err := db.Alerts(ctx, sqlite.AlertFilter{})
	if err != nil {
		return err
	}
	return writeAlertsTable(a.out, list, "")
}

// demoConfig is the demo's config: the starter with the invented company's
// price index as its deflator and its contracts exempt (README, Prices and
// inflation).
func demoConfig() (string, error) {
	return config.StarterWith(map[string]any{"analysis.deflator": demo.Deflator, "analysis.deflator_exempt": demo.DeflatorExempt()})
}
