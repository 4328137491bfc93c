package money

import (
	"errors"
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
