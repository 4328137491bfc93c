package report

import (
	"fmt"
	"io"
	"math"
	"slices"
	"strings"
	"text/tabwriter"
	"time"

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
	// Cadence: a cost posted every few periods, left out otherwise.
	Cadence *costdrift.Cadence `json:"cadence,omitempty"`
	// PriceBase is the period whose prices the formula is at, when the
	// costs were restated by analysis.deflator; "" as posted.
	PriceBase string `json:"price_base,omitempty"`

	// What the accountant decided (README "The accountant's decisions"):
	// the pinned formula, null without one; the periods left out of the
	// fit, oldest first; and the formula budgets and variances use.
	Pinned          *PinnedFormula   `json:"pinned"`
	ExcludedPeriods []ExcludedPeriod `json:"excluded_periods"`
	Approval        *ApprovalView    `json:"approval"` // null while analysis.approval is none
	Effective       EffectiveFormula `json:"effective"`
}

// ApprovalView is where an object stands with approval: the formula last
// approved (null before the first approval) and the analysis's formula
// when it waits for approval or was declined (null when it is the
// approved one).
type ApprovalView struct {
	Status   string          `json:"status"` // "approved", "awaiting approval" or "declined"
	Approved *DecidedFormula `json:"approved"`
	Proposed *DecidedFormula `json:"proposed"`
}

// DecidedFormula is a formula with the decision or analysis behind it.
type DecidedFormula struct {
	Class          costdrift.Class `json:"class"`
	Driver         *string         `json:"driver"`
	Lag            *int            `json:"lag"`
	FixedPerPeriod *float64        `json:"fixed_per_period"`
	VariableRate   *float64        `json:"variable_rate"`
	Formula        string          `json:"formula"`
	By             string          `json:"by,omitempty"`
	At             string          `json:"at"` // RFC 3339, UTC: approved, declined, or found by the analysis
	Reason         string          `json:"reason,omitempty"`
}

// ApprovalInput is an object's approval state with the behaviour row last
// approved (nil for none), for its row.
type ApprovalInput struct {
	State    costdrift.ApprovalState
	Approved *costdrift.Behaviour
}

// Approval statuses.
const (
	StatusApproved = "approved"
	StatusWaiting  = "awaiting approval"
	StatusDeclined = "declined"
)

// approvalView lays out an object's approval beside its current behaviour.
func approvalView(b costdrift.Behaviour, in ApprovalInput) *ApprovalView {
	st := in.State
	v := &ApprovalView{Status: StatusApproved}
	switch {
	case st.Waiting():
		v.Status = StatusWaiting
	case st.CurrentID != st.ApprovedID:
		v.Status = StatusDeclined
	}
	if in.Approved != nil {
		v.Approved = decidedFormula(*in.Approved)
		v.Approved.By, v.Approved.At, v.Approved.Reason = st.ApprovedBy, st.ApprovedAt.UTC().Format(time.RFC3339), st.ApprovedReason
	}
	if v.Status != StatusApproved {
		v.Proposed = decidedFormula(b)
		v.Proposed.At = st.ProposedAt.UTC().Format(time.RFC3339)
		if v.Status == StatusDeclined {
			v.Proposed.By, v.Proposed.Reason = st.LastBy, st.LastWhy
		}
	}
	return v
}

func decidedFormula(b costdrift.Behaviour) *DecidedFormula {
	f := &DecidedFormula{Class: b.Class, Formula: Formula(b)}
	if b.Driver != "" {
		d, lag := b.Driver, b.Lag
		f.Driver, f.Lag = &d, &lag
	}
	if b.Class != costdrift.InsufficientData {
		f.FixedPerPeriod = ptr(round(b.FixedPerPeriod, 2))
		f.VariableRate = ptr(round(b.VariableRate, 6))
	}
	return f
}

// PinnedFormula is a pin as the report shows it.
type PinnedFormula struct {
	Class   costdrift.Class `json:"class"`
	Driver  *string         `json:"driver"`
	Lag     int             `json:"lag"`
	Fixed   float64         `json:"fixed"`
	Rate    float64         `json:"rate"`
	By      string          `json:"by"`
	At      string          `json:"at"` // RFC 3339, UTC
	Reason  string          `json:"reason"`
	Until   *string         `json:"until"`
	Formula string          `json:"formula"`
}

// Where the formula budgets use comes from.
const (
	SourceData     = "data"     // the analysis's estimate
	SourcePinned   = "pinned"   // the accountant's pin
	SourceApproved = "approved" // the formula last approved, while a newer one waits or was declined
)

// EffectiveFormula is the formula budgets and variances use, and where it
// comes from.
type EffectiveFormula struct {
	Source         string          `json:"source"`
	Class          costdrift.Class `json:"class"`
	Driver         *string         `json:"driver"`
	Lag            *int            `json:"lag"`
	FixedPerPeriod *float64        `json:"fixed_per_period"`
	VariableRate   *float64        `json:"variable_rate"`
	Formula        string          `json:"formula"`
}

// ExcludedPeriod is a period left out of an object's fit, with who left it
// out, when and why.
type ExcludedPeriod struct {
	Period string `json:"period"`
	By     string `json:"by"`
	At     string `json:"at"` // RFC 3339, UTC
	Reason string `json:"reason"`
}

// Decided is what the accountant decided about one object, for its row:
// the pin (nil without one), the excluded periods, and the formula budgets
// use with where it comes from (Source* constants; "" for the data's own).
type Decided struct {
	Pin             *costdrift.Pin
	Excluded        []costdrift.Exclusion
	Effective       costdrift.Behaviour
	EffectiveSource string
	// Approval is nil while analysis.approval is none.
	Approval *ApprovalInput
}

// BreakView is a dated break as JSON writes it: its statistic null where
// it is infinite (an exact step, stored as the largest float).
type BreakView struct {
	costdrift.Break
	Statistic *float64 `json:"statistic"`
}

// Rows turns behaviours into report rows.
func Rows(bs []costdrift.Behaviour, names map[string]string) []Row {
	return DecidedRows(bs, names, nil)
}

// DecidedRows turns behaviours into report rows with the accountant's
// decisions on each object beside the data's estimate (decided by object;
// nil for none).
func DecidedRows(bs []costdrift.Behaviour, names map[string]string, decided map[string]Decided) []Row {
	rows := make([]Row, 0, len(bs))
	for _, b := range bs {
		r := Row{
			Object: b.Object.String(), Account: b.Object.Account, CostCenter: b.Object.CostCenter,
			Class: b.Class, N: b.N, Since: b.Since, Until: b.Until, Steps: b.Steps,
			AccountName: names[b.Object.Account], Unit: b.Unit, Reason: b.Reason, HighLow: b.HighLow,
			Formula: Formula(b), Gaps: StepGaps(b), PriceBase: b.PriceBase,
		}
		if r.Steps == nil {
			r.Steps = []costdrift.StepLevel{}
		}
		if b.Break != nil {
			r.Break = &BreakView{Break: *b.Break, Statistic: ptr(b.Break.Statistic)}
		}
		r.Pending, r.Cadence = b.Pending, b.Cadence
		d := decided[r.Object]
		r.ExcludedPeriods = make([]ExcludedPeriod, 0, len(d.Excluded))
		for _, x := range d.Excluded {
			r.ExcludedPeriods = append(r.ExcludedPeriods, ExcludedPeriod{Period: x.Period, By: x.By, At: x.At.UTC().Format(time.RFC3339), Reason: x.Reason})
		}
		if p := d.Pin; p != nil {
			r.Pinned = &PinnedFormula{Class: p.Class, Lag: p.Lag, Fixed: p.Fixed, Rate: p.Rate, By: p.By,
				At: p.At.UTC().Format(time.RFC3339), Reason: p.Reason, Formula: pinFormula(b, *p)}
			if p.Driver != "" {
				r.Pinned.Driver = &p.Driver
			}
			if p.Until != "" {
				r.Pinned.Until = &p.Until
			}
		}
		if d.Approval != nil {
			r.Approval = approvalView(b, *d.Approval)
		}
		eff, source := d.Effective, d.EffectiveSource
		if source == "" {
			eff, source = b, SourceData
		}
		r.Effective = EffectiveFormula{Source: source, Class: eff.Class, Formula: Formula(eff)}
		if source == SourcePinned && d.Pin != nil {
			r.Effective.Formula = pinFormula(b, *d.Pin) // a pinned step has one level, not the data's steps
		}
		if eff.Driver != "" {
			drv, lag := eff.Driver, eff.Lag
			r.Effective.Driver, r.Effective.Lag = &drv, &lag
		}
		if eff.Class != costdrift.InsufficientData {
			r.Effective.FixedPerPeriod = ptr(round(eff.FixedPerPeriod, 2))
			r.Effective.VariableRate = ptr(round(eff.VariableRate, 6))
		}
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

// pinFormula writes a pinned formula out in words, as Formula writes the
// data's.
func pinFormula(b costdrift.Behaviour, p costdrift.Pin) string {
	pb := costdrift.Behaviour{Object: b.Object, Class: p.Class, Driver: p.Driver, Lag: p.Lag, FixedPerPeriod: p.Fixed, VariableRate: p.Rate}
	if p.Driver == b.Driver {
		pb.Unit = b.Unit
	}
	if p.Class == costdrift.Step {
		return "cost = " + Number(p.Fixed, 2) + " (the level in force)"
	}
	return Formula(pb)
}

// JSON writes the rows as an indented JSON array.
func JSON(w io.Writer, rows []Row) error { return EncodeJSON(w, rows) }

// Table writes the rows as an aligned table followed by each object's
// reason and the cautions. Text from the store is shown through
// TerminalText.
func Table(w io.Writer, rows []Row, currency string) error {
	tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', 0)
	// With costs restated by a price index, a column says whose prices
	// each formula is at, rather than every formula (README, Prices and
	// inflation).
	restated := slices.ContainsFunc(rows, func(r Row) bool { return r.PriceBase != "" })
	prices := ""
	if restated {
		prices = "\tPRICES"
	}
	fmt.Fprintf(tw, "OBJECT\tACCOUNT\tCLASS\tFORMULA (%s per period)%s\tR²\tN\tRELEVANT RANGE\tSINCE\n", currency, prices)
	for _, r := range rows {
		r2, rng := "-", "-"
		if r.R2 != nil {
			r2 = fmt.Sprintf("%.2f", *r.R2)
		}
		if r.RangeMin != nil {
			rng = present.ActivityRange(*r.RangeMin, *r.RangeMax)
		}
		formula := TerminalText(r.Formula)
		if restated {
			at := "as posted"
			if r.PriceBase != "" {
				formula, at = TerminalText(strings.TrimSuffix(r.Formula, " at prices of "+r.PriceBase)), r.PriceBase
			}
			formula += "\t" + TerminalText(at)
		}
		fmt.Fprintf(tw, "%s\t%s\t%s\t%s\t%s\t%d\t%s\t%s\n", TerminalText(r.Object), clip(TerminalText(r.AccountName), 24),
			TerminalText(string(r.Class)), formula, r2, r.N, rng, TerminalText(r.Since))
	}
	if err := tw.Flush(); err != nil {
		return err
	}
	fmt.Fprintln(w)
	fmt.Fprintln(w, "Why:")
	for _, r := range rows {
		fmt.Fprintf(w, "  %-12s %s\n", TerminalText(r.Object), TerminalText(r.Reason))
		if p := r.Pinned; p != nil {
			until, use := "", "budgets and variances use it"
			if p.Until != nil {
				until = " until " + TerminalText(*p.Until)
			}
			if r.Effective.Source != SourcePinned {
				use = "expired: budgets use the data's formula"
			}
			at := p.At
			if t, err := time.Parse(time.RFC3339, p.At); err == nil {
				at = t.Format("2006-01-02")
			}
			fmt.Fprintf(w, "  %-12s pinned: %s%s, by %s on %s: %s; %s\n", "", TerminalText(p.Formula), until, TerminalText(p.By), at,
				TerminalText(p.Reason), use)
		}
		if ap := r.Approval; ap != nil && ap.Status != StatusApproved {
			kept := "budgets use it until it is approved"
			if ap.Approved != nil {
				kept = "budgets keep the approved " + TerminalText(ap.Approved.Formula)
			}
			fmt.Fprintf(w, "  %-12s %s: %s (costdrift approve or decline %s); %s\n", "", ap.Status, TerminalText(r.Formula), TerminalText(r.Object), kept)
		}
		if len(r.ExcludedPeriods) > 0 {
			periods := make([]string, len(r.ExcludedPeriods))
			for i, x := range r.ExcludedPeriods {
				periods[i] = TerminalText(x.Period)
			}
			fmt.Fprintf(w, "  %-12s left out of the fit: %s (costdrift explain %s)\n", "", strings.Join(periods, ", "), TerminalText(r.Object))
		}
		if r.Gaps != "" {
			fmt.Fprintf(w, "  %-12s %s\n", "", r.Gaps)
		}
		if r.HighLow != nil {
			hl := r.HighLow
			unit := ""
			if r.Driver != nil {
				unit = present.UnitOf(r.Unit, *r.Driver) + lagText(*r.Lag)
			}
			fmt.Fprintf(w, "  %-12s high-low: %s (high %s, low %s)\n", "", TerminalText(lineFormula(hl.Fixed, hl.Rate, unit)),
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
// their activity ranges; StepGaps says what holds between them. A formula
// fitted on costs restated by a price index says whose prices it is at:
// "cost = 5,765.66 at prices of 2026-06" (README, Prices and inflation).
func Formula(b costdrift.Behaviour) string {
	f := formula(b)
	if b.PriceBase != "" && b.Class != costdrift.InsufficientData {
		f += " at prices of " + b.PriceBase
	}
	return f
}

func formula(b costdrift.Behaviour) string {
	per := "per " + unitName(b) + lagText(b.Lag)
	if b.Driver2 != "" {
		sign, rate := "+", b.VariableRate2
		if rate < 0 {
			sign, rate = "-", -rate
		}
		per += fmt.Sprintf(" %s %s%s", sign, present.RatePer(rate, present.UnitOf(b.Unit2, b.Driver2)), lagText(b.Lag2))
	}
	if b.Cadence != nil && (b.Class == costdrift.Fixed || b.Class == costdrift.Unexplained) {
		return cadenceFormula(b)
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
