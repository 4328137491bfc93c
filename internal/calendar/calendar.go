package calendar

import (
	"fmt"
	"time"
)

// The kinds of calendar, as written in the config key calendar.period.
const (
	KindMonth = "month" // calendar months, "2025-03"
	KindWeek  = "week"  // ISO 8601 weeks, "2025-W07"
	Kind445   = "4-4-5" // 13-week quarters of 4, 4 and 5 weeks, "FY2025-P01"
	Kind454   = "4-5-4" // 13-week quarters of 4, 5 and 4 weeks
	Kind544   = "5-4-4" // 13-week quarters of 5, 4 and 4 weeks
)

// Kinds lists every kind New accepts, in the order the config documents them.
func Kinds() []string {
	return []string{KindMonth, KindWeek, Kind445, Kind454, Kind544}
}

// Calendar maps posting dates to accounting periods of one kind. Build it
// with New or Monthly; the zero Calendar is a calendar-month calendar whose
// fiscal year starts in January.
//
// Within one kind, period names sort as strings in time order, so callers
// may compare them with < and >.
type Calendar struct {
	FiscalYearStart time.Month // first month of the fiscal year
	CloseAfterDays  int        // a period is closed this many days after its last day

	kind string // one of Kinds(); "" means month
}

// New returns a calendar of the given kind (one of Kinds()). It is the
// constructor for values read from the configuration, so a bad value is an
// error rather than a panic.
func New(kind string, fiscalYearStart, closeAfterDays int) (Calendar, error) {
	known := false
	for _, k := range Kinds() {
		known = known || k == kind
	}
	if !known {
		return Calendar{}, fmt.Errorf("calendar kind %q is not one of month, week, 4-4-5, 4-5-4, 5-4-4", kind)
	}
	if fiscalYearStart < 1 || fiscalYearStart > 12 {
		return Calendar{}, fmt.Errorf("fiscal year start %d is not a month number from 1 to 12", fiscalYearStart)
	}
	if closeAfterDays < 0 {
		return Calendar{}, fmt.Errorf("close after days %d is negative", closeAfterDays)
	}
	return Calendar{FiscalYearStart: time.Month(fiscalYearStart), CloseAfterDays: closeAfterDays, kind: kind}, nil
}

// Monthly returns a calendar-month calendar. A fiscal year start that is not
// a month number is a programming error and panics.
func Monthly(fiscalYearStart, closeAfterDays int) Calendar {
	if fiscalYearStart < 1 || fiscalYearStart > 12 {
		panic(fmt.Sprintf("calendar: fiscal year start %d is not a month", fiscalYearStart))
	}
	return Calendar{FiscalYearStart: time.Month(fiscalYearStart), CloseAfterDays: closeAfterDays, kind: KindMonth}
}

// Kind returns the calendar's kind, one of Kinds().
func (c Calendar) Kind() string {
	if c.kind == "" {
		return KindMonth
	}
	return c.kind
}

// Period returns the period of a posting date: "2025-03" (month),
// "2025-W07" (week) or "FY2025-P03" (4-4-5, 4-5-4, 5-4-4). Only the date's
// year, month and day in its own location count; the time of day is ignored.
func (c Calendar) Period(date time.Time) string {
	d := civil(date)
	switch c.Kind() {
	case KindMonth:
		return monthPeriod(d)
	case KindWeek:
		return isoWeekPeriod(d)
	default:
		return c.retailPeriod(d)
	}
}

// Parse checks that period is a name of this calendar's kind (and no other)
// and returns its first day, at midnight UTC.
func (c Calendar) Parse(period string) (time.Time, error) {
	switch c.Kind() {
	case KindMonth:
		return parseMonth(period)
	case KindWeek:
		return parseISOWeek(period)
	default:
		return c.parseRetail(period)
	}
}

// End returns the last day of a period, at midnight UTC: the day before the
// first day of the next period, so consecutive periods are contiguous.
func (c Calendar) End(period string) (time.Time, error) {
	i, err := c.ordinal(period)
	if err != nil {
		return time.Time{}, err
	}
	next, err := c.Parse(c.fromOrdinal(i + 1))
	if err != nil {
		return time.Time{}, err
	}
	return next.AddDate(0, 0, -1), nil
}

// Closed reports whether the period's books are closed at now: at least
// CloseAfterDays whole days have passed since its last day, i.e.
// date(now) >= End(period) + 1 + CloseAfterDays days. A period name that
// does not parse is never closed.
func (c Calendar) Closed(period string, now time.Time) bool {
	end, err := c.End(period)
	if err != nil {
		return false
	}
	closesOn := end.AddDate(0, 0, 1+c.CloseAfterDays) // midnight after the last day, plus the grace days
	return !civil(now).Before(closesOn)
}

// Shift returns the period n periods after p (before, for negative n). A
// period name that does not parse is a programming error and panics.
func (c Calendar) Shift(p string, n int) string {
	i, err := c.ordinal(p)
	if err != nil {
		panic("calendar: " + err.Error())
	}
	return c.fromOrdinal(i + n)
}

// Between lists the periods from first to last inclusive; empty when last is
// before first. Period names that do not parse are a programming error and
// panic.
func (c Calendar) Between(first, last string) []string {
	i, err := c.ordinal(first)
	if err != nil {
		panic("calendar: " + err.Error())
	}
	j, err := c.ordinal(last)
	if err != nil {
		panic("calendar: " + err.Error())
	}
	var out []string
	for k := i; k <= j; k++ {
		out = append(out, c.fromOrdinal(k))
	}
	return out
}

// FiscalYear returns the fiscal year a period belongs to, named by the
// calendar year it ends in. For the week-based kinds a fiscal year starts on
// the Monday nearest the 1st of FiscalYearStart; with a January start it is
// named by the year of its nominal end, 31 December, although it can run up
// to 3 days into January (see fiscalyear.go). A week belongs to the fiscal
// year of its Monday.
func (c Calendar) FiscalYear(period string) (int, error) {
	switch c.Kind() {
	case KindMonth:
		return c.monthFiscalYear(period)
	case KindWeek:
		monday, err := parseISOWeek(period)
		if err != nil {
			return 0, err
		}
		// Fiscal years of the week-based kinds start on a Monday, so a
		// week lies wholly in the fiscal year of its Monday.
		return c.fiscalYearOf(monday), nil
	default:
		fy, _, err := c.splitRetail(period)
		return fy, err
	}
}

// ordinal numbers periods consecutively, so that Shift and Between are
// integer arithmetic: month y*12 + (m-1); week (Monday - 1969-12-29)/7;
// 4-4-5 and the like fy*12 + (p-1), every fiscal year having 12 periods.
func (c Calendar) ordinal(p string) (int, error) {
	switch c.Kind() {
	case KindMonth:
		t, err := parseMonth(p)
		if err != nil {
			return 0, err
		}
		return t.Year()*12 + int(t.Month()) - 1, nil
	case KindWeek:
		monday, err := parseISOWeek(p)
		if err != nil {
			return 0, err
		}
		return floorDiv(dayNumber(monday)-dayNumber(weekZero), 7), nil
	default:
		fy, n, err := c.splitRetail(p)
		if err != nil {
			return 0, err
		}
		return fy*12 + n - 1, nil
	}
}

// fromOrdinal is the inverse of ordinal.
func (c Calendar) fromOrdinal(i int) string {
	switch c.Kind() {
	case KindMonth:
		return fmt.Sprintf("%04d-%02d", floorDiv(i, 12), i-12*floorDiv(i, 12)+1)
	case KindWeek:
		return isoWeekPeriod(weekZero.AddDate(0, 0, 7*i))
	default:
		return retailName(floorDiv(i, 12), i-12*floorDiv(i, 12)+1)
	}
}

// weekZero is the Monday that week ordinal 0 starts on (Unix day -3).
var weekZero = time.Date(1969, time.December, 29, 0, 0, 0, 0, time.UTC)

// civil drops the time of day and the location, keeping the calendar date.
func civil(t time.Time) time.Time {
	y, m, d := t.Date()
	return time.Date(y, m, d, 0, 0, 0, 0, time.UTC)
}

// dayNumber counts days since 1970-01-01 for a midnight-UTC date.
func dayNumber(t time.Time) int {
	return int(floorDiv64(t.Unix(), 86400))
}

func floorDiv(a, b int) int {
	q := a / b
	if (a%b != 0) && ((a < 0) != (b < 0)) {
		q--
	}
	return q
}

func floorDiv64(a, b int64) int64 {
	q := a / b
	if (a%b != 0) && ((a < 0) != (b < 0)) {
		q--
	}
	return q
}

// digits reads a run of ASCII digits; ok is false for anything else,
// including a sign or an empty string.
func digits(s string) (n int, ok bool) {
	if s == "" {
		return 0, false
	}
	for _, r := range s {
		if r < '0' || r > '9' {
			return 0, false
		}
		n = n*10 + int(r-'0')
	}
	return n, true
}
