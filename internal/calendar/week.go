package calendar

import (
	"fmt"
	"time"
)

// ISO 8601 weeks run Monday to Sunday. A week belongs to the year its
// Thursday falls in, so week 1 is the week holding the year's first Thursday
// (equivalently 4 January), and a year has 52 or 53 weeks.

// isoWeekPeriod names the ISO week of a date, YYYY-Www:
//
//	monday   = d - ((weekday(d) + 6) mod 7) days   (weekday: Sunday = 0)
//	thursday = monday + 3 days
//	YYYY     = year(thursday)
//	ww       = (dayOfYear(thursday) - 1) / 7 + 1
func isoWeekPeriod(d time.Time) string {
	monday := d.AddDate(0, 0, -((int(d.Weekday()) + 6) % 7))
	thursday := monday.AddDate(0, 0, 3)
	return fmt.Sprintf("%04d-W%02d", thursday.Year(), (thursday.YearDay()-1)/7+1)
}

// isoWeekOne returns the Monday that starts week 1 of ISO year y: the
// Monday on or before 4 January.
func isoWeekOne(y int) time.Time {
	jan4 := time.Date(y, time.January, 4, 0, 0, 0, 0, time.UTC)
	return jan4.AddDate(0, 0, -((int(jan4.Weekday()) + 6) % 7))
}

// isoWeeksIn returns 52 or 53, the number of weeks in ISO year y:
// (isoWeekOne(y+1) - isoWeekOne(y)) / 7.
func isoWeeksIn(y int) int {
	return (dayNumber(isoWeekOne(y+1)) - dayNumber(isoWeekOne(y))) / 7
}

// parseISOWeek checks a period written as YYYY-Www (ww from 01 to the
// year's 52 or 53) and returns its Monday: isoWeekOne(YYYY) + 7*(ww-1) days.
func parseISOWeek(period string) (time.Time, error) {
	if len(period) == 8 && period[4:6] == "-W" {
		y, okY := digits(period[:4])
		w, okW := digits(period[6:])
		if okY && okW && w >= 1 {
			if n := isoWeeksIn(y); w > n {
				return time.Time{}, fmt.Errorf("period %q: ISO year %04d has %d weeks", period, y, n)
			}
			return isoWeekOne(y).AddDate(0, 0, 7*(w-1)), nil
		}
	}
	return time.Time{}, fmt.Errorf("period %q is not an ISO week YYYY-Www", period)
}
