package costdrift

import (
	"fmt"
	"strings"
)

// Cadence marks a cost posted every Every-th period and not in between
// (README, "Costs posted quarterly or yearly, and accruals"): insurance
// once a quarter, property tax once a year. The periods it posts in are
// those whose position in the year (1–12: the month, or the period of a
// 4-4-5 year) leaves the remainder Phase when divided by Every, so that a
// budget knows them for any year.
//
// A behaviour with a cadence keeps its formula in monthly-equivalent
// terms — FixedPerPeriod and the prediction terms are per period, the
// posting spread over the periods it covers — so that totals, break-even
// and every reader that takes a formula per period read it as they read
// any other; the amount of one posting is Every times that.
type Cadence struct {
	Every int `json:"every"` // periods from one posting to the next: 3, 6 or 12
	Phase int `json:"phase"` // 0 to Every−1: a posting period's position in the year, modulo Every
}

// Cadences are the cadences the analysis recognises, in periods: a
// quarter, a half-year and a year of twelve periods.
var Cadences = []int{3, 6, 12}

// Posts reports whether the cost is posted in the period at position (1–12)
// of its year.
func (c Cadence) Posts(position int) bool {
	return c.Every > 0 && position >= 1 && position%c.Every == c.Phase
}

// Positions are the positions in the year (1–12) the cost is posted at.
func (c Cadence) Positions() []int {
	var out []int
	for p := 1; p <= 12; p++ {
		if c.Posts(p) {
			out = append(out, p)
		}
	}
	return out
}

// Noun names the span between two postings: "quarter", "half-year",
// "year", or "3 periods" for a cadence of another length.
func (c Cadence) Noun() string {
	switch c.Every {
	case 3:
		return "quarter"
	case 6:
		return "half-year"
	case 12:
		return "year"
	}
	return fmt.Sprintf("%d periods", c.Every)
}

// PositionsText writes the posting positions for people, in the style of
// period, any period of the calendar: month names for calendar months
// ("Mar, Jun, Sep, Dec"), period numbers for a 4-4-5 year, whose periods
// are named FYyyyy-Pnn ("P03, P06, P09, P12").
func (c Cadence) PositionsText(period string) string {
	months := [...]string{"Jan", "Feb", "Mar", "Apr", "May", "Jun", "Jul", "Aug", "Sep", "Oct", "Nov", "Dec"}
	var parts []string
	for _, p := range c.Positions() {
		if strings.HasPrefix(period, "FY") {
			parts = append(parts, fmt.Sprintf("P%02d", p))
		} else {
			parts = append(parts, months[p-1])
		}
	}
	return strings.Join(parts, ", ")
}
