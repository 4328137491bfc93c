package sqlite

import (
	"context"
	"fmt"

	"github.com/costdrift/costdrift/internal/costdrift"
)

// LedgerLine is one line of the ledger as the store holds it.
type LedgerLine struct {
	Source      string
	EntryID     string
	Line        int
	PostedOn    string // YYYY-MM-DD
	CostCenter  string
	AmountMinor int64 // signed, debit positive
	Description string
	File        string // the file it was loaded from; "" for rows from a database query
}

// PeriodLines are a page of one cost object's lines in one period, with
// how many lines and what net amount the whole period holds.
type PeriodLines struct {
	Lines      []LedgerLine
	Count      int
	TotalMinor int64
}

// ObjectPeriodLines returns the lines of the cost object in period, in
// date, entry and line order, limit of them from offset: of the account in
// the cost centre, or with allCostCenters (account grain) in every cost
// centre. Count and TotalMinor are of the whole period, as CostPerPeriod
// adds it up.
func (db *DB) ObjectPeriodLines(ctx context.Context, o costdrift.CostObject, allCostCenters bool, period string, limit, offset int) (PeriodLines, error) {
	var out PeriodLines
	var billions, rest int64
	err := db.db.QueryRowContext(ctx, `SELECT COUNT(*), COALESCE(SUM(amount_minor / 1000000000), 0), COALESCE(SUM(amount_minor % 1000000000), 0)
		FROM gl_lines WHERE account = ? AND (? OR cost_center = ?) AND period = ?`,
		o.Account, allCostCenters, o.CostCenter, period).Scan(&out.Count, &billions, &rest)
	if err != nil {
		return out, fmt.Errorf("lines of %s in %s: %w", o, period, err)
	}
	total, ok := joinParts(billions, rest)
	if !ok {
		return out, overflowError(o, period)
	}
	out.TotalMinor = total
	rows, err := db.db.QueryContext(ctx, `SELECT g.source, g.entry_id, g.line, g.posted_on, g.cost_center, g.amount_minor, g.description, COALESCE(f.path, '')
		FROM gl_lines g LEFT JOIN source_files f ON f.id = g.source_file_id
		WHERE g.account = ? AND (? OR g.cost_center = ?) AND g.period = ?
		ORDER BY g.posted_on, g.source, g.entry_id, g.line LIMIT ? OFFSET ?`,
		o.Account, allCostCenters, o.CostCenter, period, limit, offset)
	if err != nil {
		return out, fmt.Errorf("lines of %s in %s: %w", o, period, err)
	}
	defer rows.Close()
	for rows.Next() {
		var l LedgerLine
		if err := rows.Scan(&l.Source, &l.EntryID, &l.Line, &l.PostedOn, &l.CostCenter, &l.AmountMinor, &l.Description, &l.File); err != nil {
			return out, fmt.Errorf("lines of %s in %s: %w", o, period, err)
		}
		out.Lines = append(out.Lines, l)
	}
	return out, rows.Err()
}
