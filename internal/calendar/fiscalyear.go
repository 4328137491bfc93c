package calendar

import "time"

// Fiscal years of the week-based kinds (week, 4-4-5, 4-5-4, 5-4-4) are
// whole weeks, 52 or 53 of them (364 or 371 days). With s = FiscalYearStart:
//
//	start(FY) = the Monday nearest to the 1st of month s,
//	            in calendar year FY if s = 1, else FY-1
//	end(FY)   = start(FY+1) - 1 day   (the Sunday nearest to the last day of month s-1)
//	weeks(FY) = (start(FY+1) - start(FY)) / 7
//
// "Nearest" is at most 3 days away either side. This is the "nearest"
// variant of the 52-53-week fiscal year, common practice in retail and
// manufacturing and allowed for tax years in some jurisdictions (recalled
// from memory: US Internal Revenue Code section 441(f)). With s = 1 the
// year coincides with the ISO 8601 week-year, because the Monday nearest
// 1 January is the Monday on or before 4 January.
//
// A fiscal year is named by the calendar year its nominal end (the last day
// of month s-1) falls in, which is the calendar year it ends in for every s
// except January: there the end can move up to 3 days into the next
// calendar year (FY2026 with s = 1 runs 2025-12-29 to 2027-01-03), and
// naming by the actual end would give two years one name and skip another.
//
// A year has 53 weeks exactly when the 1st of its start month is a Thursday,
// or a Wednesday with a 29 February in the following 12 months: the 365 or
// 366 days to the next 1st of month s then add up to 371 after both moves
// to the nearest Monday. This is the same rule as for ISO years.

// fiscalYearStartDate returns start(fy).
func (c Calendar) fiscalYearStartDate(fy int) time.Time {
	s := c.fiscalStartMonth()
	y := fy
	if s != time.January {
		y = fy - 1
	}
	return nearestMonday(time.Date(y, s, 1, 0, 0, 0, 0, time.UTC))
}

// nearestMonday returns the Monday at most 3 days before or after d.
func nearestMonday(d time.Time) time.Time {
	ahead := (int(time.Monday) - int(d.Weekday()) + 7) % 7 // 0..6 days to the next Monday
	if ahead > 3 {
		ahead -= 7
	}
	return d.AddDate(0, 0, ahead)
}

// fiscalYearOf returns the fiscal year FY with start(FY) <= d < start(FY+1).
func (c Calendar) fiscalYearOf(d time.Time) int {
	// start(FY) lies between 29 January of FY-1 (s = 2) and 4 January of
	// FY (s = 1), so FY is d's year or one of its neighbours.
	for fy := d.Year() - 1; fy <= d.Year()+1; fy++ {
		if !d.Before(c.fiscalYearStartDate(fy)) && d.Before(c.fiscalYearStartDate(fy+1)) {
			return fy
		}
	}
	panic("calendar: no fiscal year holds " + d.Format("2006-01-02"))
}

// fiscalWeeks returns weeks(fy), 52 or 53.
func (c Calendar) fiscalWeeks(fy int) int {
	return (dayNumber(c.fiscalYearStartDate(fy+1)) - dayNumber(c.fiscalYearStartDate(fy))) / 7
}
