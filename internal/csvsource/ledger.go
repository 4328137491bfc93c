package csvsource

import (
	"context"
	"fmt"
	"strconv"
	"strings"
	"time"

	"github.com/costdrift/costdrift/internal/costdrift"
	"github.com/costdrift/costdrift/internal/money"
)

// Ledger columns. Either amount, or debit and credit, must be present.
var (
	ledgerRequired = []string{"entry_id", "date", "account"}
	ledgerOptional = []string{"line", "cost_center", "amount", "debit", "credit", "description", "currency", "functional_amount"}
)

// ReadLedger streams the general-ledger lines of one file to w and returns
// how many data rows it read. display names the file in messages.
func ReadLedger(ctx context.Context, path, display string, opt Options, w costdrift.SourceWriter) (int, error) {
	t, closer, err := open(path, display, opt)
	if err != nil {
		return 0, err
	}
	defer closer.Close()
	const hint = "expected entry_id, date, account and amount (or debit and credit)"
	if err := t.bind(opt.Columns, ledgerRequired, ledgerOptional, hint); err != nil {
		return 0, err
	}
	signed := t.has("amount")
	if !signed && !(t.has("debit") && t.has("credit")) {
		return 0, fmt.Errorf("%s: header has neither an amount column nor debit and credit columns (found: %s); %s, or map yours under `columns:` in the source's config",
			display, joinHeader(t.header), hint)
	}
	layout := opt.DateLayout
	if layout == "" {
		layout = "2006-01-02"
	}
	// Without a line column, lines are numbered within their entry in file
	// order, which is stable as long as the export is.
	nextLine := map[string]int{}
	return t.rows(ctx, display, opt, w, func(rec []string) error {
		line, reason := parseLedgerRow(t, rec, opt, layout, signed, nextLine)
		if reason != "" {
			return t.reject(opt, w, reason)
		}
		return w.LedgerLine(line)
	})
}

// parseLedgerRow turns a record into a ledger line, or says why it cannot.
func parseLedgerRow(t *table, rec []string, opt Options, layout string, signed bool, nextLine map[string]int) (costdrift.LedgerLine, string) {
	if reason := t.rowProblem(rec); reason != "" {
		return costdrift.LedgerLine{}, reason
	}
	l := costdrift.LedgerLine{
		Source:      opt.Source,
		EntryID:     t.field(rec, "entry_id"),
		Account:     t.field(rec, "account"),
		CostCenter:  t.field(rec, "cost_center"),
		Description: t.field(rec, "description"),
	}
	if l.EntryID == "" {
		return l, "missing entry_id"
	}
	// Without a line number, a line is numbered by its place in the entry,
	// rejected lines included, so that its number does not depend on
	// whether the lines before it could be read.
	lineText := t.field(rec, "line")
	if lineText == "" {
		nextLine[l.EntryID]++
		l.Line = nextLine[l.EntryID]
	}
	if l.Account == "" {
		return l, "missing account"
	}
	dateText := t.field(rec, "date")
	date, err := time.Parse(layout, dateText)
	if err != nil {
		return l, fmt.Sprintf("bad date %q: want %s", dateText, humanLayout(layout))
	}
	l.PostedOn = date.Format("2006-01-02")
	l.Period = opt.Period(date)

	// A line in a foreign currency counts only through its amount in the
	// functional currency: converting at some rate here would invent money.
	if cur := strings.ToUpper(t.field(rec, "currency")); cur != "" && cur != opt.Currency.Code {
		text := t.field(rec, "functional_amount")
		if text == "" {
			return l, fmt.Sprintf("amount in %s with no functional_amount in %s", cur, opt.Currency.Code)
		}
		l.AmountMinor, err = opt.Currency.Parse(text, opt.Notation)
		if err != nil {
			return l, "bad functional_amount: " + err.Error()
		}
	} else if signed {
		text := t.field(rec, "amount")
		l.AmountMinor, err = opt.Currency.Parse(text, opt.Notation)
		if err != nil {
			return l, "bad amount: " + err.Error()
		}
	} else {
		debitText, creditText := t.field(rec, "debit"), t.field(rec, "credit")
		if debitText == "" && creditText == "" {
			return l, "missing amount: both debit and credit are empty"
		}
		var debit, credit int64
		if debitText != "" {
			if debit, err = opt.Currency.Parse(debitText, opt.Notation); err != nil {
				return l, "bad debit: " + err.Error()
			}
		}
		if creditText != "" {
			if credit, err = opt.Currency.Parse(creditText, opt.Notation); err != nil {
				return l, "bad credit: " + err.Error()
			}
		}
		// Each side is within the bound; their difference may not be.
		l.AmountMinor = debit - credit
		if !money.InRange(l.AmountMinor) {
			return l, "bad amount: " + opt.Currency.OutOfRange(fmt.Sprintf("debit %q minus credit %q", debitText, creditText), opt.Notation).Error()
		}
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

// humanLayout spells a Go date layout the way the config does.
func humanLayout(layout string) string {
	out := []byte{}
	for i := 0; i < len(layout); {
		switch {
		case len(layout)-i >= 4 && layout[i:i+4] == "2006":
			out, i = append(out, "YYYY"...), i+4
		case len(layout)-i >= 2 && layout[i:i+2] == "01":
			out, i = append(out, "MM"...), i+2
		case len(layout)-i >= 2 && layout[i:i+2] == "02":
			out, i = append(out, "DD"...), i+2
		default:
			out, i = append(out, layout[i]), i+1
		}
	}
	return string(out)
}

func joinHeader(h []string) string {
	s := ""
	for i, x := range h {
		if i > 0 {
			s += ", "
		}
		s += x
	}
	return s
}
