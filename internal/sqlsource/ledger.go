package sqlsource

import (
	"context"
	"fmt"
	"strings"
	"time"

	"github.com/costdrift/costdrift/internal/costdrift"
	"github.com/costdrift/costdrift/internal/money"
)

// Ledger columns. Either amount, or debit and credit, must be present. line
// is required: numbering lines here would need memory for every entry seen,
// and any database can number them, e.g.
// ROW_NUMBER() OVER (PARTITION BY entry_id ORDER BY id) AS line.
var (
	ledgerRequired     = []string{"entry_id", "line", "date", "account"}
	ledgerOptional     = []string{"cost_center", "amount", "debit", "credit", "description", "currency", "functional_amount"}
	aggregatedRequired = []string{"period", "account", "amount"}
	aggregatedOptional = []string{"cost_center"}
)

// ReadLedger runs the source's query and streams its general-ledger lines to
// w.
//
// Line by line, the result has entry_id, line, date, account, amount (signed,
// debit positive; or debit and credit, amount = debit - credit) and
// optionally cost_center and description.
//
// With opt.Aggregated the result has period (YYYY-MM, or a date in the
// month), account, amount and optionally cost_center, one row per sum: each
// becomes one line with EntryID "sum:<period>:<account>:<cost_center>", Line
// 1, PostedOn the period's last day and Period as given. This is how a very
// large ledger is summed where it lives. The query must group by period,
// account and cost_center: two rows with the same three would be one line,
// and the later would replace the earlier in the store.
func ReadLedger(ctx context.Context, opt Options, w costdrift.SourceWriter) (Result, error) {
	if opt.Aggregated {
		return run(ctx, opt, func(cols []string) (rowFunc, error) {
			col, err := bindColumns(cols, opt.Columns, aggregatedRequired, aggregatedOptional,
				"an aggregated ledger query returns period, account, cost_center and amount")
			if err != nil {
				return nil, err
			}
			return func(n int, vals []any) error {
				r := row{col: col, vals: vals, cols: cols}
				line, k, reason := aggregatedLine(r, opt)
				if reason != "" {
					return reject(w, opt, n, k, reason, r)
				}
				return w.LedgerLine(line)
			}, nil
		})
	}
	return run(ctx, opt, func(cols []string) (rowFunc, error) {
		const hint = "expected entry_id, line, date, account and amount (or debit and credit); " +
			"a table without line numbers can number them in the query: ROW_NUMBER() OVER (PARTITION BY entry_id ORDER BY <its key>) AS line"
		col, err := bindColumns(cols, opt.Columns, ledgerRequired, ledgerOptional, hint)
		if err != nil {
			return nil, err
		}
		_, signed := col["amount"]
		_, debit := col["debit"]
		_, credit := col["credit"]
		if !signed && !(debit && credit) {
			return nil, fmt.Errorf("the query result has neither an amount column nor debit and credit columns; %s", hint)
		}
		return func(n int, vals []any) error {
			r := row{col: col, vals: vals, cols: cols}
			line, reason := ledgerLine(r, opt, signed)
			if reason != "" {
				return reject(w, opt, n, key("entry", line.EntryID, "line", r.text("line")), reason, r)
			}
			return w.LedgerLine(line)
		}, nil
	})
}

// ledgerLine turns a result row into a ledger line, or says why it cannot.
func ledgerLine(r row, opt Options, signed bool) (costdrift.LedgerLine, string) {
	l := costdrift.LedgerLine{
		Source:      opt.Source,
		EntryID:     r.text("entry_id"),
		Account:     r.text("account"),
		CostCenter:  r.text("cost_center"),
		Description: r.text("description"),
	}
	if l.EntryID == "" {
		return l, "missing entry_id"
	}
	var reason string
	if l.Line, reason = lineNumber(r.get("line")); reason != "" {
		return l, reason
	}
	if l.Account == "" {
		return l, "missing account"
	}
	d, reason := date(r.get("date"), opt.DateLayout)
	if reason != "" {
		return l, reason
	}
	l.PostedOn = d.Format("2006-01-02")
	l.Period = opt.Period(d)
	// A line in a foreign currency counts only through its amount in the
	// functional currency, as in a CSV file.
	if cur := strings.ToUpper(r.text("currency")); cur != "" && cur != opt.Currency.Code {
		v := r.get("functional_amount")
		if text(v) == "" {
			return l, fmt.Sprintf("amount in %s with no functional_amount in %s", cur, opt.Currency.Code)
		}
		if l.AmountMinor, reason = amount(v, opt.Currency, opt.Notation); reason != "" {
			return l, "bad functional_amount: " + strings.TrimPrefix(reason, "bad amount: ")
		}
		return l, ""
	}
	if signed {
		if l.AmountMinor, reason = amount(r.get("amount"), opt.Currency, opt.Notation); reason != "" {
			return l, reason
		}
		return l, ""
	}
	dv, cv := r.get("debit"), r.get("credit")
	if text(dv) == "" && text(cv) == "" {
		return l, "missing amount: both debit and credit are empty"
	}
	var debit, credit int64
	if text(dv) != "" {
		if debit, reason = amount(dv, opt.Currency, opt.Notation); reason != "" {
			return l, "debit: " + reason
		}
	}
	if text(cv) != "" {
		if credit, reason = amount(cv, opt.Currency, opt.Notation); reason != "" {
			return l, "credit: " + reason
		}
	}
	// Each side is within the bound; their difference may not be.
	l.AmountMinor = debit - credit
	if !money.InRange(l.AmountMinor) {
		what := fmt.Sprintf("debit %q minus credit %q", text(dv), text(cv))
		return l, "bad amount: " + opt.Currency.OutOfRange(what, opt.Notation).Error()
	}
	return l, ""
}

// aggregatedLine turns a row of per-period sums into one ledger line.
func aggregatedLine(r row, opt Options) (costdrift.LedgerLine, string, string) {
	account, cc := r.text("account"), r.text("cost_center")
	first, reason := month(r.get("period"), opt.DateLayout)
	p := ""
	if reason == "" {
		p = first.Format("2006-01")
	}
	k := key("period", p, "account", account, "cost centre", cc)
	if reason != "" {
		return costdrift.LedgerLine{}, k, reason
	}
	if account == "" {
		return costdrift.LedgerLine{}, k, "missing account"
	}
	minor, reason := amount(r.get("amount"), opt.Currency, opt.Notation)
	if reason != "" {
		return costdrift.LedgerLine{}, k, reason
	}
	last := first.AddDate(0, 1, -1)
	return costdrift.LedgerLine{
		Source:      opt.Source,
		EntryID:     "sum:" + p + ":" + account + ":" + cc,
		Line:        1,
		PostedOn:    last.Format(time.DateOnly),
		Period:      p,
		Account:     account,
		CostCenter:  cc,
		AmountMinor: minor,
	}, k, ""
}
