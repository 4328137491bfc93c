package report

import (
	"fmt"

	"github.com/costdrift/costdrift/internal/costdrift"
	"github.com/costdrift/costdrift/internal/present"
)

// cadenceFormula writes the formula of a cost posted every few periods:
// the posting, when it is posted, and what it is a period spread evenly
// (README, "Costs posted quarterly or yearly, and accruals"):
// "cost = 3,000.00 a quarter (Mar, Jun, Sep, Dec), 1,000.00 a period spread
// evenly". A cost whose postings vary too much for a formula shows their
// mean.
func cadenceFormula(b costdrift.Behaviour) string {
	c := *b.Cadence
	posting := b.FixedPerPeriod * float64(c.Every)
	text := fmt.Sprintf("%s a %s (%s), %s a period spread evenly",
		present.Amount(posting), c.Noun(), c.PositionsText(b.Since), present.Amount(b.FixedPerPeriod))
	if b.Class == costdrift.Unexplained {
		return "mean " + text + " (no formula)"
	}
	return "cost = " + text
}

// cadenceNoDriver says why a cost posted at a cadence is not fitted on a
// driver (explain's table of drivers).
func cadenceNoDriver(c costdrift.Cadence) string {
	return fmt.Sprintf("the cost is posted once a %s and in no period between, so it follows the calendar, not the activity of the periods it lands in", c.Noun())
}
