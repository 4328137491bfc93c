package main

import (
	"context"
	"errors"
	"fmt"
	"io"
	"slices"
	"strings"
	"time"

	"github.com/spf13/cobra"
	"github.com/xuri/excelize/v2"

	"github.com/costdrift/costdrift/internal/atomicfile"
	"github.com/costdrift/costdrift/internal/costdrift"
	"github.com/costdrift/costdrift/internal/pipeline"
	"github.com/costdrift/costdrift/internal/present"
	"github.com/costdrift/costdrift/internal/report"
	"github.com/costdrift/costdrift/internal/sqlite"
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
	var planPath, save string
	var spread bool
	var out outputFlags
	cmd := &cobra.Command{
		Use:   "budget --plan FILE [--save NAME] [--spread]",
		Short: "Budget each cost from its formula at the planned activity, with prediction intervals",
		Long: `budget reads planned activity per period (a CSV or XLSX file with the columns
period, driver, value and optionally cost_center, or period and one column per
driver) and budgets every cost object's current formula at it: fixed + rate ×
planned activity, the level for a step cost, the mean for a cost no driver
explains. Each budget has its 80 % and 95 % prediction intervals; totals per
cost centre and overall add the objects' variances, assuming their deviations
are independent. A driver with a lag takes the period before from the plan or,
failing that, from the actual activity in the store. A cost posted once a
quarter, half-year or year is budgeted in the periods it is posted in, nothing
in the others; with --spread, evenly over every period.

Without --save, budget is a trial run and writes nothing. With --save NAME the
plan and the budget are kept in the store under NAME (tables plans and
budget_lines, view flexible_budget), replacing what was saved under NAME
before; budget writes nothing else, so it runs beside a daemon.`,
		Args: cobra.NoArgs,
		RunE: func(cmd *cobra.Command, args []string) error {
			if planPath == "" {
				return errors.New("budget needs --plan FILE: planned activity per period (period, driver, value[, cost_center])")
			}
			if err := out.check(); err != nil {
				return err
			}
			if err := checkSaveName(cmd, save); err != nil {
				return err
			}
			return a.withStore(cmd.Context(), func(e *pipeline.Env, db *sqlite.DB) error {
				return a.budget(cmd.Context(), e, db, planPath, save, spread, out)
			})
		},
	}
	cmd.Flags().StringVar(&planPath, "plan", "", "planned activity, CSV or XLSX")
	cmd.Flags().StringVar(&save, "save", "", "keep the budget in the store under this name, replacing one saved under it before")
	cmd.Flags().BoolVar(&spread, "spread", false, "spread a cost posted once a quarter, half-year or year evenly over its periods")
	out.add(cmd)
	return cmd
}

func (a *app) varianceCommand() *cobra.Command {
	var period, planPath, save string
	var out outputFlags
	cmd := &cobra.Command{
		Use:   "variance --period P [--plan FILE] [--save NAME]",
		Short: "Compare a closed period's actual costs with the flexible budget (and a plan's static budget)",
		Long: `variance compares each cost object's actual cost in a closed period with its
flexible budget, the formula in force in that period at the actual activity:
spending variance = actual − flexible budget, F (favourable) when negative, U
when positive, and a flag where the actual lies outside the 95 % prediction
interval. With --plan, the formula at the planned activity is the static
budget: activity variance = flexible − static budget, so that the two
variances add up to actual − static budget.

Without --save, variance writes nothing. With --save NAME the report is kept
in the store under NAME (table variance_lines, view spending_variances),
replacing what was saved under NAME before; variance writes nothing else, so
it runs beside a daemon.`,
		Args: cobra.NoArgs,
		RunE: func(cmd *cobra.Command, args []string) error {
			if period == "" {
				return errors.New("variance needs --period P, a closed period such as 2026-10")
			}
			if err := out.check(); err != nil {
				return err
			}
			if err := checkSaveName(cmd, save); err != nil {
				return err
			}
			return a.withStore(cmd.Context(), func(e *pipeline.Env, db *sqlite.DB) error {
				return a.variance(cmd.Context(), e, db, period, planPath, save, out)
			})
		},
	}
	cmd.Flags().StringVar(&period, "period", "", "the closed period to report on")
	cmd.Flags().StringVar(&planPath, "plan", "", "planned activity, CSV or XLSX: adds the static budget and the activity variance")
	cmd.Flags().StringVar(&save, "save", "", "keep the report in the store under this name, replacing one saved under it before")
	out.add(cmd)
	return cmd
}

// checkSaveName refuses a --save given without a name, which would
// otherwise be a trial run that the user meant to keep.
func checkSaveName(cmd *cobra.Command, save string) error {
	if cmd.Flags().Changed("save") && strings.TrimSpace(save) == "" {
		return errors.New("--save needs a name to keep the result under, such as --save q3-draft")
	}
	return nil
}

// savedNote says on standard error, under a table (a person reads it),
// whether a budget or variance report was kept and under which name; CSV,
// JSON and XLSX, which programs read, come without it.
func (a *app) savedNote(what, save, view string, out outputFlags) {
	if out.format != "table" {
		return
	}
	if save == "" {
		fmt.Fprintf(a.errw, "%s: a trial run, not kept in the store (--save NAME keeps it)\n", what)
		return
	}
	fmt.Fprintf(a.errw, "%s: kept in the store under the name %s (view %s)\n", what, report.TerminalText(save), view)
}

// writeXLSX writes cells (the header first) to one sheet of a new
// workbook: numbers with the format of their column (report.KindOf), each
// column as wide as its widest cell, the header row frozen, the notes and
// the cautions below the table, and document properties that name
// costdrift and its version as the workbook's author.
func writeXLSX(w io.Writer, sheet string, cells [][]any, title string, notes []string, at time.Time) error {
	f := excelize.NewFile()
	defer f.Close()
	if err := f.SetSheetName("Sheet1", sheet); err != nil {
		return err
	}
	author := "costdrift " + version
	if err := f.SetDocProps(&excelize.DocProperties{Creator: author, LastModifiedBy: author, Title: title,
		Description: "Written by " + author + " from the store's analysis. " + strings.ReplaceAll(report.Caution, "\n", " "),
		Category:    "cost behaviour", Version: version,
		Created: at.UTC().Format(time.RFC3339), Modified: at.UTC().Format(time.RFC3339)}); err != nil {
		return err
	}
	if err := f.SetAppProps(&excelize.AppProperties{Application: "costdrift", AppVersion: xlsxAppVersion(version)}); err != nil {
		return err
	}
	rows := slices.Clone(cells)
	rows = append(rows, nil)
	for _, n := range notes {
		rows = append(rows, []any{n})
	}
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
	if len(cells) > 0 {
		if err := formatColumns(f, sheet, cells); err != nil {
			return err
		}
	}
	if err := f.SetPanes(sheet, &excelize.Panes{Freeze: true, YSplit: 1, TopLeftCell: "A2", ActivePane: "bottomLeft"}); err != nil {
		return err
	}
	_, err := f.WriteTo(w)
	return err
}

// xlsxNumberFormats are the custom number formats of the column kinds:
// money with two decimals and thousands separators, rates with two to six
// decimals, R² with three, counts whole; driver values as measured.
var xlsxNumberFormats = map[report.ColumnKind]string{
	report.MoneyColumn:    "#,##0.00",
	report.RateColumn:     "#,##0.00####",
	report.RatioColumn:    "0.000",
	report.CountColumn:    "0",
	report.ActivityColumn: "#,##0.######",
}

// formatColumns gives the table's columns their number format and width
// and the header row bold type.
func formatColumns(f *excelize.File, sheet string, cells [][]any) error {
	header := cells[0]
	bold, err := f.NewStyle(&excelize.Style{Font: &excelize.Font{Bold: true}, Fill: excelize.Fill{Type: "pattern", Pattern: 1, Color: []string{"F3F1EC"}}})
	if err != nil {
		return err
	}
	last, err := excelize.CoordinatesToCellName(len(header), 1)
	if err != nil {
		return err
	}
	if err := f.SetCellStyle(sheet, "A1", last, bold); err != nil {
		return err
	}
	for c, h := range header {
		name, _ := h.(string)
		kind := report.KindOf(name)
		width := len([]rune(name)) + 2
		for _, row := range cells[1:] {
			if c < len(row) {
				width = max(width, cellWidth(row[c], kind)+2)
			}
		}
		col, err := excelize.ColumnNumberToName(c + 1)
		if err != nil {
			return err
		}
		if err := f.SetColWidth(sheet, col, col, float64(min(width, 60))); err != nil {
			return err
		}
		numFmt, ok := xlsxNumberFormats[kind]
		if !ok || len(cells) < 2 {
			continue
		}
		style, err := f.NewStyle(&excelize.Style{CustomNumFmt: &numFmt})
		if err != nil {
			return err
		}
		from, _ := excelize.CoordinatesToCellName(c+1, 2)
		to, _ := excelize.CoordinatesToCellName(c+1, len(cells))
		if err := f.SetCellStyle(sheet, from, to, style); err != nil {
			return err
		}
	}
	return nil
}

// cellWidth is about how many characters a cell shows.
func cellWidth(v any, kind report.ColumnKind) int {
	switch x := v.(type) {
	case nil:
		return 0
	case float64:
		switch kind {
		case report.MoneyColumn:
			return len(present.Amount(x))
		case report.RateColumn:
			return len(present.Rate(x)) + 2
		}
		return len(present.Activity(x))
	case string:
		return len([]rune(x))
	}
	return len(fmt.Sprint(v))
}

// xlsxAppVersion is the version as the application properties hold it,
// which spreadsheets read as NN.NNNN: a version such as v1.2.3 becomes
// 1.0203, anything else 0.0.
func xlsxAppVersion(v string) string {
	var major, minor, patch int
	if n, _ := fmt.Sscanf(strings.TrimPrefix(v, "v"), "%d.%d.%d", &major, &minor, &patch); n == 0 {
		return "0.0"
	}
	return fmt.Sprintf("%d.%02d%02d", major, minor%100, patch%100)
}

// budget budgets a plan, keeps it under the name save unless that is "",
// and writes it in the chosen format.
func (a *app) budget(ctx context.Context, e *pipeline.Env, db *sqlite.DB, planPath, save string, spread bool, out outputFlags) error {
	run := pipeline.Budget
	if spread {
		run = pipeline.BudgetSpread
	}
	res, err := run(ctx, e, db, planPath, save)
	if err != nil {
		return err
	}
	rows := report.BudgetRows(res.Lines, res.Names)
	defer a.savedNote("budget", save, "flexible_budget", out)
	return out.render(a.out, formats{sheet: "budget", title: "Flexible budget from plan " + res.Plan, at: e.Now(),
		json:  func(w io.Writer) error { return report.BudgetJSON(w, rows) },
		csv:   func(w io.Writer) error { return report.BudgetCSV(w, rows) },
		cells: func() [][]any { return report.BudgetCells(rows) },
		table: func(w io.Writer) error { return report.BudgetTable(w, rows, e.Currency.Code, res.Plan) },
	})
}

// variance reports a closed period's variances, keeps them under the name
// save unless that is "", and writes them in the chosen format; the objects
// left out are said on standard error.
func (a *app) variance(ctx context.Context, e *pipeline.Env, db *sqlite.DB, period, planPath, save string, out outputFlags) error {
	res, err := pipeline.Variance(ctx, e, db, period, planPath, save)
	for _, note := range res.LeftOut {
		fmt.Fprintln(a.errw, "variance: "+report.TerminalText(note))
	}
	if err != nil {
		return err
	}
	rows := report.VarianceRows(res.Lines, res.Names)
	defer a.savedNote("variance", save, "spending_variances", out)
	return out.render(a.out, formats{sheet: "variance", title: "Variances for " + period, at: e.Now(),
		json:  func(w io.Writer) error { return report.VarianceJSON(w, rows) },
		csv:   func(w io.Writer) error { return report.VarianceCSV(w, rows) },
		cells: func() [][]any { return report.VarianceCells(rows) },
		table: func(w io.Writer) error { return report.VarianceTable(w, rows, e.Currency.Code, period, res.Plan) },
	})
}

// formats is one result rendered in each output format: JSON, CSV, the
// cells of an XLSX sheet, and the table for a terminal.
type formats struct {
	sheet, title     string
	at               time.Time // when the workbook is written
	json, csv, table func(io.Writer) error
	cells            func() [][]any
}

// render writes the result in the chosen format, to --output or to out.
func (o *outputFlags) render(out io.Writer, f formats) error {
	return o.write(out, func(w io.Writer) error {
		switch o.format {
		case "json":
			return f.json(w)
		case "csv":
			return f.csv(w)
		case "xlsx":
			return writeXLSX(w, f.sheet, f.cells(), f.title, []string{sentence(costdrift.Independence) + "."}, f.at)
		}
		return f.table(w)
	})
}

// sentence starts s with a capital letter.
func sentence(s string) string {
	if s == "" {
		return s
	}
	return strings.ToUpper(s[:1]) + s[1:]
}
