package analyze

import (
	"fmt"
	"testing"

	"github.com/costdrift/costdrift/internal/costdrift"
)

// nextMonth is the month after p, for periods YYYY-MM.
func nextMonth(p string) string {
	var y, m int
	fmt.Sscanf(p, "%d-%d", &y, &m)
	if m == 12 {
		return fmt.Sprintf("%04d-01", y+1)
	}
	return fmt.Sprintf("%04d-%02d", y, m+1)
}

// TestAccruals: an accrual and its reversal are the same amount with
// opposite signs on the same account and cost centre in consecutive
// periods; a reference shared by their descriptions picks the accrual
// among lines of equal amount, and lines further apart, in another cost
// centre, or credited first, are no pair. Invented ledger lines.
func TestAccruals(t *testing.T) {
	line := func(id, period, day, cc string, amount int64, text string) costdrift.LedgerLine {
		return costdrift.LedgerLine{EntryID: id, Line: 1, Period: period, PostedOn: period + "-" + day, CostCenter: cc, AmountMinor: amount, Description: text}
	}
	lines := []costdrift.LedgerLine{
		line("J-110", "2025-11", "30", "PLANT", 400000, "Accrual electricity November"),
		line("J-121", "2025-12", "01", "PLANT", -400000, "Reversal accrual electricity November"),
		line("J-111", "2025-11", "05", "PLANT", 50000, "Invoice 4411 cleaning"),
		line("J-112", "2025-11", "30", "PLANT", 50000, "Accrual audit fee"),
		line("J-122", "2025-12", "01", "PLANT", -50000, "Reversal: accrual audit fee"),
		line("J-101", "2025-10", "31", "PLANT", 30000, "Accrual freight"),
		line("J-123", "2025-12", "02", "PLANT", -30000, "Reversal accrual freight"), // two periods later
		line("J-113", "2025-11", "30", "OFFICE", 20000, "Accrual phone"),
		line("J-124", "2025-12", "01", "PLANT", -20000, "Reversal accrual phone"), // another cost centre
		line("J-114", "2025-11", "15", "PLANT", -7000, "Credit note 88"),
		line("J-125", "2025-12", "15", "PLANT", 7000, "Invoice 91"), // credited first
		line("J-126", "2025-12", "31", "PLANT", 400000, "Accrual electricity December"),
	}
	got := Accruals(lines, nextMonth)
	want := []struct {
		accrued, reversal string
		amount            int64
	}{{"J-110", "J-121", 400000}, {"J-112", "J-122", 50000}}
	if len(got) != len(want) {
		t.Fatalf("%d pairs %+v, want %d", len(got), got, len(want))
	}
	for i, w := range want {
		g := got[i]
		if g.Accrued.EntryID != w.accrued || g.Reversal.EntryID != w.reversal || g.AmountMinor != w.amount ||
			g.Period != "2025-11" || g.ReversedIn != "2025-12" || g.CostCenter != "PLANT" {
			t.Errorf("pair %d: %s/%s %d %s→%s in %s, want %s/%s %d 2025-11→2025-12 in PLANT", i,
				g.Accrued.EntryID, g.Reversal.EntryID, g.AmountMinor, g.Period, g.ReversedIn, g.CostCenter, w.accrued, w.reversal, w.amount)
		}
	}
	// Without descriptions the earliest line of the amount pairs.
	bare := []costdrift.LedgerLine{
		line("A", "2025-11", "05", "", 50000, ""),
		line("B", "2025-11", "30", "", 50000, ""),
		line("C", "2025-12", "01", "", -50000, ""),
	}
	if got := Accruals(bare, nextMonth); len(got) != 1 || got[0].Accrued.EntryID != "A" {
		t.Errorf("bare lines paired %+v, want A with C", got)
	}
}
