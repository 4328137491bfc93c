package calendar

import (
	"fmt"
	"time"
)

// Calendar is a monthly accounting calendar.
type Calendar struct {
	FiscalYearStart time.Month // first month of the fiscal year
	CloseAfterDays  int        // a period is closed this many days after its last day
}

// Monthly returns a monthly calendar.
func Monthly(fiscalYearStart, closeAfterDays int) Calendar {
	if fiscalYearStart < 1 || fiscalYearStart > 12 {
		panic(fmt.Sprintf("calendar: fiscal year start %d is not a month", fiscalYearStart))
	}
	return Calendar{FiscalYearStart: time.Month(fiscalYearStart), CloseAfterDays: closeAfterDays}
}

// Period returns the period of a posting date, e.g. 2025-03.
func (c Calendar) Period(date time.Time) string {
	return date.Format("2006-01")
}

// Parse checks a period written as YYYY-MM and returns its first day.
func (c Calendar) Parse(period string) (time.Time, error) {
	t, err := time.Parse("2006-01", period)
	if err != nil || len(period) != 7 {
		return time.Time{}, fmt.Errorf("period %q is not YYYY-MM", period)
	}
	return t, nil
}

// End returns the last day of a period.
func (c Calendar) End(period string) (time.Time, error) {
	start, err := c.Parse(period)
	if err != nil {
		return time.Time{}, err
	}
	return start.AddDate(0, 1, -1), nil
}

// Closed reports whether the period's books are closed at now: at least
// CloseAfterDays whole days have passed since its last day.
func (c Calendar) Closed(period string, now time.Time) bool {
	end, err := c.End(period)
	if err != nil {
		return false
	}
	closesOn := end.AddDate(0, 0, 1+c.CloseAfterDays) // midnight after the last day, plus the grace days
	nowDate := time.Date(now.Year(), now.Month(), now.Day(), 0, 0, 0, 0, time.UTC)
	return !nowDate.Before(closesOn)
}

// Shift returns the period n periods after p (before, for negative n).
func (c Calendar) Shift(p string, n int) string {
	t, err := c.Parse(p)
	if err != nil {
		panic("calendar: " + err.Error())
	}
	return c.Period(t.AddDate(0, n, 0))
}

// Between lists the periods from first to last inclusive; empty when last is
// before first.
func (c Calendar) Between(first, last string) []string {
	var out []string
	for p := first; p <= last; p = c.Shift(p, 1) {
		out = append(out, p)
	}
	return out
}

// FiscalYear returns the fiscal year a period belongs to, named by the
// calendar year it ends in.
func (c Calendar) FiscalYear(period string) (int, error) {
	t, err := c.Parse(period)
	if err != nil {
		return 0, err
	}
	if c.FiscalYearStart == time.January || t.Month() < c.FiscalYearStart {
		return t.Year(), nil
	}
	return t.Year() + 1, nil
}
