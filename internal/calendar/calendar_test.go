package calendar

import (
	"strings"
	"testing"
	"time"
)

func date(s string) time.Time {
	t, err := time.Parse("2006-01-02", s)
	if err != nil {
		panic(err)
	}
	return t
}

func TestPeriod(t *testing.T) {
	c := Monthly(1, 10)
	for in, want := range map[string]string{"2025-03-01": "2025-03", "2025-03-31": "2025-03", "2024-02-29": "2024-02", "2026-12-31": "2026-12"} {
		if got := c.Period(date(in)); got != want {
			t.Errorf("Period(%s) = %s, want %s", in, got, want)
		}
	}
}

func TestClosed(t *testing.T) {
	c := Monthly(1, 10)
	tests := []struct {
		period, now string
		want        bool
	}{
		// November 2026 ends on the 30th; ten days later is 10 December,
		// so it is closed from 11 December on.
		{"2026-11", "2026-12-01", false},
		{"2026-11", "2026-12-10", false},
		{"2026-11", "2026-12-11", true},
		{"2026-10", "2026-12-01", true},
		{"2024-02", "2024-03-10", false}, // leap February ends on the 29th
		{"2024-02", "2024-03-11", true},
		{"2026-12", "2026-12-01", false},
	}
	for _, tc := range tests {
		if got := c.Closed(tc.period, date(tc.now)); got != tc.want {
			t.Errorf("Closed(%s at %s) = %v, want %v", tc.period, tc.now, got, tc.want)
		}
	}
	if !Monthly(1, 0).Closed("2026-11", date("2026-12-01")) {
		t.Error("with no grace days a month is closed the day after it ends")
	}
}

func TestShiftAndBetween(t *testing.T) {
	c := Monthly(1, 10)
	if got := c.Shift("2025-01", -1); got != "2024-12" {
		t.Errorf("Shift back over the year = %s", got)
	}
	if got := c.Shift("2023-07", 35); got != "2026-06" {
		t.Errorf("Shift 35 = %s", got)
	}
	got := c.Between("2024-11", "2025-02")
	want := []string{"2024-11", "2024-12", "2025-01", "2025-02"}
	if len(got) != len(want) {
		t.Fatalf("Between = %v", got)
	}
	for i := range want {
		if got[i] != want[i] {
			t.Fatalf("Between = %v, want %v", got, want)
		}
	}
	if len(c.Between("2025-02", "2025-01")) != 0 {
		t.Error("Between backwards must be empty")
	}
}

func TestFiscalYear(t *testing.T) {
	c := Monthly(7, 10) // July to June, named by the year it ends in
	for p, want := range map[string]int{"2025-06": 2025, "2025-07": 2026, "2026-01": 2026} {
		if got, _ := c.FiscalYear(p); got != want {
			t.Errorf("FiscalYear(%s) = %d, want %d", p, got, want)
		}
	}
	if _, err := c.Parse("2025-13"); err == nil {
		t.Error("2025-13 must not parse")
	}
}

func TestNew(t *testing.T) {
	for _, kind := range Kinds() {
		c, err := New(kind, 4, 5)
		if err != nil || c.Kind() != kind || c.FiscalYearStart != time.April || c.CloseAfterDays != 5 {
			t.Errorf("New(%q, 4, 5) = %+v, %v", kind, c, err)
		}
	}
	bad := []struct {
		name, kind    string
		start, after  int
		wantInMessage string
	}{
		{"unknown kind", "quarter", 1, 0, `calendar kind "quarter"`},
		{"empty kind", "", 1, 0, `calendar kind ""`},
		{"month 13", KindWeek, 13, 0, "fiscal year start 13"},
		{"month 0", Kind445, 0, 0, "fiscal year start 0"},
		{"negative grace", KindMonth, 1, -1, "close after days -1"},
	}
	for _, tc := range bad {
		if _, err := New(tc.kind, tc.start, tc.after); err == nil || !strings.Contains(err.Error(), tc.wantInMessage) {
			t.Errorf("%s: New = %v, want an error containing %q", tc.name, err, tc.wantInMessage)
		}
	}
	if (Calendar{}).Kind() != KindMonth || Monthly(1, 0).Kind() != KindMonth {
		t.Error("the zero Calendar and Monthly must be month calendars")
	}
}

// Parse accepts only the kind's own period names.
func TestParseOnlyOwnKind(t *testing.T) {
	tests := []struct {
		kind, period string
		ok           bool
	}{
		{KindMonth, "2025-03", true},
		{KindMonth, "2025-W07", false},
		{KindMonth, "FY2025-P03", false},
		{KindMonth, "2025-3", false},
		{KindMonth, "2025-00", false},
		{KindWeek, "2025-W07", true},
		{KindWeek, "2026-W53", true},  // 2026 has 53 ISO weeks (time.ISOWeek)
		{KindWeek, "2025-W53", false}, // 2025 has 52 (time.ISOWeek)
		{KindWeek, "2025-W00", false},
		{KindWeek, "2025-W7", false},
		{KindWeek, "2025-w07", false},
		{KindWeek, "2025-03", false},
		{KindWeek, "FY2025-W07", false},
		{Kind445, "FY2025-P01", true},
		{Kind445, "FY2025-P12", true},
		{Kind445, "FY2025-P13", false},
		{Kind445, "FY2025-P00", false},
		{Kind445, "FY2025-P1", false},
		{Kind445, "FY25-P01", false},
		{Kind445, "2025-03", false},
		{Kind454, "2025-W07", false},
		{Kind544, "fy2025-p01", false},
		{Kind544, "FY+025-P01", false},
	}
	for _, tc := range tests {
		c := mustNew(t, tc.kind, 1, 0)
		_, err := c.Parse(tc.period)
		if (err == nil) != tc.ok {
			t.Errorf("%s: Parse(%q) error = %v, want ok = %v", tc.kind, tc.period, err, tc.ok)
		}
		_, errEnd := c.End(tc.period)
		_, errFY := c.FiscalYear(tc.period)
		if (errEnd == nil) != tc.ok || (errFY == nil) != tc.ok {
			t.Errorf("%s: End / FiscalYear(%q) errors %v / %v, want ok = %v", tc.kind, tc.period, errEnd, errFY, tc.ok)
		}
		if !tc.ok && c.Closed(tc.period, date("2099-01-01")) {
			t.Errorf("%s: a period that does not parse (%q) must not be closed", tc.kind, tc.period)
		}
	}
}

func TestSortOrder(t *testing.T) {
	tests := []struct{ kind, earlier, later, date1, date2 string }{
		{KindWeek, "2025-W07", "2025-W10", "2025-02-10", "2025-03-03"},    // time.ISOWeek
		{Kind445, "FY2025-P02", "FY2025-P10", "2025-02-10", "2025-10-06"}, // hand-computed from FY2025 start 2024-12-30
		{Kind454, "FY2025-P12", "FY2026-P01", "2025-12-28", "2025-12-29"}, // hand-computed: FY2026 starts 2025-12-29
		{KindMonth, "2025-12", "2026-01", "2025-12-31", "2026-01-01"},     // calendar months
		{KindWeek, "2026-W53", "2027-W01", "2027-01-03", "2027-01-04"},    // time.ISOWeek
		{Kind544, "FY2099-P12", "FY2100-P01", "2100-01-03", "2100-01-04"}, // hand-computed: 1 Jan 2100 is a Friday (GNU date), so FY2100 starts Monday 4 Jan
	}
	for _, tc := range tests {
		c := mustNew(t, tc.kind, 1, 0)
		if !(tc.earlier < tc.later) {
			t.Errorf("%q does not sort before %q", tc.earlier, tc.later)
		}
		if got := c.Period(date(tc.date1)); got != tc.earlier {
			t.Errorf("%s: Period(%s) = %s, want %s", tc.kind, tc.date1, got, tc.earlier)
		}
		if got := c.Period(date(tc.date2)); got != tc.later {
			t.Errorf("%s: Period(%s) = %s, want %s", tc.kind, tc.date2, got, tc.later)
		}
	}
}

// Property, for every kind and several fiscal year starts, every day d from
// 2015 to 2035: Parse(Period(d)) <= d <= End(Period(d)); the day after a
// period's End starts the next period (Shift by 1), so every day lies in
// exactly one period and consecutive periods are contiguous; names rise as
// strings; fiscal years change only from the last period to the first.
func TestEveryDayInExactlyOnePeriod(t *testing.T) {
	for _, kind := range Kinds() {
		for _, start := range []int{1, 2, 7, 12} {
			c := mustNew(t, kind, start, 0)
			prev, prevFY := "", 0
			periods := 0
			span("2015-01-01", "2035-12-31", func(d time.Time) {
				p := c.Period(d)
				first, err1 := c.Parse(p)
				end, err2 := c.End(p)
				if err1 != nil || err2 != nil {
					t.Fatalf("%s/%d: %s from %s does not parse: %v %v", kind, start, p, d.Format("2006-01-02"), err1, err2)
				}
				if d.Before(first) || d.After(end) {
					t.Fatalf("%s/%d: %s lies outside its period %s (%s to %s)", kind, start, d.Format("2006-01-02"), p, first.Format("2006-01-02"), end.Format("2006-01-02"))
				}
				if p == prev || prev == "" {
					prev = p
					return
				}
				periods++
				fy, _ := c.FiscalYear(p)
				switch {
				case p != c.Shift(prev, 1):
					t.Fatalf("%s/%d: %s follows %s, want %s", kind, start, p, prev, c.Shift(prev, 1))
				case !(prev < p):
					t.Fatalf("%s/%d: %s does not sort after %s", kind, start, p, prev)
				case !first.Equal(d):
					t.Fatalf("%s/%d: %s starts %s, want the day after %s ends (%s)", kind, start, p, first.Format("2006-01-02"), prev, d.Format("2006-01-02"))
				case fy != prevFY && prevFY != 0 && fy != prevFY+1:
					t.Fatalf("%s/%d: fiscal year jumps from %d to %d at %s", kind, start, prevFY, fy, p)
				}
				if prevEnd, _ := c.End(prev); !prevEnd.Equal(d.AddDate(0, 0, -1)) {
					t.Fatalf("%s/%d: %s ends %s, want %s", kind, start, prev, prevEnd.Format("2006-01-02"), d.AddDate(0, 0, -1).Format("2006-01-02"))
				}
				if kind != KindMonth && kind != KindWeek && fy != prevFY && prevFY != 0 &&
					(!strings.HasSuffix(prev, "-P12") || !strings.HasSuffix(p, "-P01")) {
					t.Fatalf("%s/%d: fiscal year changes between %s and %s", kind, start, prev, p)
				}
				prev, prevFY = p, fy
			})
			// Changes of period over the span: 21 years of months, 252 - 1;
			// ISO weeks from 2015-W01 (Monday 2014-12-29) to 2036-W01
			// (Monday 2035-12-31), (2035-12-31 - 2014-12-29) / 7 = 1096
			// (time.ISOWeek; GNU date +%G-W%V).
			want := map[string]int{KindMonth: 251, KindWeek: 1096}[kind]
			if want != 0 && periods != want {
				t.Errorf("%s/%d: %d period changes in 2015-2035, want %d", kind, start, periods, want)
			}
		}
	}
}

func TestShiftBetweenRoundTrips(t *testing.T) {
	for _, kind := range Kinds() {
		c := mustNew(t, kind, 2, 0)
		span("2015-01-05", "2035-12-31", func(d time.Time) {
			if d.Weekday() != time.Monday {
				return // one day a week is enough here
			}
			p := c.Period(d)
			for _, n := range []int{-60, -13, -1, 0, 1, 12, 53, 60} {
				q := c.Shift(p, n)
				if back := c.Shift(q, -n); back != p {
					t.Fatalf("%s: Shift(Shift(%s, %d), %d) = %s", kind, p, n, -n, back)
				}
				first, last := p, q
				if n < 0 {
					first, last = q, p
				}
				between := c.Between(first, last)
				if len(between) != abs(n)+1 || between[0] != first || between[len(between)-1] != last {
					t.Fatalf("%s: Between(%s, %s) = %d periods, want %d", kind, first, last, len(between), abs(n)+1)
				}
				if n != 0 && len(c.Between(last, first)) != 0 {
					t.Fatalf("%s: Between(%s, %s) backwards must be empty", kind, last, first)
				}
			}
		})
	}
}

func abs(n int) int {
	if n < 0 {
		return -n
	}
	return n
}

func TestClosedWeekBased(t *testing.T) {
	tests := []struct {
		name, kind, period, now string
		after                   int
		want                    bool
		source                  string
	}{
		// 2025-W07 runs Monday 10 to Sunday 16 February 2025 (time.ISOWeek).
		{"week, grace not over", KindWeek, "2025-W07", "2025-02-19", 3, false, "16 Feb + 1 + 3 days = 20 Feb"},
		{"week, closes", KindWeek, "2025-W07", "2025-02-20", 3, true, "16 Feb + 1 + 3 days = 20 Feb"},
		{"week, no grace", KindWeek, "2025-W07", "2025-02-17", 0, true, "the day after Sunday 16 Feb"},
		{"week, last day", KindWeek, "2025-W07", "2025-02-16", 0, false, "still inside the week"},
		// FY2025-P01 (4-4-5, January start) runs 2024-12-30 to 2025-01-26, hand-computed.
		{"4-4-5, grace not over", Kind445, "FY2025-P01", "2025-02-05", 10, false, "26 Jan + 1 + 10 days = 6 Feb"},
		{"4-4-5, closes", Kind445, "FY2025-P01", "2025-02-06", 10, true, "26 Jan + 1 + 10 days = 6 Feb"},
		// FY2026-P12 holds week 53 and ends 2027-01-03, hand-computed.
		{"53-week P12 still open", Kind445, "FY2026-P12", "2027-01-13", 10, false, "3 Jan + 1 + 10 days = 14 Jan"},
		{"53-week P12 closes", Kind445, "FY2026-P12", "2027-01-14", 10, true, "3 Jan + 1 + 10 days = 14 Jan"},
	}
	for _, tc := range tests {
		c := mustNew(t, tc.kind, 1, tc.after)
		if got := c.Closed(tc.period, date(tc.now)); got != tc.want {
			t.Errorf("%s: Closed(%s at %s) = %v, want %v (%s)", tc.name, tc.period, tc.now, got, tc.want, tc.source)
		}
	}
	// The time of day and the location of now do not matter, only its date.
	oslo := time.FixedZone("UTC+1", 3600)
	c := mustNew(t, KindWeek, 1, 3)
	if !c.Closed("2025-W07", time.Date(2025, 2, 20, 0, 30, 0, 0, oslo)) {
		t.Error("00:30 on 20 Feb at UTC+1 is 20 Feb: the week is closed")
	}
}

func TestMisusePanics(t *testing.T) {
	c := mustNew(t, KindWeek, 1, 0)
	for name, f := range map[string]func(){
		"Shift of a month name": func() { c.Shift("2025-03", 1) },
		"Between of 4-4-5":      func() { c.Between("FY2025-P01", "FY2025-P02") },
		"Monthly month 13":      func() { Monthly(13, 0) },
	} {
		func() {
			defer func() {
				r := recover()
				if s, _ := r.(string); !strings.HasPrefix(s, "calendar: ") {
					t.Errorf("%s: recovered %v, want a panic starting with \"calendar: \"", name, r)
				}
			}()
			f()
		}()
	}
}
