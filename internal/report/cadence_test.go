package report

import (
	"testing"

	"github.com/costdrift/costdrift/internal/costdrift"
)

// TestCadenceFormula: a cost posted at a cadence reads as its posting,
// when, and the amount per period (3,000 a quarter is 1,000 a month,
// hand-worked); a 4-4-5 year names its periods by number.
func TestCadenceFormula(t *testing.T) {
	for _, tc := range []struct {
		b    costdrift.Behaviour
		want string
	}{
		{costdrift.Behaviour{Class: costdrift.Fixed, FixedPerPeriod: 1000, Since: "2023-07", Cadence: &costdrift.Cadence{Every: 3, Phase: 0}},
			"cost = 3,000.00 a quarter (Mar, Jun, Sep, Dec), 1,000.00 a period spread evenly"},
		{costdrift.Behaviour{Class: costdrift.Fixed, FixedPerPeriod: 500, Since: "FY2025-P01", Cadence: &costdrift.Cadence{Every: 12, Phase: 4}},
			"cost = 6,000.00 a year (P04), 500.00 a period spread evenly"},
		{costdrift.Behaviour{Class: costdrift.Unexplained, FixedPerPeriod: 250, Since: "2024-01", Cadence: &costdrift.Cadence{Every: 6, Phase: 1}},
			"mean 1,500.00 a half-year (Jan, Jul), 250.00 a period spread evenly (no formula)"},
	} {
		if got := Formula(tc.b); got != tc.want {
			t.Errorf("Formula = %q, want %q", got, tc.want)
		}
	}
}
