package calendar

import (
	"fmt"
	"testing"
	"time"
)

var retailKinds = []string{Kind445, Kind454, Kind544}

// Period lengths in days in a 52-week year: the weeks of the kind's name
// times 7, repeated for four quarters (common practice; brief: 28/28/35 for
// 4-4-5). In a 53-week year P12 has 7 days more.
func TestRetailPeriodLengths(t *testing.T) {
	tests := []struct {
		name, kind string
		fy         int
		want       [12]int
		source     string
	}{
		{"4-4-5, 52 weeks", Kind445, 2025, [12]int{28, 28, 35, 28, 28, 35, 28, 28, 35, 28, 28, 35}, "common practice: 4-4-5 weeks x 7"},
		{"4-5-4, 52 weeks", Kind454, 2025, [12]int{28, 35, 28, 28, 35, 28, 28, 35, 28, 28, 35, 28}, "common practice: 4-5-4 weeks x 7"},
		{"5-4-4, 52 weeks", Kind544, 2025, [12]int{35, 28, 28, 35, 28, 28, 35, 28, 28, 35, 28, 28}, "common practice: 5-4-4 weeks x 7"},
		// FY2026 with a January start holds 1 January 2026, a Thursday (GNU date): 53 weeks.
		{"4-4-5, 53 weeks", Kind445, 2026, [12]int{28, 28, 35, 28, 28, 35, 28, 28, 35, 28, 28, 42}, "common practice: week 53 goes to the last period"},
		{"4-5-4, 53 weeks", Kind454, 2026, [12]int{28, 35, 28, 28, 35, 28, 28, 35, 28, 28, 35, 35}, "common practice: week 53 goes to the last period"},
		{"5-4-4, 53 weeks", Kind544, 2026, [12]int{35, 28, 28, 35, 28, 28, 35, 28, 28, 35, 28, 35}, "common practice: week 53 goes to the last period"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			c := mustNew(t, tc.kind, 1, 0)
			var got [12]int
			for n := 1; n <= 12; n++ {
				p := retailName(tc.fy, n)
				first, err1 := c.Parse(p)
				last, err2 := c.End(p)
				if err1 != nil || err2 != nil {
					t.Fatal(err1, err2)
				}
				got[n-1] = dayNumber(last) - dayNumber(first) + 1
				if first.Weekday() != time.Monday || last.Weekday() != time.Sunday {
					t.Errorf("%s runs %s to %s, want Monday to Sunday", p, first.Format("Mon 2006-01-02"), last.Format("Mon 2006-01-02"))
				}
			}
			if got != tc.want {
				t.Errorf("lengths %v, want %v (%s)", got, tc.want, tc.source)
			}
			// Quarters are 13 weeks: P04, P07 and P10 start 91, 182 and 273
			// days after P01 (common practice: four 13-week quarters).
			p1, _ := c.Parse(retailName(tc.fy, 1))
			for q, n := range []int{4, 7, 10} {
				pn, _ := c.Parse(retailName(tc.fy, n))
				if d := dayNumber(pn) - dayNumber(p1); d != 91*(q+1) {
					t.Errorf("P%02d starts %d days after P01, want %d", n, d, 91*(q+1))
				}
			}
		})
	}
}

func TestRetailKnownDates(t *testing.T) {
	tests := []struct {
		name, kind string
		start      int
		date, want string
		source     string
	}{
		// 1 January 2025 is a Wednesday (GNU date): FY2025 starts Monday 2024-12-30.
		{"first day of FY2025", Kind445, 1, "2024-12-30", "FY2025-P01", "hand-computed, nearest Monday to Wed 2025-01-01"},
		{"last day of FY2024", Kind445, 1, "2024-12-29", "FY2024-P12", "hand-computed, day before 2024-12-30"},
		{"4-4-5 P03 is weeks 9-13", Kind445, 1, "2025-02-24", "FY2025-P03", "hand-computed, 2024-12-30 + 8 weeks"},
		{"4-5-4 P02 is weeks 5-9", Kind454, 1, "2025-02-24", "FY2025-P02", "hand-computed, 2024-12-30 + 8 weeks"},
		{"5-4-4 P01 is weeks 1-5", Kind544, 1, "2025-01-27", "FY2025-P01", "hand-computed, 2024-12-30 + 4 weeks"},
		{"last day of FY2025", Kind445, 1, "2025-12-28", "FY2025-P12", "hand-computed, day before Mon 2025-12-29"},
		// 1 January 2026 is a Thursday, 1 January 2027 a Friday (GNU date):
		// FY2026 runs 2025-12-29 to 2027-01-03, 53 weeks, named 2026.
		{"FY2026 starts in December 2025", Kind445, 1, "2025-12-29", "FY2026-P01", "hand-computed, nearest Monday to Thu 2026-01-01"},
		{"week 53 is in P12", Kind445, 1, "2027-01-03", "FY2026-P12", "common practice: week 53 goes to the last period"},
		{"FY2027 starts 4 January", Kind445, 1, "2027-01-04", "FY2027-P01", "hand-computed, nearest Monday to Fri 2027-01-01"},
		// February start: 1 February 2024 is a Thursday, 1 February 2025 a
		// Saturday (GNU date): FY2025 runs 2024-01-29 to 2025-02-02, 53 weeks.
		{"February start, first day", Kind445, 2, "2024-01-29", "FY2025-P01", "hand-computed, nearest Monday to Thu 2024-02-01"},
		{"February start, week 53", Kind445, 2, "2025-02-02", "FY2025-P12", "hand-computed, day before Mon 2025-02-03"},
		{"February start, next year", Kind445, 2, "2025-02-03", "FY2026-P01", "hand-computed, nearest Monday to Sat 2025-02-01"},
		// July start: 1 July 2025 is a Tuesday (GNU date).
		{"July start", Kind454, 7, "2025-06-30", "FY2026-P01", "hand-computed, nearest Monday to Tue 2025-07-01"},
		{"July start, day before", Kind454, 7, "2025-06-29", "FY2025-P12", "hand-computed"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			c := mustNew(t, tc.kind, tc.start, 0)
			if got := c.Period(date(tc.date)); got != tc.want {
				t.Errorf("Period(%s) = %s, want %s (%s)", tc.date, got, tc.want, tc.source)
			}
		})
	}
}

// The 53-week rule, written independently of the package: the 1st of the
// start month is a Thursday, or a Wednesday with 366 days to the next 1st
// of that month (derived in fiscalyear.go; the same rule as ISO years,
// which is from memory). For a January start it is also checked against
// time.ISOWeek, because that fiscal year is the ISO week-year.
func TestFiftyThreeWeekYears(t *testing.T) {
	for _, kind := range retailKinds {
		for s := 1; s <= 12; s++ {
			c := mustNew(t, kind, s, 0)
			for fy := 2015; fy <= 2035; fy++ {
				y := fy
				if s > 1 {
					y = fy - 1
				}
				first := time.Date(y, time.Month(s), 1, 0, 0, 0, 0, time.UTC)
				days := dayNumber(first.AddDate(1, 0, 0)) - dayNumber(first)
				rule := first.Weekday() == time.Thursday || (first.Weekday() == time.Wednesday && days == 366)

				weeks := 0
				for n := 1; n <= 12; n++ {
					a, _ := c.Parse(retailName(fy, n))
					b, _ := c.End(retailName(fy, n))
					weeks += (dayNumber(b) - dayNumber(a) + 1) / 7
				}
				if weeks != 52 && weeks != 53 {
					t.Fatalf("%s start %d FY%d: periods sum to %d weeks", kind, s, fy, weeks)
				}
				if (weeks == 53) != rule {
					t.Errorf("%s start %d FY%d: %d weeks, but the 1st of month %d is a %s (%d-day year)", kind, s, fy, weeks, s, first.Weekday(), days)
				}
				if s == 1 {
					_, iso := time.Date(fy, time.December, 28, 0, 0, 0, 0, time.UTC).ISOWeek()
					if weeks != iso {
						t.Errorf("%s FY%d: %d weeks, time.ISOWeek says ISO %d has %d", kind, fy, weeks, fy, iso)
					}
					p1, _ := c.Parse(retailName(fy, 1))
					if y, w := p1.ISOWeek(); y != fy || w != 1 {
						t.Errorf("%s FY%d starts %s, which time.ISOWeek puts in %d-W%02d, not W01", kind, fy, p1.Format("2006-01-02"), y, w)
					}
				}
			}
		}
	}
}

// A 53rd week comes every 5 or 6 years (common practice), except that the
// gap is 7 years across a century year without 29 February (2100, 2200,
// 2300). The exception was found by this test and confirmed with
// time.ISOWeek, whose ISO long years 2296 and 2303 are 7 years apart.
func TestFiftyThreeWeekYearsAreFiveToSevenYearsApart(t *testing.T) {
	for s := 1; s <= 12; s++ {
		c := mustNew(t, Kind445, s, 0)
		last, sevens := 0, 0
		for fy := 2001; fy <= 2400; fy++ {
			if c.fiscalWeeks(fy) != 53 {
				continue
			}
			gap := fy - last
			skipsLeapDay := false // a year y00 with y00 % 400 != 0 lies between them
			for y := last + 1; y <= fy; y++ {
				skipsLeapDay = skipsLeapDay || (y%100 == 0 && y%400 != 0)
			}
			switch {
			case last == 0, gap == 5, gap == 6:
			case gap == 7 && skipsLeapDay:
				sevens++
			default:
				t.Errorf("start %d: 53-week years FY%d and FY%d are %d years apart", s, last, fy, gap)
			}
			last = fy
		}
		if sevens > 3 {
			t.Errorf("start %d: %d seven-year gaps in 2001-2400, want at most one per century year 2100, 2200, 2300", s, sevens)
		}
	}
	_, w1 := time.Date(2296, time.December, 28, 0, 0, 0, 0, time.UTC).ISOWeek()
	_, w2 := time.Date(2303, time.December, 28, 0, 0, 0, 0, time.UTC).ISOWeek()
	if c := mustNew(t, Kind445, 1, 0); c.fiscalWeeks(2296) != w1 || c.fiscalWeeks(2303) != w2 || w1 != 53 || w2 != 53 {
		t.Errorf("FY2296 and FY2303 (January start): %d and %d weeks; time.ISOWeek: %d and %d", c.fiscalWeeks(2296), c.fiscalWeeks(2303), w1, w2)
	}
}

func TestRetailShiftAndBetween(t *testing.T) {
	c := mustNew(t, Kind445, 1, 0)
	tests := []struct {
		name, from string
		n          int
		want       string
		source     string
	}{
		{"over a year end", "FY2025-P12", 1, "FY2026-P01", "12 periods a year"},
		{"back over a year end", "FY2026-P01", -1, "FY2025-P12", "12 periods a year"},
		{"three years less a period", "FY2024-P02", 35, "FY2027-P01", "12 periods a year: 2*12 + 11"},
		{"over the 53-week FY2026", "FY2026-P11", 3, "FY2027-P02", "12 periods a year, 53 weeks or not"},
	}
	for _, tc := range tests {
		if got := c.Shift(tc.from, tc.n); got != tc.want {
			t.Errorf("%s: Shift(%s, %d) = %s, want %s (%s)", tc.name, tc.from, tc.n, got, tc.want, tc.source)
		}
	}
	got := c.Between("FY2026-P11", "FY2027-P02")
	want := []string{"FY2026-P11", "FY2026-P12", "FY2027-P01", "FY2027-P02"}
	if fmt.Sprint(got) != fmt.Sprint(want) {
		t.Fatalf("Between = %v, want %v", got, want)
	}
	// 4 + 6 + 4 + 4 weeks: P12 of the 53-week FY2026 has 6 (common practice).
	first, _ := c.Parse(got[0])
	last, _ := c.End(got[len(got)-1])
	if days := dayNumber(last) - dayNumber(first) + 1; days != 18*7 {
		t.Errorf("FY2026-P11 to FY2027-P02 spans %d days, want %d", days, 18*7)
	}
}

func TestRetailFiscalYear(t *testing.T) {
	c := mustNew(t, Kind544, 2, 0)
	for p, want := range map[string]int{"FY2025-P01": 2025, "FY2025-P12": 2025, "FY2031-P07": 2031} { // named in the period
		if got, err := c.FiscalYear(p); err != nil || got != want {
			t.Errorf("FiscalYear(%s) = %d, %v; want %d", p, got, err, want)
		}
	}
	// The name is the calendar year the fiscal year ends in (brief; common
	// practice), except with a January start, whose end can move up to 3
	// days into the next year (fiscalyear.go).
	for s := 1; s <= 12; s++ {
		c := mustNew(t, Kind445, s, 0)
		for fy := 2015; fy <= 2035; fy++ {
			end, _ := c.End(retailName(fy, 12))
			switch {
			case s > 1 && end.Year() != fy:
				t.Errorf("start %d: FY%d ends %s", s, fy, end.Format("2006-01-02"))
			case s == 1 && end.Year() != fy && !(end.Year() == fy+1 && end.Month() == time.January && end.Day() <= 3):
				t.Errorf("start 1: FY%d ends %s, more than 3 days from 31 December", fy, end.Format("2006-01-02"))
			}
		}
	}
}
