package sqlite

import (
	"context"
	"fmt"

	"github.com/costdrift/costdrift/internal/costdrift"
)

// ReversedLines returns the cost object's ledger lines in the periods
// first to last that could be half of an accrual and its reversal: each
// line with a line of the opposite amount on the same account and cost
// centre among them (analyze.Accruals pairs them by period). With
// allCostCenters (account grain) the object is the account in every cost
// centre. Reading only those keeps a period of thousands of lines from
// being read whole.
func (db *DB) ReversedLines(ctx context.Context, o costdrift.CostObject, allCostCenters bool, first, last string) ([]costdrift.LedgerLine, error) {
	rows, err := db.db.QueryContext(ctx, `SELECT g.source, g.entry_id, g.line, g.posted_on, g.period, g.account, g.cost_center, g.amount_minor, g.description
		FROM gl_lines g
		WHERE g.account = ?1 AND (?2 OR g.cost_center = ?3) AND g.period BETWEEN ?4 AND ?5 AND g.amount_minor <> 0
		  AND EXISTS (SELECT 1 FROM gl_lines h
		              WHERE h.period BETWEEN ?4 AND ?5 AND h.account = g.account AND h.cost_center = g.cost_center
		                AND h.amount_minor = -g.amount_minor)
		ORDER BY g.period, g.posted_on, g.source, g.entry_id, g.line`,
		o.Account, allCostCenters, o.CostCenter, first, last)
	if err != nil {
		return nil, fmt.Errorf("reversed lines of %s: %w", o, err)
	}
	defer rows.Close()
	var out []costdrift.LedgerLine
	for rows.Next() {
		var l costdrift.LedgerLine
		if err := rows.Scan(&l.Source, &l.EntryID, &l.Line, &l.PostedOn, &l.Period, &l.Account, &l.CostCenter, &l.AmountMinor, &l.Description); err != nil {
			return nil, fmt.Errorf("reversed lines of %s: %w", o, err)
		}
		out = append(out, l)
	}
	return out, rows.Err()
}
