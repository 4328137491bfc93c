package money

import (
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"strings"
	"testing"
)

func TestParse(t *testing.T) {
	eur, _ := ParseCurrency("EUR")
	jpy, _ := ParseCurrency("JPY")
	kwd, _ := ParseCurrency("KWD")
	tests := []struct {
		name string
		cur  Currency
		in   string
		n    Notation
		want int64
	}{
		{"plain", eur, "1234.50", Notation{}, 123450},
		{"negative", eur, "-0.01", Notation{}, -1},
		{"no decimals", eur, "17", Notation{}, 1700},
		{"one decimal", eur, "17.5", Notation{}, 1750},
		{"parenthesised negative", eur, "(12.30)", Notation{}, -1230},
		{"trailing minus", eur, "12.30-", Notation{}, -1230},
		{"decimal comma with dot thousands", eur, "1.234.567,89", Notation{DecimalComma: true, ThousandsSeparator: "."}, 123456789},
		{"comma thousands", eur, "1,234,567.89", Notation{ThousandsSeparator: ","}, 123456789},
		{"space thousands", eur, "1 234,5", Notation{DecimalComma: true, ThousandsSeparator: " "}, 123450},
		// 0.1 + 0.2 style values must not drift: exact decimal, not float.
		{"exact cents", eur, "0.29", Notation{}, 29},
		{"large", eur, "92233720368547.75", Notation{}, 9223372036854775},
		{"yen has no minor unit", jpy, "1500", Notation{}, 1500},
		{"dinar has three decimals", kwd, "1.234", Notation{}, 1234},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			got, err := tc.cur.Parse(tc.in, tc.n)
			if err != nil {
				t.Fatalf("Parse(%q): %v", tc.in, err)
			}
			if got != tc.want {
				t.Errorf("Parse(%q) = %d, want %d", tc.in, got, tc.want)
			}
		})
	}
}

func TestParseRejects(t *testing.T) {
	eur, _ := ParseCurrency("EUR")
	jpy, _ := ParseCurrency("JPY")
	tests := []struct {
		name string
		cur  Currency
		in   string
		n    Notation
	}{
		{"empty", eur, " ", Notation{}},
		{"words", eur, "twelve", Notation{}},
		{"comma without declaration", eur, "1,50", Notation{}},
		{"dot with declared decimal comma", eur, "1.50", Notation{DecimalComma: true}},
		{"exponent", eur, "1e3", Notation{}},
		{"too many decimals for EUR", eur, "1.005", Notation{}},
		{"decimals for JPY", jpy, "10.5", Notation{}},
		{"overflow", eur, "99999999999999999999", Notation{}},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			if got, err := tc.cur.Parse(tc.in, tc.n); err == nil {
				t.Fatalf("Parse(%q) = %d, want an error", tc.in, got)
			}
		})
	}
	if _, err := eur.Parse("twelve", Notation{}); err == nil || !strings.Contains(err.Error(), "is not a number") {
		t.Errorf("twelve: got %v, want 'is not a number'", err)
	}
	if _, err := eur.Parse("1e3", Notation{}); err == nil || !strings.Contains(err.Error(), "exponent notation") {
		t.Errorf("1e3: got %v, want 'exponent notation'", err)
	}
	if _, err := eur.Parse("1.005", Notation{}); !errors.Is(err, ErrTooPrecise) {
		t.Errorf("1.005 EUR: got %v, want ErrTooPrecise", err)
	}
}

func TestParseCurrency(t *testing.T) {
	// Exponents from the ISO 4217 table (recalled from memory).
	for code, want := range map[string]int32{"EUR": 2, "USD": 2, "NOK": 2, "JPY": 0, "KWD": 3} {
		c, err := ParseCurrency(code)
		if err != nil || c.Exponent != want {
			t.Errorf("ParseCurrency(%s) = %+v, %v; want exponent %d", code, c, err, want)
		}
	}
	for _, bad := range []string{"", "eur", "EU", "EURO", "E1R"} {
		if _, err := ParseCurrency(bad); err == nil {
			t.Errorf("ParseCurrency(%q): want an error", bad)
		}
	}
}

func TestParseGrouping(t *testing.T) {
	eur, _ := ParseCurrency("EUR")
	comma := Notation{ThousandsSeparator: ","}
	european := Notation{DecimalComma: true, ThousandsSeparator: "."}
	// Digits grouped in threes from the decimal mark leftwards, the first
	// group holding one to three (common practice of writing numbers).
	accepted := []struct {
		name string
		in   string
		n    Notation
		want int64
	}{
		{"one group", "123", comma, 12300},
		{"no separator at all", "1234567.89", comma, 123456789},
		{"two groups", "1,234", comma, 123400},
		{"full first group", "123,456.78", comma, 12345678},
		{"three groups, signed", "-1,234,567.89", comma, -123456789},
		{"bracketed", "(1,234.50)", comma, -123450},
		{"trailing minus", "1,234.50-", comma, -123450},
		{"european", "12.345,6", european, 1234560},
		{"european, thousands only", "1.234", european, 123400},
		{"space", "1 234 567,89", Notation{DecimalComma: true, ThousandsSeparator: " "}, 123456789},
		{"apostrophe", "1'234.50", Notation{ThousandsSeparator: "'"}, 123450},
	}
	for _, tc := range accepted {
		t.Run(tc.name, func(t *testing.T) {
			got, err := eur.Parse(tc.in, tc.n)
			if err != nil || got != tc.want {
				t.Fatalf("Parse(%q) = %d, %v; want %d", tc.in, got, err, tc.want)
			}
		})
	}
	// Each was stored as a different amount before the grouping was checked:
	// 1,23 as 123.00, 12,3456 and 1,234,56 as 123456.00, 1234.56 under "."
	// thousands as 123456.00. The message quotes the amount as written.
	rejected := []struct {
		name string
		in   string
		n    Notation
		want string
	}{
		{"group of two", "1,23", comma, `amount "1,23": digits are not grouped in threes by the thousands separator "," (as in 1,234,567)`},
		{"group of four", "12,3456", comma, `amount "12,3456": digits are not grouped`},
		{"last group of two", "1,234,56", comma, `amount "1,234,56": digits are not grouped`},
		{"first group of four", "1234,567", comma, `amount "1234,567": digits are not grouped`},
		{"separator first", ",123", comma, `amount ",123": digits are not grouped`},
		{"separator last", "1,", comma, `amount "1,": digits are not grouped`},
		{"doubled separator", "1,,234", comma, `amount "1,,234": digits are not grouped`},
		{"separator in the decimals", "1,234.567,8", comma, `amount "1,234.567,8": digits are not grouped`},
		{"bracketed, group of two", "(1,23)", comma, `amount "(1,23)": digits are not grouped`},
		{"european, point as a decimal point", "1234.56", european, `amount "1234.56": digits are not grouped in threes by the thousands separator "." (as in 1.234.567)`},
		{"european, group of one", "1.5", european, `amount "1.5": digits are not grouped`},
		{"european, separator after the comma", "1,234.5", european, `amount "1,234.5": digits are not grouped`},
		{"european, two commas", "1,2,3", european, `amount "1,2,3" is not a number`},
		{"space, group of two", "12 34", Notation{ThousandsSeparator: " "}, `amount "12 34": digits are not grouped`},
	}
	for _, tc := range rejected {
		t.Run(tc.name, func(t *testing.T) {
			got, err := eur.Parse(tc.in, tc.n)
			if err == nil {
				t.Fatalf("Parse(%q) = %d, want an error", tc.in, got)
			}
			if !strings.Contains(err.Error(), tc.want) {
				t.Errorf("Parse(%q): %v; want it to contain %s", tc.in, err, tc.want)
			}
		})
	}
}

func TestParseBound(t *testing.T) {
	eur, _ := ParseCurrency("EUR")
	jpy, _ := ParseCurrency("JPY")
	kwd, _ := ParseCurrency("KWD")
	// The bound is 10^16 - 1 minor units: 16 nines, placed by the exponent.
	accepted := []struct {
		name string
		cur  Currency
		in   string
		n    Notation
		want int64
	}{
		{"largest EUR", eur, "99999999999999.99", Notation{}, 9999999999999999},
		{"largest EUR credit", eur, "-99,999,999,999,999.99", Notation{ThousandsSeparator: ","}, -9999999999999999},
		{"largest JPY", jpy, "9999999999999999", Notation{}, 9999999999999999},
		{"largest KWD", kwd, "9999999999999.999", Notation{}, 9999999999999999},
	}
	for _, tc := range accepted {
		t.Run(tc.name, func(t *testing.T) {
			got, err := tc.cur.Parse(tc.in, tc.n)
			if err != nil || got != tc.want {
				t.Fatalf("Parse(%q) = %d, %v; want %d", tc.in, got, err, tc.want)
			}
		})
	}
	rejected := []struct {
		name string
		cur  Currency
		in   string
		n    Notation
		want string
	}{
		{"one cent beyond", eur, "100000000000000.00", Notation{},
			`amount "100000000000000.00" is out of range: costdrift stores at most 99999999999999.99 EUR either side of zero`},
		{"one cent beyond, credit", eur, "(100000000000000.00)", Notation{}, `amount "(100000000000000.00)" is out of range`},
		// The amount of the report: ten such lines in one period overflowed
		// the period's total.
		{"ten quadrillion", eur, "9,999,999,999,999,999.99", Notation{ThousandsSeparator: ","},
			`amount "9,999,999,999,999,999.99" is out of range: costdrift stores at most 99,999,999,999,999.99 EUR either side of zero`},
		{"european", eur, "100.000.000.000.000,00", Notation{DecimalComma: true, ThousandsSeparator: "."},
			`amount "100.000.000.000.000,00" is out of range: costdrift stores at most 99.999.999.999.999,99 EUR either side of zero`},
		{"one yen beyond", jpy, "10000000000000000", Notation{}, `costdrift stores at most 9999999999999999 JPY either side of zero`},
		{"one fils beyond", kwd, "-10000000000000", Notation{}, `costdrift stores at most 9999999999999.999 KWD either side of zero`},
	}
	for _, tc := range rejected {
		t.Run(tc.name, func(t *testing.T) {
			got, err := tc.cur.Parse(tc.in, tc.n)
			if err == nil {
				t.Fatalf("Parse(%q) = %d, want an error", tc.in, got)
			}
			if !strings.Contains(err.Error(), tc.want) {
				t.Errorf("Parse(%q): %v; want it to contain %s", tc.in, err, tc.want)
			}
		})
	}
}

func TestFormat(t *testing.T) {
	eur, _ := ParseCurrency("EUR")
	jpy, _ := ParseCurrency("JPY")
	kwd, _ := ParseCurrency("KWD")
	european := Notation{DecimalComma: true, ThousandsSeparator: "."}
	// Hand-worked: the minor units with the currency's decimals, grouped in
	// threes from the decimal mark.
	tests := []struct {
		cur   Currency
		minor int64
		n     Notation
		want  string
	}{
		{eur, 123456, Notation{}, "1234.56"},
		{eur, 123456, Notation{ThousandsSeparator: ","}, "1,234.56"},
		{eur, -123456789, european, "-1.234.567,89"},
		{eur, 5, Notation{}, "0.05"},
		{eur, -5, european, "-0,05"},
		{eur, 0, Notation{}, "0.00"},
		{eur, 12345, Notation{ThousandsSeparator: ","}, "123.45"},
		{jpy, 1234567, Notation{ThousandsSeparator: " "}, "1 234 567"},
		{kwd, 1, Notation{}, "0.001"},
		{eur, MaxMinor, Notation{ThousandsSeparator: ","}, "99,999,999,999,999.99"},
		{eur, math.MinInt64, Notation{ThousandsSeparator: ","}, "-92,233,720,368,547,758.08"},
	}
	for _, tc := range tests {
		if got := tc.cur.Format(tc.minor, tc.n); got != tc.want {
			t.Errorf("%s.Format(%d, %+v) = %q, want %q", tc.cur.Code, tc.minor, tc.n, got, tc.want)
		}
	}
}

func TestNotationValidate(t *testing.T) {
	for _, n := range []Notation{{}, {ThousandsSeparator: ","}, {ThousandsSeparator: " "}, {ThousandsSeparator: "'"},
		{DecimalComma: true, ThousandsSeparator: "."}, {DecimalComma: true, ThousandsSeparator: "\u00a0"}} {
		if err := n.Validate(); err != nil {
			t.Errorf("%+v: %v", n, err)
		}
	}
	// Each of these would let one text mean two numbers.
	eur, _ := ParseCurrency("EUR")
	for _, n := range []Notation{{ThousandsSeparator: "0"}, {ThousandsSeparator: "-"}, {ThousandsSeparator: "("},
		{ThousandsSeparator: "e"}, {ThousandsSeparator: "."}, {DecimalComma: true, ThousandsSeparator: ","}} {
		err := n.Validate()
		if err == nil || !strings.Contains(err.Error(), "cannot be told apart") {
			t.Errorf("%+v: got %v, want 'cannot be told apart'", n, err)
		}
		if got, err := eur.Parse("1", n); err == nil {
			t.Errorf("Parse(1, %+v) = %d, want the notation's error", n, got)
		}
	}
}

// The plain-amount path must give what the general path gives, for every
// text it takes; it must leave the others (a thousands separator, a decimal
// comma, brackets, too many decimals, an amount past the bound) to it.
func TestParsePlainAgrees(t *testing.T) {
	texts := []string{"0", "-0", "7", "0.5", "-0.01", "1234.50", "-1234.5", "000012.30", "99999999999999.99",
		"-99999999999999.99", "100000000000000.00", "9999999999999999", "5", "5.", ".5", "-", "1.234", "1,5", "(3.10)",
		"3.10-", "+3.10", "1e3", "12a", "1.2.3", "--1"}
	r := rand.New(rand.NewPCG(3, 4))
	for range 5000 {
		texts = append(texts, fmt.Sprintf("%d.%02d", r.Int64N(1e13)-5e12, r.IntN(100)), fmt.Sprint(r.Int64N(1e13)))
	}
	taken := 0
	for _, cur := range []Currency{{"EUR", 2}, {"JPY", 0}, {"KWD", 3}} {
		for _, n := range []Notation{{}, {DecimalComma: true}, {ThousandsSeparator: ","}} {
			for _, text := range texts {
				fast, ok := cur.parsePlain(text, n)
				if !ok {
					continue
				}
				taken++
				slow, err := cur.parse(text, n)
				if err != nil || slow != fast {
					t.Errorf("%s %+v %q: plain path %d, general path %d (%v)", cur.Code, n, text, fast, slow, err)
				}
			}
		}
	}
	for _, c := range []struct {
		cur  Currency
		n    Notation
		text string
	}{
		{Currency{"EUR", 2}, Notation{DecimalComma: true}, "12"}, {Currency{"EUR", 2}, Notation{ThousandsSeparator: "."}, "12"},
		{Currency{"EUR", 2}, Notation{}, "1.234"}, {Currency{"JPY", 0}, Notation{}, "1.5"},
		{Currency{"EUR", 2}, Notation{}, "100000000000000.00"}, {Currency{"EUR", 2}, Notation{}, "(3.10)"},
	} {
		if _, ok := c.cur.parsePlain(c.text, c.n); ok {
			t.Errorf("%s %+v %q: taken by the plain path, want the general one", c.cur.Code, c.n, c.text)
		}
	}
	if taken < 10000 {
		t.Errorf("the plain path took %d texts; the check needs the common ones to go through it", taken)
	}
}
