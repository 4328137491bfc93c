package canon

import (
	"fmt"
	"strconv"
	"strings"

	"github.com/costdrift/costdrift/internal/costdrift"
	"github.com/costdrift/costdrift/internal/money"
)

// Ledger reads the rows of one ledger file or query into ledger lines.
type Ledger struct {
	rules  Rules
	signed bool // an amount column; else debit and credit
	// numbers holds the last number given in each entry to a line without
	// one; nil when every line must carry its number.
	numbers map[string]int
	// The last date read as text, and the posting date and period it gave.
	lastDate, lastPosted, lastPeriod string
}

// NewLedger reads rows bound by b (Bind with LedgerColumns, or columns
// that include them). With numberLines, a line without a number gets its
// place in the entry: 1, 2, 3, ... in the order the rows come, rejected
// rows included, so that a line's number does not depend on whether the
// rows before it could be read. Without it, a line must carry its number.
func NewLedger(r Rules, b Binding, numberLines bool) *Ledger {
	l := &Ledger{rules: r, signed: b.Has(Amount)}
	if numberLines {
		l.numbers = map[string]int{}
	}
	return l
}

// Line reads one row into a ledger line, or says why it cannot be stored.
// The reason is the first problem in this order: entry_id, account,
// cost_center and description that cannot be text; a missing entry_id or
// account; the date; the amount; the line number. The line comes back
// filled as far as it was read, for the source to name the row by.
//
// The amount, in minor units of the functional currency, is
//
//	functional_amount      when currency names another currency;
//	amount                 else, with an amount column;
//	debit - credit         else (an empty side is zero; both empty is a reject),
//
// each within money.MaxMinor either side of zero. A line in another
// currency without a functional_amount is rejected: converting at a rate of
// our own would put a number in the store that the books do not hold.
func (lr *Ledger) Line(row *Row) (costdrift.LedgerLine, string) {
	r := &lr.rules
	l := costdrift.LedgerLine{Source: r.Source}
	var why string
	if l.EntryID, why = row.text(EntryID); why != "" {
		return l, why
	}
	if l.Account, why = row.text(Account); why != "" {
		return l, why
	}
	if l.CostCenter, why = row.text(CostCenter); why != "" {
		return l, why
	}
	if l.Description, why = row.text(Description); why != "" {
		return l, why
	}
	if l.EntryID == "" {
		return l, "missing entry_id"
	}
	number := &row[Line]
	if number.empty() && lr.numbers != nil {
		lr.numbers[l.EntryID]++
		l.Line = lr.numbers[l.EntryID]
	}
	if l.Account == "" {
		return l, "missing account"
	}

	date := &row[Date]
	if date.form == textForm && date.text != "" && date.text == lr.lastDate {
		// The lines of an entry mostly share their date.
		l.PostedOn, l.Period = lr.lastPosted, lr.lastPeriod
	} else {
		day, why := r.Date(date)
		if why != "" {
			return l, why
		}
		if date.form == textForm && r.layout() == isoDate {
			// Parsed by that layout, the text is the day as PostedOn writes it.
			l.PostedOn, l.Period = date.text, r.Period(day)
		} else {
			r.Posting(&l, day)
		}
		if date.form == textForm {
			lr.lastDate, lr.lastPosted, lr.lastPeriod = date.text, l.PostedOn, l.Period
		}
	}

	if l.AmountMinor, why = lr.amount(row); why != "" {
		return l, why
	}

	switch {
	case number.form == badForm:
		return l, number.text
	case !number.empty():
		n, err := strconv.Atoi(number.text)
		if err != nil || n < 1 {
			return l, fmt.Sprintf("bad line %q: want a whole number from 1", number.text)
		}
		l.Line = n
	case lr.numbers == nil:
		return l, "missing line"
	}
	return l, ""
}

// amount reads a line's amount, as Line describes.
func (lr *Ledger) amount(row *Row) (int64, string) {
	r := &lr.rules
	code, why := row.text(Currency)
	if why != "" {
		return 0, why
	}
	if code = strings.ToUpper(code); code != "" && code != r.Currency.Code {
		functional := &row[FunctionalAmount]
		if functional.empty() {
			return 0, fmt.Sprintf("amount in %s with no functional_amount in %s", code, r.Currency.Code)
		}
		return r.Money(functional, FunctionalAmount)
	}
	if lr.signed {
		return r.Money(&row[Amount], Amount)
	}
	debitCell, creditCell := &row[Debit], &row[Credit]
	if debitCell.empty() && creditCell.empty() {
		return 0, "missing amount: both debit and credit are empty"
	}
	var debit, credit int64
	if !debitCell.empty() {
		if debit, why = r.Money(debitCell, Debit); why != "" {
			return 0, why
		}
	}
	if !creditCell.empty() {
		if credit, why = r.Money(creditCell, Credit); why != "" {
			return 0, why
		}
	}
	// Each side is within the bound; their difference may not be.
	amount := debit - credit
	if !money.InRange(amount) {
		what := fmt.Sprintf("debit %q minus credit %q", debitCell.text, creditCell.text)
		return 0, "bad amount: " + r.Currency.OutOfRange(what, r.Notation).Error()
	}
	return amount, ""
}
