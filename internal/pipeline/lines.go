package pipeline

import (
	"context"
	"errors"
	"fmt"

	"github.com/costdrift/costdrift/internal/costdrift"
	"github.com/costdrift/costdrift/internal/sqlite"
)

// LinesPerPage bounds one page of an object's ledger lines, so that a
// period of many postings is read and sent a page at a time.
const LinesPerPage = 200

// PeriodLines are one page of the ledger lines behind an analysed
// object's cost in one period: the lines the analysis added up (the
// account in the cost centre, or at account grain in every cost centre).
type PeriodLines struct {
	Object       string
	Period       string
	AccountGrain bool
	Page, Pages  int // Page counts from 1
	First        int // the number of the page's first line, from 1
	Count        int // lines in the period
	Total        float64
	Lines        []LedgerLineView
}

// LedgerLineView is one ledger line with its amount in the currency.
type LedgerLineView struct {
	sqlite.LedgerLine
	Amount float64
}

// ErrNoSuchPeriod is a period the calendar does not know.
var ErrNoSuchPeriod = errors.New("no such period")

// ViewPeriodLines reads page (from 1) of object's ledger lines in period.
func ViewPeriodLines(ctx context.Context, e *Env, db *sqlite.DB, object, period string, page int) (PeriodLines, error) {
	if _, err := e.Calendar.Parse(period); err != nil {
		return PeriodLines{}, fmt.Errorf("%w %q: %w", ErrNoSuchPeriod, period, err)
	}
	oa, err := db.ObjectAnalysis(ctx, object)
	if err != nil {
		return PeriodLines{}, fmt.Errorf("lines of %s: %w", object, err)
	}
	accountGrain := oa.Run.Grain == costdrift.GrainAccount
	page = max(page, 1)
	ls, err := db.ObjectPeriodLines(ctx, oa.Behaviour.Object, accountGrain, period, LinesPerPage, (page-1)*LinesPerPage)
	if err != nil {
		return PeriodLines{}, err
	}
	minor := 1.0
	for range e.Currency.Exponent {
		minor *= 10
	}
	out := PeriodLines{Object: oa.Behaviour.Object.String(), Period: period, AccountGrain: accountGrain, Page: page,
		Pages: max(1, (ls.Count+LinesPerPage-1)/LinesPerPage), First: (page-1)*LinesPerPage + 1,
		Count: ls.Count, Total: float64(ls.TotalMinor) / minor}
	for _, l := range ls.Lines {
		out.Lines = append(out.Lines, LedgerLineView{LedgerLine: l, Amount: float64(l.AmountMinor) / minor})
	}
	return out, nil
}
