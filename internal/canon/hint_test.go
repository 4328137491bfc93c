package canon

import (
	"testing"

	"github.com/costdrift/costdrift/internal/money"
)

// A reject caused by a setting the source leaves out names that setting
// (README, Sources: reject reasons); one the settings would not mend, or
// from a source that sets them, says only what is wrong. The values read
// under the named settings are worked out by hand.
func TestReasonsNameTheSetting(t *testing.T) {
	plain := rules()
	dayFirst := rules()
	dayFirst.DateLayout = "02/01/2006"
	grouped := rules()
	grouped.Notation = money.Notation{ThousandsSeparator: ","}
	fixed := rules()
	fixed.Fixed = true

	dates := []struct {
		name string
		r    Rules
		text string
		want string
	}{
		{"day first, ambiguous", plain, "05/01/2026", `bad date "05/01/2026": want YYYY-MM-DD; set date_format (e.g. DD/MM/YYYY)`},
		{"day first, day above 12", plain, "15.01.2026", `bad date "15.01.2026": want YYYY-MM-DD; set date_format (e.g. DD.MM.YYYY)`},
		{"month first", plain, "01/15/2026", `bad date "01/15/2026": want YYYY-MM-DD; set date_format (e.g. MM/DD/YYYY)`},
		{"year first, slashes", plain, "2026/01/15", `bad date "2026/01/15": want YYYY-MM-DD; set date_format (e.g. YYYY/MM/DD)`},
		{"a day that does not exist", plain, "2026-02-30", `bad date "2026-02-30": want YYYY-MM-DD`},
		{"mixed separators", plain, "15/01.2026", `bad date "15/01.2026": want YYYY-MM-DD`},
		{"one-digit day", plain, "5/1/2026", `bad date "5/1/2026": want YYYY-MM-DD`},
		{"words", plain, "Jan 5 2026", `bad date "Jan 5 2026": want YYYY-MM-DD`},
		{"date_format set", dayFirst, "2026.01.15", `bad date "2026.01.15": want DD/MM/YYYY`},
		{"no settings", fixed, "15/01/2026", `bad date "15/01/2026": want YYYY-MM-DD`},
	}
	for _, tc := range dates {
		t.Run(tc.name, func(t *testing.T) {
			c := TextCell(tc.text)
			if _, got := tc.r.Date(&c); got != tc.want {
				t.Errorf("Date(%q) = %q, want %q", tc.text, got, tc.want)
			}
		})
	}
	t.Run("period", func(t *testing.T) {
		c := TextCell("15/01/2026")
		want := `bad period "15/01/2026": want YYYY-MM or a date; set date_format (e.g. DD/MM/YYYY)`
		if _, got := plain.PeriodDay(&c); got != want {
			t.Errorf("PeriodDay = %q, want %q", got, want)
		}
	})

	const comma = `has a ','; declare decimal_comma or thousands_separator for this source`
	amounts := []struct {
		name string
		r    Rules
		text string
		want string
	}{
		{"comma thousands", plain, "18,282.97", `bad amount: amount "18,282.97" ` + comma + ` (with thousands_separator "," it reads as 18282.97)`},
		{"comma thousands, two groups", plain, "-1,018,282", `bad amount: amount "-1,018,282" ` + comma + ` (with thousands_separator "," it reads as -1018282.00)`},
		{"decimal comma", plain, "310,25", `bad amount: amount "310,25" ` + comma + ` (with decimal_comma: true it reads as 310.25)`},
		{"decimal comma, point thousands", plain, "1.234,50", `bad amount: amount "1.234,50" ` + comma + ` (with decimal_comma: true and thousands_separator "." it reads as 1234.50)`},
		{"point thousands alone", plain, "1.234.567", `bad amount: amount "1.234.567" is not a number (with decimal_comma: true and thousands_separator "." it reads as 1234567.00)`},
		// One comma before three digits is a thousand or a one and a half.
		{"either notation", plain, "1,500", `bad amount: amount "1,500" ` + comma},
		{"words", plain, "n/a", `bad amount: amount "n/a" is not a number`},
		{"too many decimals", plain, "1.005", `bad amount: amount "1.005": more decimals than the currency's minor unit (EUR has 2)`},
		{"no settings", fixed, "18,282.97", `bad amount: amount "18,282.97" ` + comma + ` (write it as 18282.97)`},
		{"notation set", grouped, "1,23", `bad amount: amount "1,23": digits are not grouped in threes by the thousands separator "," (as in 1,234,567)`},
	}
	for _, tc := range amounts {
		t.Run(tc.name, func(t *testing.T) {
			c := TextCell(tc.text)
			if _, got := tc.r.Money(&c, Amount); got != tc.want {
				t.Errorf("Money(%q) = %q, want %q", tc.text, got, tc.want)
			}
		})
	}

	values := []struct {
		text string
		want string
	}{
		{"1,5", `bad value "1,5": not a number (with decimal_comma: true it reads as 1.5)`},
		{"1,234.5", `bad value "1,234.5": not a number (with thousands_separator "," it reads as 1234.5)`},
		{"1,234", `bad value "1,234": not a number`},
	}
	c := TextCell("1,5")
	if _, got := fixed.Quantity(&c); got != `bad value "1,5": not a number (write it as 1.5)` {
		t.Errorf("Quantity without settings = %q", got)
	}
	for _, tc := range values {
		t.Run("value "+tc.text, func(t *testing.T) {
			c := TextCell(tc.text)
			if _, got := plain.Quantity(&c); got != tc.want {
				t.Errorf("Quantity(%q) = %q, want %q", tc.text, got, tc.want)
			}
		})
	}
}
