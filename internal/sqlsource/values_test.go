package sqlsource

import (
	"math"
	"testing"
	"time"

	"github.com/costdrift/costdrift/internal/canon"
	"github.com/costdrift/costdrift/internal/money"
)

// rules are those of a source in EUR with the notation and date layout.
func rules(n money.Notation, layout string) canon.Rules {
	return Options{Source: "books", Currency: eur(), Notation: n, DateLayout: layout, Period: monthly}.rules()
}

// amount reads a driver's value as an amount, as the source does: its
// cell, then the rules.
func amount(v any, n money.Notation) (int64, string) {
	r := rules(n, "")
	c := cell(canon.Amount, v, eur())
	return r.Money(&c, canon.Amount)
}

func TestAmount(t *testing.T) {
	comma := money.Notation{DecimalComma: true, ThousandsSeparator: "."}
	tests := []struct {
		name   string
		v      any
		n      money.Notation
		want   int64
		reason string
	}{
		// EUR has 2 decimals (ISO 4217, common practice): minor = units * 100.
		{"NUMERIC as text", "0.30", money.Notation{}, 30, ""},
		{"DECIMAL as bytes", []byte("1234.56"), money.Notation{}, 123456, ""},
		{"money with four decimals, trailing zeros", []byte("12.3400"), money.Notation{}, 1234, ""},
		{"integer column is whole units", int64(125), money.Notation{}, 12500, ""},
		{"negative integer", int64(-7), money.Notation{}, -700, ""},
		{"double that is a short decimal", 0.3, money.Notation{}, 30, ""},
		{"double 1234.56", 1234.56, money.Notation{}, 123456, ""},
		{"double -0.01", -0.01, money.Notation{}, -1, ""},
		{"text with decimal comma", "1.234,56", comma, 123456, ""},
		{"a double ignores the text notation", 1234.5, comma, 123450, ""},
		// 0.1 + 0.2 in binary64 is 0.30000000000000004 (IEEE 754, common practice).
		{"double sum with stray digits", doubleSum(0.1, 0.2), money.Notation{}, 0,
			`bad amount: amount "0.30000000000000004": more decimals than the currency's minor unit (EUR has 2) (a floating-point column: store or sum amounts as NUMERIC or DECIMAL)`},
		{"text with three decimals", "12.345", money.Notation{}, 0, `bad amount: amount "12.345": more decimals than the currency's minor unit (EUR has 2)`},
		{"double out of range", 1e21, money.Notation{}, 0, `bad amount: amount "1000000000000000000000" is out of range: costdrift stores at most 99999999999999.99 EUR either side of zero (a floating-point column: store or sum amounts as NUMERIC or DECIMAL)`},
		{"NaN", math.NaN(), money.Notation{}, 0, "bad amount: NaN is not a number"},
		{"NUMERIC NaN as text", "NaN", money.Notation{}, 0, `bad amount: amount "NaN" is not a number`},
		{"NULL", nil, money.Notation{}, 0, "bad amount: empty amount"},
		{"empty text", " ", money.Notation{}, 0, "bad amount: empty amount"},
		{"boolean", true, money.Notation{}, 0, "bad amount: a bool value, not a number"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			got, reason := amount(tc.v, tc.n)
			if got != tc.want || reason != tc.reason {
				t.Errorf("amount(%#v) = %d, %q; want %d, %q", tc.v, got, reason, tc.want, tc.reason)
			}
		})
	}
}

// doubleSum adds at run time: Go adds constants exactly, 0.1 + 0.2 == 0.3.
func doubleSum(a, b float64) float64 { return a + b }

func TestDate(t *testing.T) {
	newYork := time.FixedZone("UTC-5", -5*3600)
	tests := []struct {
		name, layout string
		v            any
		want, reason string
	}{
		// A timestamp counts by its calendar day where the driver put it.
		{"date value", "", time.Date(2025, 1, 31, 0, 0, 0, 0, time.UTC), "2025-01-31", ""},
		{"timestamp late in the day, not in UTC", "", time.Date(2025, 1, 31, 23, 30, 0, 0, newYork), "2025-01-31", ""},
		{"ISO text", "", "2025-01-31", "2025-01-31", ""},
		{"ISO text with time", "", []byte("2025-01-31 17:04:05"), "2025-01-31", ""},
		{"RFC 3339 text", "", "2025-01-31T10:00:00Z", "2025-01-31", ""},
		{"text in the source layout", "02.01.2006", "31.01.2025", "2025-01-31", ""},
		{"ISO beside the source layout", "02.01.2006", "2025-01-31", "2025-01-31", ""},
		{"other text", "", "31/01/2025", "", `bad date "31/01/2025": want YYYY-MM-DD; set date_format (e.g. DD/MM/YYYY)`},
		{"no such day", "02.01.2006", "30.02.2025", "", `bad date "30.02.2025": want DD.MM.YYYY`},
		{"a number", "", int64(20250131), "", "bad date: a int64 value (20250131), not a date"},
		{"NULL", "", nil, "", "missing date"},
		// What the SQLite driver gives for a DATE value it cannot read.
		{"the zero time", "", time.Time{}, "", "bad date: 0001-01-01, which the driver returns for a value it cannot read as a date"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			r := rules(money.Notation{}, tc.layout)
			c := cell(canon.Date, tc.v, eur())
			got, reason := r.Date(&c)
			s := ""
			if reason == "" {
				s = got.Format("2006-01-02")
			}
			if s != tc.want || reason != tc.reason {
				t.Errorf("date(%#v) = %q, %q; want %q, %q", tc.v, s, reason, tc.want, tc.reason)
			}
		})
	}
}

func TestPeriodAndMonth(t *testing.T) {
	r := rules(money.Notation{}, "")
	tests := []struct {
		name         string
		v            any
		want, reason string
	}{
		{"YYYY-MM", "2025-02", "2025-02", ""},
		{"YYYY-MM bytes", []byte("2025-02"), "2025-02", ""},
		{"a date in the month", "2025-02-15", "2025-02", ""},
		{"date value", time.Date(2025, 2, 1, 0, 0, 0, 0, time.UTC), "2025-02", ""},
		{"month 13", "2025-13", "", `bad period "2025-13": want YYYY-MM or a date`},
		{"a number", int64(202502), "", "bad period: a int64 value (202502), want YYYY-MM or a date"},
		{"NULL", nil, "", "missing period"},
		// What the SQLite driver gives for a DATE value it cannot read.
		{"the zero time", time.Time{}, "", "bad period: 0001-01-01, which the driver returns for a value it cannot read as a date"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			c := cell(canon.Period, tc.v, eur())
			day, reason := r.PeriodDay(&c)
			got := ""
			if reason == "" {
				got = monthly(day)
			}
			if got != tc.want || reason != tc.reason {
				t.Errorf("period(%#v) = %q, %q; want %q, %q", tc.v, got, reason, tc.want, tc.reason)
			}
			first, reason := month(&r, &c)
			if tc.reason == "" && (reason != "" || first.Format("2006-01-02") != tc.want+"-01") {
				t.Errorf("month(%#v) = %v, %q; want %s-01", tc.v, first, reason, tc.want)
			}
			if tc.reason != "" && reason == "" {
				t.Errorf("month(%#v) accepted it as %v", tc.v, first)
			}
		})
	}
}

// quantity reads a driver's value as an activity value, as the source does.
func quantity(v any, n money.Notation) (float64, string) {
	r := rules(n, "")
	c := cell(canon.Value, v, eur())
	return r.Quantity(&c)
}

// lineNumber reads a driver's value as a ledger line's number, in a line
// whose other columns are good.
func lineNumber(v any) (int, string) {
	b, err := canon.Bind([]string{"entry_id", "line", "date", "account", "amount"}, nil, ledgerColumns)
	if err != nil {
		panic(err)
	}
	ledger := canon.NewLedger(rules(money.Notation{}, ""), b, false)
	var row canon.Row
	row[canon.EntryID], row[canon.Account] = canon.TextCell("E1"), canon.TextCell("6100")
	row[canon.Date], row[canon.Amount] = canon.TextCell("2025-01-31"), canon.TextCell("1.00")
	row[canon.Line] = cell(canon.Line, v, eur())
	l, reason := ledger.Line(&row)
	if reason != "" {
		return 0, reason
	}
	return l.Line, ""
}

func TestQuantityAndLine(t *testing.T) {
	for _, tc := range []struct {
		v      any
		want   float64
		reason string
	}{
		{"410.5", 410.5, ""}, {int64(340), 340, ""}, {12.25, 12.25, ""}, {[]byte("0"), 0, ""},
		{"-3", 0, `bad value "-3": activity cannot be negative`}, {math.Inf(1), 0, `bad value "+Inf": not a number`},
		{"n/a", 0, `bad value "n/a": not a number`}, {nil, 0, "missing value"},
	} {
		const tol = 0 // short decimals that ParseFloat reads exactly
		got, reason := quantity(tc.v, money.Notation{})
		if math.Abs(got-tc.want) > tol || reason != tc.reason {
			t.Errorf("quantity(%#v) = %v, %q; want %v, %q", tc.v, got, reason, tc.want, tc.reason)
		}
	}
	// Text follows the notation as amounts do: 1,234.5 is 1234.5 (by hand);
	// 1,23 was read as 123 before the grouping was checked.
	grouped := money.Notation{ThousandsSeparator: ","}
	if got, reason := quantity("1,234.5", grouped); got != 1234.5 || reason != "" {
		t.Errorf(`quantity("1,234.5") = %v, %q; want 1234.5`, got, reason)
	}
	want := `bad value "1,23": digits are not grouped in threes by the thousands separator "," (as in 1,234,567)`
	if got, reason := quantity("1,23", grouped); reason != want {
		t.Errorf(`quantity("1,23") = %v, %q; want %q`, got, reason, want)
	}
	for _, tc := range []struct {
		v      any
		want   int
		reason string
	}{
		{int64(2), 2, ""}, {"3", 3, ""}, {float64(4), 4, ""},
		{int64(0), 0, `bad line "0": want a whole number from 1`}, {2.5, 0, `bad line "2.5": want a whole number from 1`},
		{nil, 0, "missing line"},
	} {
		got, reason := lineNumber(tc.v)
		if got != tc.want || reason != tc.reason {
			t.Errorf("lineNumber(%#v) = %d, %q; want %d, %q", tc.v, got, reason, tc.want, tc.reason)
		}
	}
}

func TestWatermarkOrderAndText(t *testing.T) {
	t1 := time.Date(2025, 4, 2, 7, 15, 0, 123456000, time.UTC)
	t2 := t1.Add(time.Microsecond)
	for _, tc := range []struct {
		name string
		a, b any
		want bool
	}{
		{"later time", t2, t1, true},
		{"earlier time", t1, t2, false},
		{"integers", int64(10), int64(9), true},
		{"numeric text by value, not by letters", "10", "9", true},
		{"DECIMAL bytes against an integer", []byte("9.5"), int64(9), true},
		{"double against an integer", 8.75, int64(9), false},
		{"text by letters", "JE-1010", "JE-1009", true},
		{"equal", int64(3), int64(3), false},
	} {
		if got := greater(tc.a, tc.b); got != tc.want {
			t.Errorf("%s: greater(%#v, %#v) = %v", tc.name, tc.a, tc.b, got)
		}
	}
	oslo := time.FixedZone("UTC+2", 2*3600)
	for _, tc := range []struct {
		driver string
		v      any
		want   string
	}{
		{"postgres", t1, "2025-04-02T07:15:00.123456Z"},
		{"sqlite", t1, "2025-04-02 07:15:00.123456"},
		{"sqlserver", time.Date(2025, 4, 2, 7, 15, 0, 0, time.UTC), "2025-04-02 07:15:00"},
		{"mysql", time.Date(2025, 4, 2, 9, 15, 0, 0, oslo), "2025-04-02 09:15:00+02:00"},
		{"mysql", int64(4711), "4711"},
		{"postgres", []byte("2025-04-02 07:15:00"), "2025-04-02 07:15:00"},
	} {
		if got := watermarkText(tc.driver, tc.v); got != tc.want {
			t.Errorf("watermarkText(%s, %#v) = %q, want %q", tc.driver, tc.v, got, tc.want)
		}
	}
}
