package xlsxsource

import (
	"context"

	"github.com/costdrift/costdrift/internal/canon"
	"github.com/costdrift/costdrift/internal/costdrift"
)

// ReadLedger streams the general-ledger lines of one worksheet to w and
// returns how many data rows it read. display names the file in messages.
// The columns and the rules of a row are canon's, as in a CSV file; a line
// without a line number is numbered by its place in its entry, in sheet
// order, which is stable as long as the export is.
func ReadLedger(ctx context.Context, path, display string, opt Options, w costdrift.SourceWriter) (int, error) {
	t, err := open(path, display, opt.Sheet)
	if err != nil {
		return 0, err
	}
	defer t.close()
	b, err := t.bind(opt.Columns, canon.LedgerColumns)
	if err != nil {
		return 0, err
	}
	ledger := canon.NewLedger(opt.rules(), b, true)
	bound := b.Bound()
	var row canon.Row
	return t.each(ctx, func() error {
		if why := t.overflow(); why != "" {
			return t.reject(opt, w, why)
		}
		t.fill(&row, bound, opt)
		line, reason := ledger.Line(&row)
		if reason != "" {
			return t.reject(opt, w, reason)
		}
		return w.LedgerLine(line)
	})
}
