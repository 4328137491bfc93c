package pipeline

import (
	"context"
	"fmt"

	"github.com/costdrift/costdrift/internal/config"
	"github.com/costdrift/costdrift/internal/costdrift"
	"github.com/costdrift/costdrift/internal/saftsource"
)

// readSAFT reads one SAF-T Financial file: its general ledger or its chart
// of accounts. It returns the rows given to the writer (a line split
// between cost centres is one row per cost centre).
//
// A ledger whose control totals (NumberOfEntries, TotalDebit, TotalCredit)
// differ from what was read fails the whole source: the file is incomplete
// or damaged, and a ledger stored from it would understate or overstate
// cost without anyone noticing. Rejected lines do not cause this, because
// their amounts still count; an amount that cannot be read does, and the
// error names where the first one is.
func readSAFT(ctx context.Context, e *Env, role costdrift.Role, src config.Source, path, display string, w costdrift.SourceWriter) (int, error) {
	opt := saftsource.Options{
		Source:       src.Name,
		Currency:     e.Currency,
		Period:       e.Calendar.Period,
		AnalysisType: src.AnalysisType,
	}
	opt.Progress = e.progress(path, display)
	switch role {
	case costdrift.RoleAccounts:
		return saftsource.ReadAccounts(ctx, path, display, opt, w)
	case costdrift.RoleLedger:
		tot, err := saftsource.ReadLedger(ctx, path, display, opt, w)
		if err != nil {
			return tot.Rows, err
		}
		if err := tot.Check(); err != nil {
			return tot.Rows, fmt.Errorf("%s: %w", display, err)
		}
		return tot.Rows, nil
	default:
		return 0, fmt.Errorf("a saft source cannot deliver %s", role)
	}
}
