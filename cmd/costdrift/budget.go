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
	"github.com/xuri/excelize/v2"

	"github.com/costdrift/costdrift/internal/atomicfile"
	"github.com/costdrift/costdrift/internal/budget"
	"github.com/costdrift/costdrift/internal/costdrift"
	"github.com/costdrift/costdrift/internal/csvsource"
	"github.com/costdrift/costdrift/internal/report"
	"github.com/costdrift/costdrift/internal/sqlite"
	"github.com/costdrift/costdrift/internal/xlsxsource"
)

// outputFlags are the --format and --output of budget and variance.
type outputFlags struct {
	format string
	output string
}

func (o *outputFlags) add(cmd *cobra.Command) {
	cmd.Flags().StringVar(&o.format, "format", "table", "table, csv, json or xlsx")
	cmd.Flags().StringVar(&o.output, "output", "", "write to this file instead of the terminal (needed for xlsx)")
}

func (o *outputFlags) check() error {
	switch o.format {
	case "table", "csv", "json":
		return nil
	case "xlsx":
		if o.output == "" {
			return errors.New("--format xlsx writes a workbook: name it with --output FILE.xlsx")
		}
		return nil
	}
	return fmt.Errorf("--format must be table, csv, json or xlsx, not %q", o.format)
}

// write sends what render writes to --output or to out. The file is
// written whole or not at all, so that a failed export (a full disk)
// leaves an earlier one as it was, and owner-only, also over an earlier
// file readable by others: budgets come from confidential ledger data.
func (o *outputFlags) write(out io.Writer, render func(io.Writer) error) error {
	if o.output == "" {
		return render(out)
	}
	// render's own errors come back as they are; the file system's name
	// the file: "write out/budget.csv: no space left on device".
	return atomicfile.Write(o.output, 0o600, render)
}

func (a *app) budgetCommand() *cobra.Command {
	var planPath string
	var out outputFlags
	cmd := &cobra.Command{
		Use:   "budget --plan FILE",
		Short: "Budget each cost from its formula at the planned activity, with prediction intervals",
		Long: `budget reads planned activity per period (a CSV or XLSX file with the columns
period, driver, value and optionally cost_center, or period and one column per
driver) and budgets every cost object's current formula at it: fixed + rate ×
planned activity, the level for a step cost, the mean for a cost no driver
explains. Each budget has its 80 % and 95 % prediction intervals; totals per
cost centre and overall add the objects' variances, assuming their deviations
are independent. A driver with a lag takes the period before from the plan or,
failing that, from the actual activity in the store.

The plan and the budget are kept in the store (tables plans and budget_lines,
view flexible_budget); budget writes nothing else, so it runs beside a daemon.`,
		Args: cobra.NoArgs,
		RunE: func(cmd *cobra.Command, args []string) error {
			if planPath == "" {
				return errors.New("budget needs --plan FILE: planned activity per period (period, driver, value[, cost_center])")
			}
			if err := out.check(); err != nil {
				return err
			}
			return a.withStore(cmd.Context(), func(e *env, db *sqlite.DB) error {
				return a.budget(cmd.Context(), e, db, planPath, out)
			})
		},
	}
	cmd.Flags().StringVar(&planPath, "plan", "", "planned activity, CSV or XLSX")
	out.add(cmd)
	return cmd
}

func (a *app) budget(ctx context.Context, e *env, db *sqlite.DB, planPath string, out outputFlags) error {
	actual, known, err := storedActivity(ctx, db)
	if err != nil {
		return err
	}
	plan, err := readPlan(ctx, e, planPath, known)
	if err != nil {
		return err
	}
	bs, err := db.CurrentBehaviour(ctx)
	if err != nil {
		return fmt.Errorf("budget: %w", err)
	}
	bs, err = inScope(e, bs)
	if err != nil {
		return err
	}
	if len(bs) == 0 {
		return errors.New("budget: no cost behaviour stored yet: run `costdrift analyze` first")
	}
	lines := budget.Flexible(bs, plan.periods(), activityLookup(actual, plan.activityIndex, actual), e.calendar.Shift)
	lines = append(lines, budget.Totals(lines)...)
	lines = orderBudget(lines)
	if err := db.SaveBudget(ctx, plan.name, plan.values, lines, a.now()); err != nil {
		return fmt.Errorf("budget: store: %w", err)
	}
	names, err := db.AccountNames(ctx)
	if err != nil {
		return err
	}
	rows := report.BudgetRows(lines, names)
	return out.write(a.out, func(w io.Writer) error {
		switch out.format {
		case "json":
			return report.BudgetJSON(w, rows)
		case "csv":
			return report.BudgetCSV(w, rows)
		case "xlsx":
			return writeXLSX(w, "budget", report.BudgetCells(rows))
		}
		return report.BudgetTable(w, rows, e.currency.Code, plan.name)
	})
}

// orderBudget puts each period's object lines before its totals.
func orderBudget(lines []budget.Line) []budget.Line {
	rank := map[budget.Kind]int{budget.KindObject: 0, budget.KindCostCenter: 1, budget.KindTotal: 2}
	sort.SliceStable(lines, func(i, j int) bool {
		if lines[i].Period != lines[j].Period {
			return lines[i].Period < lines[j].Period
		}
		return rank[lines[i].Kind] < rank[lines[j].Kind]
	})
	return lines
}

func (a *app) varianceCommand() *cobra.Command {
	var period, planPath string
	var out outputFlags
	cmd := &cobra.Command{
		Use:   "variance --period P [--plan FILE]",
		Short: "Compare a closed period's actual costs with the flexible budget (and a plan's static budget)",
		Long: `variance compares each cost object's actual cost in a closed period with its
flexible budget, the formula in force in that period at the actual activity:
spending variance = actual − flexible budget, F (favourable) when negative, U
when positive, and a flag where the actual lies outside the 95 % prediction
interval. With --plan, the formula at the planned activity is the static
budget: activity variance = flexible − static budget, so that the two
variances add up to actual − static budget.

The report is kept in the store (table variance_lines, view
spending_variances); variance writes nothing else, so it runs beside a daemon.`,
		Args: cobra.NoArgs,
		RunE: func(cmd *cobra.Command, args []string) error {
			if period == "" {
				return errors.New("variance needs --period P, a closed period such as 2026-10")
			}
			if err := out.check(); err != nil {
				return err
			}
			return a.withStore(cmd.Context(), func(e *env, db *sqlite.DB) error {
				return a.variance(cmd.Context(), e, db, period, planPath, out)
			})
		},
	}
	cmd.Flags().StringVar(&period, "period", "", "the closed period to report on")
	cmd.Flags().StringVar(&planPath, "plan", "", "planned activity, CSV or XLSX: adds the static budget and the activity variance")
	out.add(cmd)
	return cmd
}

func (a *app) variance(ctx context.Context, e *env, db *sqlite.DB, period, planPath string, out outputFlags) error {
	if _, err := e.calendar.Parse(period); err != nil {
		return fmt.Errorf("--period %q: %w", period, err)
	}
	if !e.calendar.Closed(period, a.now()) {
		return fmt.Errorf("--period %s is not closed yet (calendar.close_after_days: %d); a variance needs the period's books closed",
			period, e.cfg.Calendar.CloseAfterDays)
	}
	actualActivity, known, err := storedActivity(ctx, db)
	if err != nil {
		return err
	}
	var plan *planFile
	var planLookup budget.Lookup
	if planPath != "" {
		p, err := readPlan(ctx, e, planPath, known)
		if err != nil {
			return err
		}
		plan = &p
		planLookup = activityLookup(actualActivity, plan.activityIndex, actualActivity)
	}
	costs, unknown, posted, err := periodCosts(ctx, e, db, period)
	if err != nil {
		return err
	}
	if !posted {
		return fmt.Errorf("the ledger has no postings in %s: run `costdrift sync` once it has", period)
	}
	bs, err := db.BehaviourIn(ctx, period)
	if err != nil {
		return fmt.Errorf("variance: %w", err)
	}
	bs, err = inScope(e, bs)
	if err != nil {
		return err
	}
	countable := bs[:0]
	for _, b := range bs {
		if unknown[b.Object.String()] {
			fmt.Fprintf(a.errw, "variance: %s left out: its lines in %s add up to more than an int64 of minor units holds; "+
				"they include amounts beyond the bound sync enforces\n", b.Object, period)
			continue
		}
		countable = append(countable, b)
	}
	bs = countable
	if len(bs) == 0 {
		return fmt.Errorf("variance: no cost behaviour covers %s: run `costdrift analyze` first", period)
	}
	lines := budget.Variances(bs, period, costs, activityLookup(actualActivity, actualActivity), planLookup, e.calendar.Shift)
	for i := range lines { // one line per behaviour, in order
		if b := bs[i]; b.Since <= period && period <= b.Until {
			note := "the formula was fitted on data that include this period"
			if lines[i].Warning != "" {
				note = lines[i].Warning + "; " + note
			}
			lines[i].Warning = note
		}
	}
	lines = append(lines, budget.VarianceTotals(lines)...)
	planName := ""
	var planValues []costdrift.ActivityValue
	if plan != nil {
		planName, planValues = plan.name, plan.values
	}
	if err := db.SaveVariances(ctx, period, planName, planValues, lines, a.now()); err != nil {
		return fmt.Errorf("variance: store: %w", err)
	}
	names, err := db.AccountNames(ctx)
	if err != nil {
		return err
	}
	rows := report.VarianceRows(lines, names)
	return out.write(a.out, func(w io.Writer) error {
		switch out.format {
		case "json":
			return report.VarianceJSON(w, rows)
		case "csv":
			return report.VarianceCSV(w, rows)
		case "xlsx":
			return writeXLSX(w, "variance", report.VarianceCells(rows))
		}
		return report.VarianceTable(w, rows, e.currency.Code, period, planName)
	})
}

// inScope keeps the behaviours of the accounts analysis.accounts covers.
func inScope(e *env, bs []costdrift.Behaviour) ([]costdrift.Behaviour, error) {
	scope, err := costdrift.ParseAccountScope(e.cfg.Analysis.Accounts)
	if err != nil {
		return nil, err
	}
	out := bs[:0]
	for _, b := range bs {
		if scope.Contains(b.Object.Account) {
			out = append(out, b)
		}
	}
	return out, nil
}

// periodCosts is each object's actual cost in period, in currency units,
// at the configured grain, and whether the ledger has any posting then. An
// object whose lines add up to more than the store can total has no actual
// cost but is listed in unknown, rather than given a wrong one.
func periodCosts(ctx context.Context, e *env, db *sqlite.DB, period string) (costs map[string]float64, unknown map[string]bool, posted bool, err error) {
	totals, err := db.CostTotals(ctx)
	if err != nil {
		return nil, nil, false, fmt.Errorf("variance: read ledger totals: %w", err)
	}
	minor := 1.0
	for range e.currency.Exponent {
		minor *= 10
	}
	costs, unknown = map[string]float64{}, map[string]bool{}
	for _, c := range totals {
		if c.Period != period {
			continue
		}
		posted = true
		o := costdrift.CostObject{Account: c.Account}
		if costdrift.Grain(e.cfg.Analysis.Grain) == costdrift.GrainAccountCostCenter {
			o.CostCenter = c.CostCenter
		}
		if c.Overflow {
			unknown[o.String()] = true
			continue
		}
		costs[o.String()] += float64(c.AmountMinor) / minor
	}
	return costs, unknown, posted, nil
}

// activityIndex holds driver values by period, driver and cost centre ("" for
// company-wide).
type activityIndex struct {
	values map[[3]string]float64
	// perCenter sums a driver's cost-centre values per period, for a
	// company-wide question about a driver kept only per cost centre.
	perCenter map[[2]string]float64
	// own marks the drivers a cost centre has a series of its own for.
	own map[[2]string]bool
}

func newActivityIndex() *activityIndex {
	return &activityIndex{values: map[[3]string]float64{}, perCenter: map[[2]string]float64{}, own: map[[2]string]bool{}}
}

func (x *activityIndex) add(v costdrift.ActivityValue) {
	x.values[[3]string{v.Period, v.Driver, v.CostCenter}] += v.Value
	if v.CostCenter != "" {
		x.perCenter[[2]string{v.Period, v.Driver}] += v.Value
		x.own[[2]string{v.Driver, v.CostCenter}] = true
	}
}

// get is the value of the series a formula uses: the cost centre's own
// when own, else the company-wide one, which for a company-wide question
// about a driver kept only per cost centre is their sum.
func (x *activityIndex) get(period, driver, costCenter string, own bool) (float64, bool) {
	if own {
		v, ok := x.values[[3]string{period, driver, costCenter}]
		return v, ok
	}
	if v, ok := x.values[[3]string{period, driver, ""}]; ok {
		return v, true
	}
	if costCenter == "" {
		v, ok := x.perCenter[[2]string{period, driver}]
		return v, ok
	}
	return 0, false
}

// activityLookup finds a driver's value as the analysis saw it: a cost
// centre with a series of its own in the store was fitted on that series,
// so only the same cost centre's figure stands for it (a company-wide plan
// figure is another quantity); other objects take the company-wide series.
// Each source is asked in turn: the plan, then the actual activity.
func activityLookup(actual *activityIndex, sources ...*activityIndex) budget.Lookup {
	return func(period, driver, costCenter string) (float64, bool) {
		own := costCenter != "" && actual.own[[2]string{driver, costCenter}]
		for _, x := range sources {
			if v, ok := x.get(period, driver, costCenter, own); ok {
				return v, true
			}
		}
		return 0, false
	}
}

// storedActivity indexes the store's actual activity and names its drivers.
func storedActivity(ctx context.Context, db *sqlite.DB) (*activityIndex, map[string]bool, error) {
	values, err := db.Activity(ctx)
	if err != nil {
		return nil, nil, fmt.Errorf("read activity: %w", err)
	}
	x := newActivityIndex()
	known := map[string]bool{}
	for _, v := range values {
		x.add(v)
		known[v.Driver] = true
	}
	return x, known, nil
}

// planFile is a plan read and checked.
type planFile struct {
	name   string
	values []costdrift.ActivityValue
	*activityIndex
}

func (p *planFile) periods() []string {
	seen := map[string]bool{}
	var out []string
	for _, v := range p.values {
		if !seen[v.Period] {
			seen[v.Period] = true
			out = append(out, v.Period)
		}
	}
	sort.Strings(out)
	return out
}

// planWriter collects a plan's values; a row the reader rejects is an
// error naming the row.
type planWriter struct {
	values  []costdrift.ActivityValue
	rejects []costdrift.Reject
}

func (w *planWriter) LedgerLine(costdrift.LedgerLine) error {
	return errors.New("a plan holds no ledger lines")
}
func (w *planWriter) Account(costdrift.Account) error { return errors.New("a plan holds no accounts") }
func (w *planWriter) Activity(v costdrift.ActivityValue) error {
	w.values = append(w.values, v)
	return nil
}
func (w *planWriter) Reject(r costdrift.Reject) error {
	w.rejects = append(w.rejects, r)
	return nil
}

// readPlan reads planned activity, in the activity file formats (long or
// wide), and checks every row: a bad period or value, a driver the store
// has no activity for, or the same period, driver and cost centre twice is
// an error naming the row.
func readPlan(ctx context.Context, e *env, path string, known map[string]bool) (planFile, error) {
	display := filepath.Base(path)
	name := strings.TrimSuffix(display, filepath.Ext(display))
	var w planWriter
	var err error
	switch strings.ToLower(filepath.Ext(path)) {
	case ".xlsx", ".xlsm":
		_, err = xlsxsource.ReadActivity(ctx, path, display, xlsxsource.Options{Source: "plan", Currency: e.currency, Period: e.calendar.Period}, &w)
	default:
		_, err = csvsource.ReadActivity(ctx, path, display, csvsource.Options{Source: "plan", Currency: e.currency, Period: e.calendar.Period}, &w)
	}
	if err != nil {
		return planFile{}, fmt.Errorf("plan %s", planError(err, path))
	}
	if len(w.rejects) > 0 {
		r := w.rejects[0]
		more := ""
		if len(w.rejects) > 1 {
			more = fmt.Sprintf(" (and %d more bad rows)", len(w.rejects)-1)
		}
		return planFile{}, fmt.Errorf("plan %s: %s%s", r.Location, r.Reason, more)
	}
	if len(w.values) == 0 {
		return planFile{}, fmt.Errorf("plan %s holds no planned activity", display)
	}
	names := make([]string, 0, len(known))
	for d := range known {
		names = append(names, d)
	}
	sort.Strings(names)
	first := map[[3]string]string{}
	x := newActivityIndex()
	for _, v := range w.values {
		if _, err := e.calendar.Parse(v.Period); err != nil {
			return planFile{}, fmt.Errorf("plan %s: period %q: %v", v.Location, v.Period, err)
		}
		if !known[v.Driver] {
			return planFile{}, fmt.Errorf("plan %s: driver %q has no activity in the store (drivers: %s)", v.Location, v.Driver, strings.Join(names, ", "))
		}
		k := [3]string{v.Period, v.Driver, v.CostCenter}
		if at, dup := first[k]; dup {
			return planFile{}, fmt.Errorf("plan %s: %s %s%s is planned twice (first at %s)", v.Location, v.Driver, v.Period, ccText(v.CostCenter), at)
		}
		first[k] = v.Location
		x.add(v)
	}
	return planFile{name: name, values: w.values, activityIndex: x}, nil
}

func ccText(cc string) string {
	if cc == "" {
		return ""
	}
	return " for " + cc
}

// planError says a plan file could not be read, with the path when the
// reader's message does not name it.
func planError(err error, path string) string {
	msg := err.Error()
	if strings.Contains(msg, filepath.Base(path)) {
		return msg
	}
	return path + ": " + msg
}

// writeXLSX writes cells to one sheet of a new workbook, with the notes and
// cautions below the table.
func writeXLSX(w io.Writer, sheet string, cells [][]any) error {
	f := excelize.NewFile()
	defer f.Close()
	if err := f.SetSheetName("Sheet1", sheet); err != nil {
		return err
	}
	rows := append(cells, nil, []any{strings.ToUpper(budget.Independence[:1]) + budget.Independence[1:] + "."})
	for _, line := range strings.Split(report.Caution, "\n") {
		rows = append(rows, []any{line})
	}
	for i, row := range rows {
		if row == nil {
			continue
		}
		at, err := excelize.CoordinatesToCellName(1, i+1)
		if err != nil {
			return err
		}
		if err := f.SetSheetRow(sheet, at, &row); err != nil {
			return err
		}
	}
	if err := f.SetPanes(sheet, &excelize.Panes{Freeze: true, YSplit: 1, TopLeftCell: "A2", ActivePane: "bottomLeft"}); err != nil {
		return err
	}
	_, err := f.WriteTo(w)
	return err
}
