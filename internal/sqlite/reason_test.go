package sqlite

import "testing"

func TestReasonKind(t *testing.T) {
	tests := map[string]string{
		`bad date "2026-13-01": want YYYY-MM-DD`:                                      "bad date",
		"has 5 fields, the header has 6":                                              "has N fields, the header has N",
		"duplicate key with different values inside one load; the first row was kept": "duplicate key with different values inside one load",
		"amount in USD with no functional_amount in EUR":                              "amount in USD with no functional_amount in EUR",
		// The setting a reason names does not split its count.
		`bad date "05/01/2026": want YYYY-MM-DD; set date_format (e.g. DD/MM/YYYY)`:                                                                                "bad date",
		`bad amount: amount "1,234.50" has a ','; declare decimal_comma or thousands_separator for this source (with thousands_separator "," it reads as 1234.50)`: "bad amount",
	}
	for in, want := range tests {
		if got := ReasonKind(in); got != want {
			t.Errorf("ReasonKind(%q) = %q, want %q", in, got, want)
		}
	}
}
