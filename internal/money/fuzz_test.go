package money

import (
	"regexp"
	"strings"
	"testing"
	"unicode/utf8"

	"github.com/shopspring/decimal"
)

// FuzzParse: any text either fails or yields minor units that, written back
// as a decimal, equal the text's value exactly (no float on the way in);
// that lie within MaxMinor; whose text groups its digits in threes wherever
// it uses the thousands separator; and that Format writes as a text Parse
// reads back to the same minor units.
func FuzzParse(f *testing.F) {
	for _, s := range []string{"0", "1234.50", "-0.01", "(12.30)", "12.30-", "1.234,56", "1e3", "NaN", "Infinity",
		"99999999999999999999", "0.005", " 7 ", "+3.10", "--1", "1..2", "\x00", "٣",
		"99999999999999.99", "100000000000000.00", "-99999999999999.99"} {
		f.Add(s, false, "")
		f.Add(s, true, ".")
	}
	for _, s := range []string{"1,23", "12,3456", "1,234,56", "1,234,567.89", "(1,234.50)", ",123", "1,", "1,234.5,6",
		"9,999,999,999,999,999.99", "99,999,999,999,999.99"} {
		f.Add(s, false, ",")
	}
	for _, s := range []string{"1234.56", "1,2,3", "1.234.567,89", "1.5", "12.345,6", "99.999.999.999.999,99"} {
		f.Add(s, true, ".")
	}
	f.Add("1 234 567,89", true, " ")
	eur, _ := ParseCurrency("EUR")
	grouping := map[string]*regexp.Regexp{}
	f.Fuzz(func(t *testing.T, s string, comma bool, thousands string) {
		if comma && thousands == "," || !comma && thousands == "." {
			return // the config refuses these combinations
		}
		n := Notation{DecimalComma: comma, ThousandsSeparator: thousands}
		minor, err := eur.Parse(s, n)
		if err != nil {
			return
		}
		if !InRange(minor) {
			t.Fatalf("Parse(%q) = %d, beyond the bound %d", s, minor, MaxMinor)
		}
		// Rebuild the plain decimal the parser should have seen.
		text := strings.TrimSpace(s)
		// A regular expression holds only valid UTF-8, as a config value
		// does; other separators are checked by the value alone.
		if thousands != "" && strings.Contains(text, thousands) && utf8.ValidString(thousands) {
			// Where the separator is used, the digits before the decimal
			// mark come as 1-3 digits, then groups of exactly three, and
			// the separator appears nowhere else.
			re, ok := grouping[thousands]
			if !ok {
				sep := regexp.QuoteMeta(thousands)
				re = regexp.MustCompile(`(?s)^([^0-9]*)[0-9]{1,3}(?:` + sep + `[0-9]{3})+([^0-9].*)?$`)
				grouping[thousands] = re
			}
			m := re.FindStringSubmatch(text)
			if m == nil || strings.Contains(m[1], thousands) || strings.Contains(m[2], thousands) {
				t.Fatalf("Parse(%q, %+v) = %d, but its digits are not grouped in threes", s, n, minor)
			}
		}
		if thousands != "" {
			text = strings.ReplaceAll(text, thousands, "")
		}
		if comma {
			text = strings.Replace(text, ",", ".", 1)
		}
		neg := false
		if strings.HasPrefix(text, "(") && strings.HasSuffix(text, ")") {
			neg, text = true, text[1:len(text)-1]
		} else if strings.HasSuffix(text, "-") {
			neg, text = true, text[:len(text)-1]
		}
		d, err := decimal.NewFromString(text)
		if err != nil {
			t.Fatalf("Parse(%q) = %d but %q is not a decimal", s, minor, text)
		}
		if neg {
			d = d.Neg()
		}
		if !d.Shift(2).Equal(decimal.NewFromInt(minor)) {
			t.Fatalf("Parse(%q) = %d, want %s", s, minor, d.Shift(2))
		}
		// Written back, in the source's notation and plainly, it reads the
		// same.
		for _, back := range []Notation{n, {}} {
			written := eur.Format(minor, back)
			again, err := eur.Parse(written, back)
			if err != nil || again != minor {
				t.Fatalf("Parse(%q) = %d; Format gives %q, which parses to %d, %v", s, minor, written, again, err)
			}
		}
	})
}
