package report

import (
	"fmt"
	"io"
	"math"
	"strings"
	"text/tabwriter"

	"github.com/costdrift/costdrift/internal/costdrift"
	"github.com/costdrift/costdrift/internal/present"
)

// Caution is the footer every report carries.
const Caution = `Formulas are statistical estimates from past data, valid only inside the observed activity range
(the relevant range). They support, and never replace, the accountant's judgement and the
organisation's policies. Ledger data is confidential: keep this report to its intended readers.`

// Row is one cost object as the JSON report writes it. The first fourteen
// fields are the documented contract; the rest add context.
type Row struct {
	Object         string                `json:"object"`
	Account        string                `json:"account"`
	CostCenter     string                `json:"cost_center"`
	Class          costdrift.Class       `json:"class"`
	Driver         *string               `json:"driver"`
	Lag            *int                  `json:"lag"`
	FixedPerPeriod *float64              `json:"fixed_per_period"`
	VariableRate   *float64              `json:"variable_rate"`
	R2             *float64              `json:"r2"`
	N              int                   `json:"n"`
	RangeMin       *float64              `json:"range_min"`
	RangeMax       *float64              `json:"range_max"`
	Since          string                `json:"since"`
	Steps          []costdrift.StepLevel `json:"steps"`

	AccountName string             `json:"account_name"`
	Unit        string             `json:"unit"`
	Formula     string             `json:"formula"`
	Reason      string             `json:"reason"`
	Until       string             `json:"until"`
	HighLow     *costdrift.HighLow `json:"high_low"`
	// Gaps says what a step cost is between its levels' ranges.
	Gaps string `json:"step_gaps,omitempty"`

	// A second driver, when the formula has one.
	Driver2       *string  `json:"driver2"`
	Lag2          *int     `json:"lag2"`
	VariableRate2 *float64 `json:"variable_rate2"`
	Unit2         string   `json:"unit2,omitempty"`
	// Periods whose Cook's distance exceeds 4/n in the chosen fit.
	Outliers []string `json:"outliers"`
	// The dated break the behaviour starts at, and a change awaiting
	// confirmation by the next analysis.
	Break   *BreakView         `json:"break"`
	Pending *costdrift.Pending `json:"pending"`
}

// BreakView is a dated break as JSON writes it: its statistic null where
// it is infinite (an exact step, stored as the largest float).
type BreakView struct {
	costdrift.Break
	Statistic *float64 `json:"statistic"`
}

// Rows turns behaviours into report rows.
func Rows(bs []costdrift.Behaviour, names map[string]string) []Row {
	rows := make([]Row, 0, len(bs))
	for _, b := range bs {
		r := Row{
			Object: b.Object.String(), Account: b.Object.Account, CostCenter: b.Object.CostCenter,
			Class: b.Class, N: b.N, Since: b.Since, Until: b.Until, Steps: b.Steps,
			AccountName: names[b.Object.Account], Unit: b.Unit, Reason: b.Reason, HighLow: b.HighLow,
			Formula: Formula(b), Gaps: StepGaps(b),
		}
		if r.Steps == nil {
			r.Steps = []costdrift.StepLevel{}
		}
		if b.Break != nil {
			r.Break = &BreakView{Break: *b.Break, Statistic: ptr(b.Break.Statistic)}
		}
		r.Pending = b.Pending
		r.Outliers = []string{}
		for _, o := range b.Outliers {
			r.Outliers = append(r.Outliers, o.Period)
		}
		if b.Driver2 != "" {
			d2, lag2 := b.Driver2, b.Lag2
			r.Driver2, r.Lag2, r.VariableRate2, r.Unit2 = &d2, &lag2, ptr(round(b.VariableRate2, 6)), b.Unit2
		}
		if b.Driver != "" {
			d, lag := b.Driver, b.Lag
			r.Driver, r.Lag = &d, &lag
			r.RangeMin, r.RangeMax = ptr(b.RangeMin), ptr(b.RangeMax)
			r.R2 = ptr(b.R2)
		}
		if b.Class != costdrift.InsufficientData {
			r.FixedPerPeriod = ptr(round(b.FixedPerPeriod, 2))
			r.VariableRate = ptr(round(b.VariableRate, 6))
		}
		rows = append(rows, r)
	}
	return rows
}

// JSON writes the rows as an indented JSON array.
func JSON(w io.Writer, rows []Row) error { return EncodeJSON(w, rows) }

// Table writes the rows as an aligned table followed by each object's
// reason and the cautions. Text from the store is shown through
// TerminalText.
func Table(w io.Writer, rows []Row, currency string) error {
	tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', 0)
	fmt.Fprintf(tw, "OBJECT\tACCOUNT\tCLASS\tFORMULA (%s per period)\tR²\tN\tRELEVANT RANGE\tSINCE\n", currency)
	for _, r := range rows {
		r2, rng := "-", "-"
		if r.R2 != nil {
			r2 = fmt.Sprintf("%.2f", *r.R2)
		}
		if r.RangeMin != nil {
			rng = present.ActivityRange(*r.RangeMin, *r.RangeMax)
		}
		fmt.Fprintf(tw, "%s\t%s\t%s\t%s\t%s\t%d\t%s\t%s\n", TerminalText(r.Object), clip(TerminalText(r.AccountName), 24),
			TerminalText(string(r.Class)), TerminalText(r.Formula), r2, r.N, rng, TerminalText(r.Since))
	}
	if err := tw.Flush(); err != nil {
		return err
	}
	fmt.Fprintln(w)
	fmt.Fprintln(w, "Why:")
	for _, r := range rows {
		fmt.Fprintf(w, "  %-12s %s\n", TerminalText(r.Object), TerminalText(r.Reason))
		if r.Gaps != "" {
			fmt.Fprintf(w, "  %-12s %s\n", "", r.Gaps)
		}
		if r.HighLow != nil {
			hl := r.HighLow
			unit := ""
			if r.Driver != nil {
				unit = present.UnitOf(r.Unit, *r.Driver) + lagText(*r.Lag)
			}
			fmt.Fprintf(w, "  %-12s high-low: cost = %s (high %s, low %s)\n", "", TerminalText(lineFormula(hl.Fixed, hl.Rate, unit)),
				TerminalText(hl.HighPeriod), TerminalText(hl.LowPeriod))
			if hl.Warning != "" {
				fmt.Fprintf(w, "  %-12s warning: %s\n", "", TerminalText(hl.Warning))
			}
		}
	}
	fmt.Fprintln(w)
	_, err := fmt.Fprintln(w, Caution)
	return err
}

// Formula writes a behaviour's cost formula out in words:
// "cost = 4,210.00 + 1.87 per machine hour". A step cost's levels name
// their activity ranges; StepGaps says what holds between them.
func Formula(b costdrift.Behaviour) string {
	per := "per " + unitName(b) + lagText(b.Lag)
	if b.Driver2 != "" {
		sign, rate := "+", b.VariableRate2
		if rate < 0 {
			sign, rate = "-", -rate
		}
		per += fmt.Sprintf(" %s %s%s", sign, present.RatePer(rate, present.UnitOf(b.Unit2, b.Driver2)), lagText(b.Lag2))
	}
	switch b.Class {
	case costdrift.Fixed:
		return "cost = " + present.Amount(b.FixedPerPeriod)
	case costdrift.Variable:
		return "cost = " + present.Rate(b.VariableRate) + " " + per
	case costdrift.Mixed:
		sign, rate := "+", b.VariableRate
		if rate < 0 {
			sign, rate = "-", -rate
		}
		return fmt.Sprintf("cost = %s %s %s %s", present.Amount(b.FixedPerPeriod), sign, present.Rate(rate), per)
	case costdrift.Step:
		parts := make([]string, len(b.Steps))
		for i, s := range b.Steps {
			parts[i] = fmt.Sprintf("%s at %s–%s", present.Amount(s.Level), present.Activity(s.From), present.Activity(s.To))
		}
		return "cost = " + strings.Join(parts, " | ") + " " + present.Plural(unitName(b)) + lagText(b.Lag)
	case costdrift.Unexplained:
		return "mean " + present.Amount(b.MeanCost) + " (no formula)"
	default:
		return "-"
	}
}

// StepGaps says which level a step cost takes between the activity ranges
// its levels were observed in: the nearer one, as the budget evaluates it;
// "" for a cost of another class or of one level.
func StepGaps(b costdrift.Behaviour) string {
	if b.Class != costdrift.Step || len(b.Steps) < 2 {
		return ""
	}
	return "between two levels' ranges the nearer level applies"
}

func lagText(lag int) string {
	switch {
	case lag == 1:
		return " of the period before"
	case lag > 1:
		return fmt.Sprintf(" of %d periods before", lag)
	}
	return ""
}

func unitName(b costdrift.Behaviour) string { return present.UnitOf(b.Unit, b.Driver) }

// Number formats v with the given decimals and comma thousands separators:
// 4210.5 -> "4,210.50" (present.Number).
func Number(v float64, decimals int) string { return present.Number(v, decimals) }

// lineFormula writes cost = fixed ± rate per unit for a straight line.
func lineFormula(fixed, rate float64, unit string) string {
	sign := "+"
	if rate < 0 {
		sign, rate = "-", -rate
	}
	return fmt.Sprintf("cost = %s %s %s", present.Amount(fixed), sign, present.RatePer(rate, unit))
}

func clip(s string, n int) string {
	r := []rune(s)
	if len(r) <= n {
		return s
	}
	return string(r[:n-1]) + "…"
}

func ptr(v float64) *float64 { return present.Finite(v) }

func round(v float64, d int) float64 {
	p := math.Pow10(d)
	return math.Round(v*p) / p
}
