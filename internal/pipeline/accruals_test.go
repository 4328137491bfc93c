package pipeline

import (
	"strings"
	"testing"

	"github.com/costdrift/costdrift/internal/costdrift"
	"github.com/costdrift/costdrift/internal/report"
)

// TestAccrualsView: the net effect of accruals per period is what was
// accrued in it less what was reversed from the period before, and the
// cost without them the period's total less that net. Hand-worked: 4,000
// accrued in November and reversed in December, 1,500 accrued in December
// and reversed in January; November's cost 5,000 is 1,000 without the
// accrual, December's 2,300 is 4,800 (2,300 − (1,500 − 4,000)), and
// January, after the window, is left out. November, flagged by the
// analysis, gets the note that it is no noise.
func TestAccrualsView(t *testing.T) {
	pairs := []costdrift.Accrual{
		{Period: "2025-11", ReversedIn: "2025-12", AmountMinor: 400000,
			Accrued: costdrift.LedgerLine{EntryID: "J-110"}, Reversal: costdrift.LedgerLine{EntryID: "J-121"}},
		{Period: "2025-12", ReversedIn: "2026-01", AmountMinor: 150000,
			Accrued: costdrift.LedgerLine{EntryID: "J-131"}, Reversal: costdrift.LedgerLine{EntryID: "J-140"}},
	}
	costs := map[string]int64{"2025-11": 500000, "2025-12": 230000}
	got := accrualsView(pairs, costs, 100, map[string]bool{"2025-11": true}, "2025-12")
	want := []report.AccrualPeriod{
		{Period: "2025-11", Cost: 5000, Accrued: 4000, Reversed: 0, Net: 4000, WithoutAccruals: 1000, Flagged: true},
		{Period: "2025-12", Cost: 2300, Accrued: 1500, Reversed: 4000, Net: -2500, WithoutAccruals: 4800},
	}
	if len(got.Pairs) != 2 || got.Pairs[0].Amount != 4000 || got.Pairs[1].ReversalEntry != "J-140" {
		t.Errorf("pairs %+v", got.Pairs)
	}
	if len(got.Periods) != len(want) {
		t.Fatalf("periods %+v, want %+v", got.Periods, want)
	}
	for i := range want {
		if got.Periods[i] != want[i] {
			t.Errorf("period %d: %+v, want %+v", i, got.Periods[i], want[i])
		}
	}
	note := report.AccrualNote(got.Periods[0])
	for _, part := range []string{"2025-11 is flagged", "+4,000.00 net", "not noise", "1,000.00"} {
		if !strings.Contains(note, part) {
			t.Errorf("note %q lacks %q", note, part)
		}
	}
}

// TestPostedAt: the timeline draws a cost posted once a quarter as its
// posting in the months it is posted in and nothing between (1,000 a month
// spread evenly is 3,000 in March, hand-worked); a cost posted every month,
// and a week, keep the amount per period.
func TestPostedAt(t *testing.T) {
	quarterly := costdrift.Behaviour{Class: costdrift.Fixed, Cadence: &costdrift.Cadence{Every: 3, Phase: 0}}
	for _, tc := range []struct {
		b      costdrift.Behaviour
		period string
		want   float64
	}{
		{quarterly, "2026-03", 3000},
		{quarterly, "2026-02", 0},
		{quarterly, "FY2026-P12", 3000},
		{quarterly, "2026-W09", 1000},
		{costdrift.Behaviour{Class: costdrift.Fixed}, "2026-02", 1000},
	} {
		if got := postedAt(tc.b, tc.period, 1000); got != tc.want {
			t.Errorf("postedAt(%s, cadence %+v) = %g, want %g", tc.period, tc.b.Cadence, got, tc.want)
		}
	}
}
