package pipeline

import (
	"github.com/costdrift/costdrift/internal/calendar"
	"github.com/costdrift/costdrift/internal/costdrift"
)

// postedAt is what a formula per period, perPeriod, puts in period p for a
// cost posted at a cadence (README, "Costs posted quarterly or yearly, and
// accruals"): the whole posting, cadence × perPeriod, in a period it is
// posted in, nothing in the others, as a budget does. A cost posted every
// period, or a period whose place in the year is unknown, keeps perPeriod.
func postedAt(b costdrift.Behaviour, p string, perPeriod float64) float64 {
	pos, ok := calendar.PositionInYear(p)
	if b.Cadence == nil || b.Cadence.Every < 1 || !ok {
		return perPeriod
	}
	if b.Cadence.Posts(pos) {
		return perPeriod * float64(b.Cadence.Every)
	}
	return 0
}
