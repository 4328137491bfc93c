package calendar

import (
	"fmt"
	"time"
)

// The 4-4-5, 4-5-4 and 5-4-4 calendars split a 52-week fiscal year (see
// fiscalyear.go) into four quarters of 13 weeks, each quarter into three
// periods of the named numbers of weeks, giving 12 periods FYyyyy-P01 to
// FYyyyy-P12. A 53-week year adds its extra week to P12. Period n runs
//
//	first(n) = start(FY) + 7 * (w_1 + ... + w_(n-1)) days
//	last(n)  = first(n+1) - 1 day     (last(12) = start(FY+1) - 1 day)
//
// with w the weeks of each period, e.g. 4,4,5,4,4,5,4,4,5,4,4,5 for 4-4-5.

// quarterWeeks returns the weeks in the three periods of a quarter.
func (c Calendar) quarterWeeks() [3]int {
	switch c.Kind() {
	case Kind445:
		return [3]int{4, 4, 5}
	case Kind454:
		return [3]int{4, 5, 4}
	case Kind544:
		return [3]int{5, 4, 4}
	}
	panic(fmt.Sprintf("calendar: %q is not a 13-week-quarter kind", c.Kind()))
}

// weeksBefore returns w_1 + ... + w_(n-1), the weeks of a fiscal year
// before period n (1 to 12).
func (c Calendar) weeksBefore(n int) int {
	q := c.quarterWeeks()
	weeks := 13 * ((n - 1) / 3)
	for i := 0; i < (n-1)%3; i++ {
		weeks += q[i]
	}
	return weeks
}

// retailPeriod names the period holding d: the last n with weeksBefore(n)
// <= the whole weeks since start(FY). Week 53 falls in P12.
func (c Calendar) retailPeriod(d time.Time) string {
	fy := c.fiscalYearOf(d)
	week := (dayNumber(d) - dayNumber(c.fiscalYearStartDate(fy))) / 7 // 0 to 52
	n := 12
	for n > 1 && c.weeksBefore(n) > week {
		n--
	}
	return retailName(fy, n)
}

func retailName(fy, n int) string {
	return fmt.Sprintf("FY%04d-P%02d", fy, n)
}

// splitRetail checks a period written as FYyyyy-Pnn (nn from 01 to 12) and
// returns its fiscal year and period number.
func (c Calendar) splitRetail(period string) (fy, n int, err error) {
	c.quarterWeeks() // panics for a kind without 13-week quarters
	if len(period) == 10 && period[:2] == "FY" && period[6:8] == "-P" {
		y, okY := digits(period[2:6])
		p, okP := digits(period[8:])
		if okY && okP && p >= 1 && p <= 12 {
			return y, p, nil
		}
	}
	return 0, 0, fmt.Errorf("period %q is not FYyyyy-Pnn with nn from 01 to 12", period)
}

// parseRetail returns the first day of a period, first(n) above.
func (c Calendar) parseRetail(period string) (time.Time, error) {
	fy, n, err := c.splitRetail(period)
	if err != nil {
		return time.Time{}, err
	}
	return c.fiscalYearStartDate(fy).AddDate(0, 0, 7*c.weeksBefore(n)), nil
}
