package main

import (
	"context"
	"encoding/csv"
	"errors"
	"fmt"
	"io"
	"math"
	"strconv"
	"text/tabwriter"

	"github.com/spf13/cobra"

	"github.com/costdrift/costdrift/internal/budget"
	"github.com/costdrift/costdrift/internal/pipeline"
	"github.com/costdrift/costdrift/internal/present"
	"github.com/costdrift/costdrift/internal/report"
	"github.com/costdrift/costdrift/internal/sqlite"
)

func (a *app) breakevenCommand() *cobra.Command {
	var req pipeline.BreakEvenRequest
	var price, format string
	cmd := &cobra.Command{
		Use:   "breakeven --volume DRIVER (--price AMOUNT | --revenue ACCOUNT) [--cost-center CC] [--plan FILE] [--period P]",
		Short: "Break-even volume and revenue, contribution, margin of safety and operating leverage from the cost formulas",
		Long: `breakeven adds up the cost formulas in scope (a pinned or approved formula in
place of the data's, as budgets use them) into a fixed cost per period and a
variable cost per unit of the volume driver. A cost on another driver is
brought onto the volume through the straight line fitted between the two
drivers over the formula's periods, with that line's own uncertainty; with
too few periods beside the volume it is counted as fixed at the driver's
figure in the reference period, and said so. A step cost counts as fixed at
its level at the reference volume.

From a price per unit (--price, or --revenue: an account's revenue over the
volume in the closed periods) it gives the contribution per unit and its
ratio, the break-even volume and revenue, and at the reference volume (the
plan's with --plan, else the actual; in --period, else the plan's first or
the newest closed period) the operating income, the margin of safety and the
degree of operating leverage, each with a 95 % interval from the formulas'
prediction terms. The figures hold only inside the relevant range, where
the formulas were observed; the output says when one lies outside it.`,
		Args: cobra.NoArgs,
		RunE: func(cmd *cobra.Command, args []string) error {
			if req.Driver == "" {
				return errors.New("breakeven needs --volume DRIVER: the activity driver that counts the units sold")
			}
			if (price == "") == (req.Revenue == "") {
				return errors.New("breakeven needs one of --price AMOUNT (per unit of the volume) or --revenue ACCOUNT")
			}
			if price != "" {
				p, err := strconv.ParseFloat(price, 64)
				if err != nil || !(p > 0) || math.IsInf(p, 0) {
					return fmt.Errorf("--price %q: need a positive amount per unit, such as 50 or 49.90", price)
				}
				req.Price = p
			}
			switch format {
			case "table", "csv", "json":
			default:
				return fmt.Errorf("--format must be table, csv or json, not %q", format)
			}
			return a.withStore(cmd.Context(), func(e *pipeline.Env, db *sqlite.DB) error {
				return a.breakeven(cmd.Context(), e, db, req, format)
			})
		},
	}
	cmd.Flags().StringVar(&req.Driver, "volume", "", "the activity driver that counts the units sold")
	cmd.Flags().StringVar(&price, "price", "", "price per unit of the volume driver")
	cmd.Flags().StringVar(&req.Revenue, "revenue", "", "revenue account whose postings give the price per unit")
	cmd.Flags().StringVar(&req.CostCenter, "cost-center", "", "only this cost centre's costs (and its volume when it has its own)")
	cmd.Flags().StringVar(&req.PlanPath, "plan", "", "planned activity, CSV or XLSX, for the reference volume")
	cmd.Flags().StringVar(&req.Period, "period", "", "period of the reference volume")
	cmd.Flags().StringVar(&format, "format", "table", "table, csv or json")
	return cmd
}

// demoFramePrice is the invented company's price per frame in the demo's
// break-even.
const demoFramePrice = 65.0

func (a *app) breakeven(ctx context.Context, e *pipeline.Env, db *sqlite.DB, req pipeline.BreakEvenRequest, format string) error {
	res, err := pipeline.BreakEven(ctx, e, db, req)
	if err != nil {
		return err
	}
	switch format {
	case "json":
		return report.EncodeJSON(a.out, breakevenJSON(res))
	case "csv":
		return breakevenCSV(a.out, res)
	}
	return breakevenTable(a.out, res, e.Currency.Code)
}

// figure is one line of the analysis: its name, the Range and how it is
// written.
type figure struct {
	key, label string
	r          budget.Range
	write      func(float64) string
}

func figures(res pipeline.BreakEvenResult) (core, atReference []figure) {
	unit := unitName(res)
	amount := func(v float64) string { return amountText(v, 2) }
	units := func(v float64) string { return amountText(v, 0) }
	pct := func(v float64) string { return present.Number(100*v, 1) + " %" }
	times := func(v float64) string { return present.Number(v, 2) }
	core = []figure{
		{"fixed_per_period", "fixed cost per period", res.Fixed, amount},
		{"variable_per_unit", "variable cost per " + unit, res.Variable, amount},
		{"contribution_per_unit", "contribution per " + unit, res.Contribution, amount},
		{"contribution_ratio", "contribution ratio", res.Ratio, pct},
		{"break_even_volume", "break-even volume (" + unit + ")", res.Volume, units},
		{"break_even_revenue", "break-even revenue", res.Revenue, amount},
	}
	if math.IsNaN(res.ReferenceVolume) {
		return core, nil
	}
	atReference = []figure{
		{"operating_income", "operating income", res.Income, amount},
		{"margin_of_safety", "margin of safety (" + unit + ")", res.Safety, units},
		{"margin_of_safety_ratio", "margin of safety ratio", res.SafetyRatio, pct},
		{"operating_leverage", "degree of operating leverage", res.Leverage, times},
	}
	return core, atReference
}

// unitName is the volume's unit, or the driver's name without one.
func unitName(res pipeline.BreakEvenResult) string {
	if res.Unit != "" {
		return res.Unit
	}
	return "unit of " + res.Driver
}

// amountText writes v with digits decimals and thousands separators, "–"
// when the data give no figure.
func amountText(v float64, digits int) string {
	if math.IsNaN(v) {
		return "–"
	}
	return present.Number(v, digits)
}

func intervalText(f figure) string {
	if math.IsNaN(f.r.Low) && math.IsNaN(f.r.High) {
		return "not bounded by the data"
	}
	lo, hi := "–", "no upper bound"
	if !math.IsNaN(f.r.Low) {
		lo = f.write(f.r.Low)
	}
	if !math.IsNaN(f.r.High) {
		hi = f.write(f.r.High)
	}
	return lo + " to " + hi
}

func breakevenTable(w io.Writer, res pipeline.BreakEvenResult, currency string) error {
	scope := "all cost centres"
	if res.CostCenter != "" {
		scope = "cost centre " + report.TerminalText(res.CostCenter)
	}
	fmt.Fprintf(w, "Break-even on %s, %s: price %s %s per %s (%s)\n\n", report.TerminalText(res.Driver), scope,
		amountText(res.Price, 2), currency, report.TerminalText(unitName(res)), report.TerminalText(res.PriceFrom))
	tw := tabwriter.NewWriter(w, 0, 4, 2, ' ', 0)
	core, atRef := figures(res)
	fmt.Fprintln(tw, "\testimate\t95 % interval")
	for _, f := range core {
		fmt.Fprintf(tw, "%s\t%s\t%s\n", report.TerminalText(f.label), f.write(f.r.Value), intervalText(f))
	}
	if atRef != nil {
		fmt.Fprintf(tw, "at %s %s (%s, %s)\t\t\n", report.TerminalText(res.Driver), amountText(res.ReferenceVolume, 0),
			report.TerminalText(res.ReferenceFrom), report.TerminalText(res.Period))
		for _, f := range atRef {
			fmt.Fprintf(tw, "  %s\t%s\t%s\n", f.label, f.write(f.r.Value), intervalText(f))
		}
	}
	if err := tw.Flush(); err != nil {
		return err
	}
	if !math.IsNaN(res.RangeLow) {
		fmt.Fprintf(w, "relevant range: %s %s to %s\n", report.TerminalText(res.Driver), amountText(res.RangeLow, 0), amountText(res.RangeHigh, 0))
	}
	fmt.Fprintln(w)
	tw = tabwriter.NewWriter(w, 0, 4, 2, ' ', 0)
	fmt.Fprintln(tw, "cost object\tname\tclass\tfixed per period\tper "+report.TerminalText(unitName(res))+"\thow")
	for _, p := range res.Parts {
		fmt.Fprintf(tw, "%s\t%s\t%s\t%s\t%s\t%s\n", report.TerminalText(p.Object.String()), report.TerminalText(res.Names[p.Object.Account]),
			p.Class, amountText(p.Fixed, 2), present.Rate(p.PerUnit), report.TerminalText(p.How))
	}
	if err := tw.Flush(); err != nil {
		return err
	}
	for _, n := range res.Notes {
		fmt.Fprintln(w, "note: "+report.TerminalText(n))
	}
	return nil
}

// optional is a figure for JSON: null when the data give none.
func optional(v float64) *float64 {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return nil
	}
	return &v
}

type rangeJSON struct {
	Value  *float64 `json:"value"`
	Low95  *float64 `json:"low95"`
	High95 *float64 `json:"high95"`
}

type partJSON struct {
	Account        string  `json:"account"`
	CostCenter     string  `json:"cost_center"`
	Name           string  `json:"name"`
	Class          string  `json:"class"`
	Driver         string  `json:"driver"`
	FixedPerPeriod float64 `json:"fixed_per_period"`
	PerUnit        float64 `json:"per_unit"`
	How            string  `json:"how"`
}

func breakevenJSON(res pipeline.BreakEvenResult) any {
	core, atRef := figures(res)
	figs := map[string]rangeJSON{}
	for _, f := range append(core, atRef...) {
		figs[f.key] = rangeJSON{optional(f.r.Value), optional(f.r.Low), optional(f.r.High)}
	}
	parts := []partJSON{}
	for _, p := range res.Parts {
		parts = append(parts, partJSON{p.Object.Account, p.Object.CostCenter, res.Names[p.Object.Account], string(p.Class), p.Driver, p.Fixed, p.PerUnit, p.How})
	}
	return struct {
		VolumeDriver    string               `json:"volume_driver"`
		Unit            string               `json:"unit"`
		CostCenter      string               `json:"cost_center"`
		Price           float64              `json:"price"`
		PriceFrom       string               `json:"price_from"`
		ReferencePeriod string               `json:"reference_period"`
		ReferenceFrom   string               `json:"reference_from"`
		ReferenceVolume *float64             `json:"reference_volume"`
		Figures         map[string]rangeJSON `json:"figures"`
		RangeLow        *float64             `json:"relevant_range_low"`
		RangeHigh       *float64             `json:"relevant_range_high"`
		DF              *float64             `json:"df"`
		Costs           []partJSON           `json:"costs"`
		Notes           []string             `json:"notes"`
	}{res.Driver, res.Unit, res.CostCenter, res.Price, res.PriceFrom, res.Period, res.ReferenceFrom, optional(res.ReferenceVolume),
		figs, optional(res.RangeLow), optional(res.RangeHigh), optional(res.DF), parts, res.Notes}
}

// breakevenCSV writes one row per figure (measure, value, low95, high95;
// empty where the data give none), then each cost's fixed cost per period
// and cost per unit, keyed by the cost object.
func breakevenCSV(w io.Writer, res pipeline.BreakEvenResult) error {
	cw := csv.NewWriter(w)
	cell := func(v float64) string {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return ""
		}
		return strconv.FormatFloat(v, 'f', -1, 64)
	}
	rows := [][]string{{"measure", "object", "value", "low95", "high95"}}
	core, atRef := figures(res)
	for _, f := range append(core, atRef...) {
		rows = append(rows, []string{f.key, "", cell(f.r.Value), cell(f.r.Low), cell(f.r.High)})
	}
	if !math.IsNaN(res.ReferenceVolume) {
		rows = append(rows, []string{"reference_volume", "", cell(res.ReferenceVolume), "", ""})
	}
	for _, p := range res.Parts {
		rows = append(rows, []string{"fixed_per_period", report.SafeCell(p.Object.String()), cell(p.Fixed), "", ""},
			[]string{"per_unit", report.SafeCell(p.Object.String()), cell(p.PerUnit), "", ""})
	}
	if err := cw.WriteAll(rows); err != nil {
		return err
	}
	cw.Flush()
	return cw.Error()
}
