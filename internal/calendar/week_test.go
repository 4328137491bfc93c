package calendar

import (
	"fmt"
	"testing"
	"time"
)

func mustNew(t testing.TB, kind string, fiscalYearStart, closeAfterDays int) Calendar {
	t.Helper()
	c, err := New(kind, fiscalYearStart, closeAfterDays)
	if err != nil {
		t.Fatal(err)
	}
	return c
}

// span calls f for every day from first to last inclusive.
func span(first, last string, f func(d time.Time)) {
	for d := date(first); !d.After(date(last)); d = d.AddDate(0, 0, 1) {
		f(d)
	}
}

// Outside check: Go's standard library time.Time.ISOWeek, for every day of
// 2015-2035. The package computes ISO weeks its own way (the week of the
// Thursday), so the two can disagree.
func TestISOWeekAgainstStandardLibrary(t *testing.T) {
	c := mustNew(t, KindWeek, 1, 0)
	span("2015-01-01", "2035-12-31", func(d time.Time) {
		y, w := d.ISOWeek()
		want := fmt.Sprintf("%04d-W%02d", y, w)
		if got := c.Period(d); got != want {
			t.Fatalf("Period(%s) = %s, want %s (time.ISOWeek)", d.Format("2006-01-02"), got, want)
		}
		monday, err := c.Parse(want)
		if err != nil {
			t.Fatal(err)
		}
		if my, mw := monday.ISOWeek(); monday.Weekday() != time.Monday || my != y || mw != w {
			t.Fatalf("Parse(%s) = %s, not the Monday of that week", want, monday.Format("2006-01-02 Monday"))
		}
	})
}

func TestISOWeekFacts(t *testing.T) {
	c := mustNew(t, KindWeek, 1, 0)
	dates := []struct {
		name, date, want string
		source           string
	}{
		{"Monday before New Year opens the next ISO year", "2024-12-30", "2025-W01", "brief; time.ISOWeek; GNU date +%G-W%V"},
		{"first Sunday of 2021 closes 2020-W53", "2021-01-03", "2020-W53", "from memory; time.ISOWeek; GNU date +%G-W%V"},
		{"Friday 2027-01-01 is in 2026-W53", "2027-01-01", "2026-W53", "from memory; time.ISOWeek; GNU date +%G-W%V"},
		{"2008-12-29 is 2009-W01", "2008-12-29", "2009-W01", "from memory; time.ISOWeek; GNU date +%G-W%V"},
		{"7 January is always in week 1 or 2", "2025-01-07", "2025-W02", "ISO 8601 rule: week 1 holds 4 January; time.ISOWeek"},
		{"a Sunday belongs to the week before it", "2025-02-16", "2025-W07", "ISO 8601 Monday-to-Sunday weeks; time.ISOWeek"},
	}
	for _, tc := range dates {
		t.Run(tc.name, func(t *testing.T) {
			if got := c.Period(date(tc.date)); got != tc.want {
				t.Errorf("Period(%s) = %s, want %s (%s)", tc.date, got, tc.want, tc.source)
			}
			y, w := date(tc.date).ISOWeek()
			if lib := fmt.Sprintf("%04d-W%02d", y, w); lib != tc.want {
				t.Errorf("the table's %s disagrees with time.ISOWeek %s", tc.want, lib)
			}
		})
	}

	// Weeks per ISO year. The rule "53 weeks when 1 January is a Thursday,
	// or a Wednesday in a leap year" is from memory; 28 December always lies
	// in the year's last week, so time.ISOWeek of it gives the count.
	years := []struct {
		year, weeks int
		source      string
	}{
		{2015, 53, "from memory: 1 Jan 2015 Thursday; time.ISOWeek(28 Dec)"},
		{2019, 52, "time.ISOWeek(28 Dec)"},
		{2020, 53, "brief; from memory: leap year, 1 Jan 2020 Wednesday; time.ISOWeek(28 Dec)"},
		{2021, 52, "time.ISOWeek(28 Dec)"},
		{2025, 52, "time.ISOWeek(28 Dec)"},
		{2026, 53, "brief; from memory: 1 Jan 2026 Thursday; time.ISOWeek(28 Dec)"},
		{2032, 53, "from memory: leap year, 1 Jan 2032 Thursday; time.ISOWeek(28 Dec)"},
	}
	for _, tc := range years {
		if got := isoWeeksIn(tc.year); got != tc.weeks {
			t.Errorf("ISO year %d has %d weeks, want %d (%s)", tc.year, got, tc.weeks, tc.source)
		}
		if _, w := time.Date(tc.year, time.December, 28, 0, 0, 0, 0, time.UTC).ISOWeek(); w != tc.weeks {
			t.Errorf("the table's %d weeks for %d disagree with time.ISOWeek (%d)", tc.weeks, tc.year, w)
		}
	}
	// Every year of the span, package against standard library.
	for y := 2015; y <= 2035; y++ {
		_, w := time.Date(y, time.December, 28, 0, 0, 0, 0, time.UTC).ISOWeek()
		if got := isoWeeksIn(y); got != w {
			t.Errorf("ISO year %d: %d weeks, time.ISOWeek says %d", y, got, w)
		}
	}
	if _, err := c.Parse("2021-W53"); err == nil {
		t.Error("2021-W53 must not parse: ISO 2021 has 52 weeks (time.ISOWeek)")
	}
	if first, _ := c.Parse("2020-W53"); !first.Equal(date("2020-12-28")) {
		t.Errorf("Parse(2020-W53) = %s, want 2020-12-28 (time.ISOWeek; GNU date)", first.Format("2006-01-02"))
	}
}

func TestWeekShiftAndBetweenOver53WeekYear(t *testing.T) {
	c := mustNew(t, KindWeek, 1, 0)
	tests := []struct {
		name, from string
		n          int
		want       string
		source     string
	}{
		{"into week 53", "2026-W52", 1, "2026-W53", "2026 has 53 ISO weeks (time.ISOWeek)"},
		{"over week 53", "2026-W52", 2, "2027-W01", "2026 has 53 ISO weeks (time.ISOWeek)"},
		{"back over a 52-week year end", "2026-W01", -1, "2025-W52", "2025 has 52 ISO weeks (time.ISOWeek)"},
		{"a whole 53-week year", "2026-W01", 53, "2027-W01", "2026 has 53 ISO weeks (time.ISOWeek)"},
		{"four years", "2025-W07", 4*52 + 1, "2029-W07", "2025-2028 hold one 53-week year, 2026 (time.ISOWeek)"},
	}
	for _, tc := range tests {
		if got := c.Shift(tc.from, tc.n); got != tc.want {
			t.Errorf("%s: Shift(%s, %d) = %s, want %s (%s)", tc.name, tc.from, tc.n, got, tc.want, tc.source)
		}
	}
	got := c.Between("2026-W52", "2027-W02")
	want := []string{"2026-W52", "2026-W53", "2027-W01", "2027-W02"} // 2026 has 53 ISO weeks (time.ISOWeek)
	if fmt.Sprint(got) != fmt.Sprint(want) {
		t.Errorf("Between = %v, want %v", got, want)
	}
}

// A week's fiscal year with a January start is its ISO week-year: the Monday
// nearest 1 January is the Monday on or before 4 January.
func TestWeekFiscalYear(t *testing.T) {
	jan := mustNew(t, KindWeek, 1, 0)
	span("2015-01-01", "2035-12-31", func(d time.Time) {
		y, _ := d.ISOWeek()
		if got, err := jan.FiscalYear(jan.Period(d)); err != nil || got != y {
			t.Fatalf("FiscalYear(%s) = %d, %v; want ISO year %d (time.ISOWeek)", jan.Period(d), got, err, y)
		}
	})
	jul := mustNew(t, KindWeek, 7, 0)
	tests := []struct {
		period string
		want   int
		source string
	}{
		// 1 July 2025 is a Tuesday (GNU date): FY2026 starts Monday 2025-06-30 = 2025-W27.
		{"2025-W26", 2025, "hand-computed: week of 2025-06-23, before the Monday nearest 1 July 2025"},
		{"2025-W27", 2026, "hand-computed: Monday 2025-06-30 is nearest 1 July 2025 (Tuesday, GNU date)"},
		// 1 July 2026 is a Wednesday (GNU date): FY2027 starts Monday 2026-06-29 = 2026-W27.
		{"2026-W26", 2026, "hand-computed: week of 2026-06-22"},
		{"2026-W27", 2027, "hand-computed: Monday 2026-06-29 is nearest 1 July 2026 (Wednesday, GNU date)"},
	}
	for _, tc := range tests {
		if got, err := jul.FiscalYear(tc.period); err != nil || got != tc.want {
			t.Errorf("FiscalYear(%s) = %d, %v; want %d (%s)", tc.period, got, err, tc.want, tc.source)
		}
	}
}
