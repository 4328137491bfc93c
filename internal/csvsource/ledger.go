package csvsource

import (
	"context"
	"fmt"

	"github.com/costdrift/costdrift/internal/canon"
	"github.com/costdrift/costdrift/internal/costdrift"
)

// ReadLedger streams the general-ledger lines of one file to w and returns
// how many data rows it read. display names the file in messages. The
// columns and the rules of a row are canon's (canon.LedgerColumns,
// canon.Ledger); a line without a line number is numbered by its place in
// its entry, in file order, which is stable as long as the export is.
func ReadLedger(ctx context.Context, path, display string, opt Options, w costdrift.SourceWriter) (int, error) {
	t, closer, err := open(path, display, opt)
	if err != nil {
		return 0, err
	}
	defer closer.Close()
	b, err := canon.Bind(t.header, opt.Columns, canon.LedgerColumns)
	if err != nil {
		return 0, fmt.Errorf("%s: %w", display, err)
	}
	ledger := canon.NewLedger(opt.rules(), b, true)
	bound := b.Bound()
	var row canon.Row
	return t.rows(ctx, display, opt, w, func(rec []string) error {
		if reason := t.rowProblem(rec); reason != "" {
			return t.reject(opt, w, reason)
		}
		fill(&row, bound, rec)
		line, reason := ledger.Line(&row)
		if reason != "" {
			return t.reject(opt, w, reason)
		}
		return w.LedgerLine(line)
	})
}
