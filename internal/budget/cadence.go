package budget

import (
	"fmt"

	"github.com/costdrift/costdrift/internal/calendar"
	"github.com/costdrift/costdrift/internal/costdrift"
	"github.com/costdrift/costdrift/internal/present"
)

// FlexibleSpread is Flexible with every cost posted at a cadence spread
// evenly over the periods a posting covers (`budget --spread`): its
// formula per period, the posting divided by its cadence, in every period.
// Flexible puts the whole posting in the periods it is posted in instead.
func FlexibleSpread(behaviours []costdrift.Behaviour, periods []string, activity Lookup, shift func(string, int) string) []costdrift.BudgetLine {
	return flexible(behaviours, periods, activity, shift, true)
}

// atCadence turns e, the formula per period of a cost posted every k-th
// period (b.Cadence), into the budget of period. Its formula per period is
// the mean posting divided by k, with the prediction terms of the mean of
// the postings divided by k (README, "Costs posted quarterly or yearly, and
// accruals"), so that
//
//   - in a period it is posted in, the budget is one posting, k times the
//     formula per period, and its interval k times the standard error: the
//     interval of one more posting from the postings seen;
//   - in any other period it is nothing, exactly;
//   - spread, it stays the formula per period, whose interval is a k-th of
//     a posting's.
//
// A period whose position in the year is unknown (a calendar of weeks,
// where no cadence is recognised) keeps e.
func atCadence(b *costdrift.Behaviour, period string, e costdrift.Estimate, spread bool) costdrift.Estimate {
	c := b.Cadence
	pos, ok := calendar.PositionInYear(period)
	if c == nil || c.Every < 1 || !ok {
		return e
	}
	k := float64(c.Every)
	posting := b.FixedPerPeriod * k
	when := fmt.Sprintf("posted once a %s (%s)", c.Noun(), c.PositionsText(period))
	var kept []string
	for _, w := range e.Warnings {
		if w != CutAtZero {
			kept = append(kept, w) // cut again below, where it still applies
		}
	}
	switch {
	case spread:
		e.Warnings = append(e.Warnings, fmt.Sprintf("%s, %s a posting: spread evenly", when, present.Amount(posting)))
	case c.Posts(pos):
		e.Value *= k
		e.SE *= k
		e.Warnings = kept
		interval(&e)
		cutAtZero(&e)
		e.Warnings = append(e.Warnings, fmt.Sprintf("%s: the %s's posting", when, c.Noun()))
	default:
		e.Value, e.SE = 0, 0
		e.Low80, e.High80, e.Low95, e.High95 = 0, 0, 0, 0
		e.Warnings = append(kept, when+": nothing in this period")
	}
	return e
}
