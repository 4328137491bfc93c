package money

import (
	"strings"
	"testing"

	"github.com/shopspring/decimal"
)

// FuzzParse: any text either fails or yields minor units that, written back
// as a decimal, equal the text's value exactly (no float on the way in).
func FuzzParse(f *testing.F) {
	for _, s := range []string{"0", "1234.50", "-0.01", "(12.30)", "12.30-", "1.234,56", "1e3", "NaN", "Infinity",
		"99999999999999999999", "0.005", " 7 ", "+3.10", "--1", "1..2", "\x00", "٣"} {
		f.Add(s, false, "")
		f.Add(s, true, ".")
	}
	eur, _ := ParseCurrency("EUR")
	f.Fuzz(func(t *testing.T, s string, comma bool, thousands string) {
		if comma && thousands == "," || !comma && thousands == "." {
			return // the config refuses these combinations
		}
		n := Notation{DecimalComma: comma, ThousandsSeparator: thousands}
		minor, err := eur.Parse(s, n)
		if err != nil {
			return
		}
		// Rebuild the plain decimal the parser should have seen.
		text := strings.TrimSpace(s)
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
	})
}
