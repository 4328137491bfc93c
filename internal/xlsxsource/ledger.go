package xlsxsource

import (
	"context"
	"fmt"
	"strconv"
	"strings"

	"github.com/costdrift/costdrift/internal/costdrift"
	"github.com/costdrift/costdrift/internal/money"
)

// Ledger columns, as in the CSV source. Either amount, or debit and credit,
// must be present.
var (
	ledgerRequired = []string{"entry_id", "date", "account"}
	ledgerOptional = []string{"line", "cost_center", "amount", "debit", "credit", "description", "currency", "functional_amount"}
)

// ReadLedger streams the general-ledger lines of one worksheet to w and
// returns how many data rows it read. display names the file in messages.
func ReadLedger(ctx context.Context, path, display string, opt Options, w costdrift.SourceWriter) (int, error) {
	t, err := open(path, display, opt.Sheet)
	if err != nil {
		return 0, err
	}
	defer t.close()
	const hint = "expected entry_id, date, account and amount (or debit and credit)"
	if err := t.bind(opt.Columns, ledgerRequired, ledgerOptional, hint); err != nil {
		return 0, err
	}
	signed := t.has("amount")
	if !signed && !(t.has("debit") && t.has("credit")) {
		return 0, fmt.Errorf("%s: header has neither an amount column nor debit and credit columns (found: %s); %s, or map yours under `columns:` in the source's config",
			t.location(), t.found(), hint)
	}
	layout := opt.DateLayout
	if layout == "" {
		layout = "2006-01-02"
	}
	// Without a line column, lines are numbered within their entry in sheet
	// order, which is stable as long as the export is.
	nextLine := map[string]int{}
	return t.each(ctx, func() error {
		line, reason := parseLedgerRow(t, opt, layout, signed, nextLine)
		if reason != "" {
			return t.reject(opt, w, reason)
		}
		return w.LedgerLine(line)
	})
}

// parseLedgerRow turns the current row into a ledger line, or says why it
// cannot.
func parseLedgerRow(t *table, opt Options, layout string, signed bool, nextLine map[string]int) (costdrift.LedgerLine, string) {
	if why := t.overflow(); why != "" {
		return costdrift.LedgerLine{}, why
	}
	l := costdrift.LedgerLine{Source: opt.Source}
	for _, f := range []struct {
		name string
		to   *string
	}{{"entry_id", &l.EntryID}, {"account", &l.Account}, {"cost_center", &l.CostCenter}, {"description", &l.Description}} {
		var why string
		if *f.to, why = t.text(f.name); why != "" {
			return l, why
		}
	}
	if l.EntryID == "" {
		return l, "missing entry_id"
	}
	// Without a line number, a line is numbered by its place in the entry,
	// rejected lines included, as in a CSV file.
	lineText, lineWhy := t.text("line")
	if lineWhy == "" && lineText == "" {
		nextLine[l.EntryID]++
		l.Line = nextLine[l.EntryID]
	}
	if l.Account == "" {
		return l, "missing account"
	}
	posted, why := date(t.field("date"), layout, t.date1904)
	if why != "" {
		return l, why
	}
	l.PostedOn = posted.Format("2006-01-02")
	l.Period = opt.Period(posted)

	currency, why := t.text("currency")
	if why != "" {
		return l, why
	}
	var err error
	// A line in a foreign currency counts only through its amount in the
	// functional currency, as in a CSV file.
	if cur := strings.ToUpper(currency); cur != "" && cur != opt.Currency.Code {
		c := t.field("functional_amount")
		if c.kind == blankCell {
			return l, fmt.Sprintf("amount in %s with no functional_amount in %s", cur, opt.Currency.Code)
		}
		if l.AmountMinor, err = amount(c, opt.Currency, opt.Notation); err != nil {
			return l, "bad functional_amount: " + err.Error()
		}
	} else if signed {
		if l.AmountMinor, err = amount(t.field("amount"), opt.Currency, opt.Notation); err != nil {
			return l, "bad amount: " + err.Error()
		}
	} else {
		debitCell, creditCell := t.field("debit"), t.field("credit")
		if debitCell.kind == blankCell && creditCell.kind == blankCell {
			return l, "missing amount: both debit and credit are empty"
		}
		var debit, credit int64
		if debitCell.kind != blankCell {
			if debit, err = amount(debitCell, opt.Currency, opt.Notation); err != nil {
				return l, "bad debit: " + err.Error()
			}
		}
		if creditCell.kind != blankCell {
			if credit, err = amount(creditCell, opt.Currency, opt.Notation); err != nil {
				return l, "bad credit: " + err.Error()
			}
		}
		// Each side is within the bound; their difference may not be.
		l.AmountMinor = debit - credit
		if !money.InRange(l.AmountMinor) {
			what := fmt.Sprintf("debit %q minus credit %q", debitCell.text, creditCell.text)
			return l, "bad amount: " + opt.Currency.OutOfRange(what, opt.Notation).Error()
		}
	}

	if lineWhy != "" {
		return l, lineWhy
	}
	if lineText != "" {
		n, err := strconv.Atoi(lineText)
		if err != nil || n < 1 {
			return l, fmt.Sprintf("bad line %q: want a whole number from 1", lineText)
		}
		l.Line = n
	}
	return l, ""
}
