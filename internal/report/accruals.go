package report

import (
	"fmt"
	"strings"

	"github.com/costdrift/costdrift/internal/present"
)

// Accruals are an object's accruals and their reversals in the window,
// and their net effect on each period's cost, as explain shows them
// (README, "Costs posted quarterly or yearly, and accruals").
type Accruals struct {
	Pairs   []AccrualPair   `json:"pairs"`
	Periods []AccrualPeriod `json:"periods"`
}

// AccrualPair is one accrual and its reversal in the next period.
type AccrualPair struct {
	Period              string  `json:"period"`      // booked in
	ReversedIn          string  `json:"reversed_in"` // the next period
	CostCenter          string  `json:"cost_center"`
	Amount              float64 `json:"amount"` // as booked; the reversal is its negative
	Entry               string  `json:"entry"`
	ReversalEntry       string  `json:"reversal_entry"`
	Description         string  `json:"description"`
	ReversalDescription string  `json:"reversal_description"`
}

// AccrualPeriod is the net effect of accruals on one period's cost: what
// was accrued in it, less what was reversed from the period before. The
// cost is the period's total as the analysis saw it (accruals included);
// without them it is cost − net.
type AccrualPeriod struct {
	Period          string  `json:"period"`
	Cost            float64 `json:"cost"`
	Accrued         float64 `json:"accrued"`
	Reversed        float64 `json:"reversed"`
	Net             float64 `json:"net"`
	WithoutAccruals float64 `json:"without_accruals"`
	// Flagged: the analysis marked the period (an outlier of the fit, or
	// outside the spending check's interval).
	Flagged bool `json:"flagged"`
}

// explainAccruals writes the pairs and their net effect per period.
func explainAccruals(s *strings.Builder, e Explanation) {
	if e.Accruals == nil || len(e.Accruals.Pairs) == 0 {
		return
	}
	s.WriteString("\nAccruals: booked in one period and reversed in the next, the same amount on the same account\nand cost centre; each moves cost between the two periods and leaves their sum as it is\n")
	pairs := table{header: []string{"booked", "reversed", "cost centre", "amount", "entries", "description"}, right: "   r"}
	for _, p := range e.Accruals.Pairs {
		pairs.add(TerminalText(p.Period), TerminalText(p.ReversedIn), TerminalText(orDash(p.CostCenter)), present.Amount(p.Amount),
			TerminalText(p.Entry)+" / "+TerminalText(p.ReversalEntry), TerminalText(clip(p.Description, 72)))
	}
	pairs.write(s, "  ")
	s.WriteString("\n  Net effect per period:\n")
	periods := table{header: []string{"period", "cost", "accrued", "reversed", "net", "without accruals", ""}, right: " rrrrr"}
	for _, p := range e.Accruals.Periods {
		mark := ""
		if p.Flagged {
			mark = "flagged by the analysis"
		}
		periods.add(TerminalText(p.Period), present.Amount(p.Cost), present.Amount(p.Accrued), present.Amount(p.Reversed),
			signed(p.Net), present.Amount(p.WithoutAccruals), mark)
	}
	periods.write(s, "    ")
}

func orDash(s string) string {
	if s == "" {
		return "-"
	}
	return s
}

// signed writes an amount with its sign: "+4,000.00", "-4,000.00".
func signed(v float64) string {
	if v > 0 {
		return "+" + present.Amount(v)
	}
	return present.Amount(v)
}

// AccrualNote is what explain says of a flagged period that carries an
// accrual: its cost moved between periods, which is no noise.
func AccrualNote(p AccrualPeriod) string {
	return fmt.Sprintf("%s is flagged by the analysis and carries accruals of %s net (accrued %s, reversed %s): "+
		"cost moved between periods by accrual and reversal, not noise; without them the period's cost is %s",
		p.Period, signed(p.Net), present.Amount(p.Accrued), present.Amount(p.Reversed), present.Amount(p.WithoutAccruals))
}
