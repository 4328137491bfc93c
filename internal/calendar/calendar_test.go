package calendar

import (
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
