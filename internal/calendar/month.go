package calendar

import (
	"fmt"
	"time"
)

// monthPeriod names a date's calendar month, YYYY-MM.
func monthPeriod(d time.Time) string {
	return fmt.Sprintf("%04d-%02d", d.Year(), int(d.Month()))
}

// parseMonth checks a period written as YYYY-MM and returns its first day.
func parseMonth(period string) (time.Time, error) {
	if len(period) == 7 && period[4] == '-' {
		y, okY := digits(period[:4])
		m, okM := digits(period[5:])
		if okY && okM && m >= 1 && m <= 12 {
			return time.Date(y, time.Month(m), 1, 0, 0, 0, 0, time.UTC), nil
		}
	}
	return time.Time{}, fmt.Errorf("period %q is not YYYY-MM", period)
}

// monthFiscalYear names a month's fiscal year by the calendar year it ends
// in: a fiscal year starting in month s > 1 of year y runs to month s-1 of
// y+1, so months s..12 belong to y+1 and months 1..s-1 to y.
func (c Calendar) monthFiscalYear(period string) (int, error) {
	t, err := parseMonth(period)
	if err != nil {
		return 0, err
	}
	if c.fiscalStartMonth() == time.January || t.Month() < c.fiscalStartMonth() {
		return t.Year(), nil
	}
	return t.Year() + 1, nil
}

// fiscalStartMonth is FiscalYearStart, January for the zero Calendar.
func (c Calendar) fiscalStartMonth() time.Month {
	switch {
	case c.FiscalYearStart == 0:
		return time.January
	case c.FiscalYearStart < 1 || c.FiscalYearStart > 12:
		panic(fmt.Sprintf("calendar: fiscal year start %d is not a month", c.FiscalYearStart))
	}
	return c.FiscalYearStart
}
