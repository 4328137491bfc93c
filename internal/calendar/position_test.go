package calendar

import "testing"

// TestPositionInYear: the position is the month or period number as the
// period's name writes it (README, Calendar); weeks have none.
func TestPositionInYear(t *testing.T) {
	for _, tc := range []struct {
		period string
		want   int
		ok     bool
	}{
		{"2025-03", 3, true},
		{"2024-12", 12, true},
		{"FY2025-P01", 1, true},
		{"FY2026-P12", 12, true},
		{"2025-W07", 0, false},
		{"2025-13", 0, false},
		{"FY2025-P13", 0, false},
		{"", 0, false},
	} {
		got, ok := PositionInYear(tc.period)
		if got != tc.want || ok != tc.ok {
			t.Errorf("PositionInYear(%q) = %d, %v; want %d, %v", tc.period, got, ok, tc.want, tc.ok)
		}
	}
}
