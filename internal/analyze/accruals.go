package analyze

import (
	"sort"
	"strings"
	"unicode"

	"github.com/costdrift/costdrift/internal/costdrift"
)

// Accruals pairs a cost object's ledger lines into accruals and their
// reversals (README, "Costs posted quarterly or yearly, and accruals"): a
// line of amount +A (a cost booked) in period t and a line of −A on the same
// account and cost centre in next(t), the period after. Each line is used
// once. Where a line could pair with several, the pair whose descriptions
// share the most words (of three letters or more, any case: "accrual
// electricity November" and "reversal accrual electricity November" share
// three) is taken first, then the earliest posted: a ledger that carries a
// reference in its descriptions pairs by it, one that does not pairs by
// amount and period alone. Lines are the object's, in any order; the pairs
// come back by period, then by posting date and entry.
func Accruals(lines []costdrift.LedgerLine, next func(string) string) []costdrift.Accrual {
	type candidate struct {
		a, r   int
		shared int
	}
	byKey := map[[2]any][]int{} // reversals by cost centre and amount, as −A
	for i, l := range lines {
		if l.AmountMinor < 0 {
			k := [2]any{l.CostCenter, -l.AmountMinor}
			byKey[k] = append(byKey[k], i)
		}
	}
	var cands []candidate
	for i, l := range lines {
		if l.AmountMinor <= 0 {
			continue
		}
		after := next(l.Period)
		for _, j := range byKey[[2]any{l.CostCenter, l.AmountMinor}] {
			if lines[j].Period == after {
				cands = append(cands, candidate{a: i, r: j, shared: sharedWords(l.Description, lines[j].Description)})
			}
		}
	}
	sort.SliceStable(cands, func(x, y int) bool {
		cx, cy := cands[x], cands[y]
		if cx.shared != cy.shared {
			return cx.shared > cy.shared
		}
		if la, lb := lines[cx.a], lines[cy.a]; la.PostedOn != lb.PostedOn {
			return la.PostedOn < lb.PostedOn
		}
		if ra, rb := lines[cx.r], lines[cy.r]; ra.PostedOn != rb.PostedOn {
			return ra.PostedOn < rb.PostedOn
		}
		return cx.a < cy.a || cx.a == cy.a && cx.r < cy.r
	})
	used := map[int]bool{}
	var out []costdrift.Accrual
	for _, c := range cands {
		if used[c.a] || used[c.r] {
			continue
		}
		used[c.a], used[c.r] = true, true
		a, r := lines[c.a], lines[c.r]
		out = append(out, costdrift.Accrual{Period: a.Period, ReversedIn: r.Period, CostCenter: a.CostCenter,
			AmountMinor: a.AmountMinor, Accrued: a, Reversal: r})
	}
	sort.SliceStable(out, func(i, j int) bool {
		a, b := out[i].Accrued, out[j].Accrued
		if a.Period != b.Period {
			return a.Period < b.Period
		}
		if a.PostedOn != b.PostedOn {
			return a.PostedOn < b.PostedOn
		}
		return a.EntryID < b.EntryID
	})
	return out
}

// sharedWords counts the distinct words of three letters or more that two
// descriptions share, in any case.
func sharedWords(a, b string) int {
	split := func(s string) map[string]bool {
		out := map[string]bool{}
		for _, w := range strings.FieldsFunc(strings.ToLower(s), func(r rune) bool { return !unicode.IsLetter(r) && !unicode.IsDigit(r) }) {
			if len([]rune(w)) >= 3 {
				out[w] = true
			}
		}
		return out
	}
	wa, wb := split(a), split(b)
	n := 0
	for w := range wa {
		if wb[w] {
			n++
		}
	}
	return n
}
