package sqlsource

import (
	"context"
	"time"

	"github.com/costdrift/costdrift/internal/canon"
	"github.com/costdrift/costdrift/internal/costdrift"
)

// Ledger columns. Either amount, or debit and credit, must be present. line
// is required: numbering lines here would need memory for every entry seen,
// and any database can number them, e.g.
// ROW_NUMBER() OVER (PARTITION BY entry_id ORDER BY id) AS line.
var (
	ledgerColumns = canon.Columns{
		Required: []canon.Column{canon.EntryID, canon.Line, canon.Date, canon.Account},
		Optional: []canon.Column{canon.CostCenter, canon.Amount, canon.Debit, canon.Credit, canon.Description, canon.Currency, canon.FunctionalAmount},
		Hint: "expected entry_id, line, date, account and amount (or debit and credit); " +
			"a table without line numbers can number them in the query: ROW_NUMBER() OVER (PARTITION BY entry_id ORDER BY <its key>) AS line",
		Amounts: true,
	}
	aggregatedColumns = canon.Columns{
		Required: []canon.Column{canon.Period, canon.Account, canon.Amount},
		Optional: []canon.Column{canon.CostCenter},
		Hint:     "an aggregated ledger query returns period, account, cost_center and amount",
	}
)

// ReadLedger runs the source's query and streams its general-ledger lines to
// w.
//
// Line by line, the result has entry_id, line, date, account, amount (signed,
// debit positive; or debit and credit, amount = debit - credit) and
// optionally cost_center, description, and currency with functional_amount
// for lines in another currency; the rules are canon.Ledger's.
//
// With opt.Aggregated the result has period (YYYY-MM, or a date in the
// month), account, amount and optionally cost_center, one row per sum: each
// becomes one line with EntryID "sum:<period>:<account>:<cost_center>", Line
// 1, PostedOn the period's last day and Period as given. This is how a very
// large ledger is summed where it lives. The query must group by period,
// account and cost_center: two rows with the same three would be one line,
// and the later would replace the earlier in the store.
func ReadLedger(ctx context.Context, opt Options, w costdrift.SourceWriter) (Result, error) {
	rules := opt.rules()
	if opt.Aggregated {
		return run(ctx, opt, func(cols []string) (rowFunc, error) {
			res, err := bindResult(cols, opt, aggregatedColumns)
			if err != nil {
				return nil, err
			}
			return func(n int, vals []any) error {
				res.read(vals)
				line, k, reason := aggregatedLine(res, &rules)
				if reason != "" {
					return reject(w, opt, n, k, reason, res)
				}
				return w.LedgerLine(line)
			}, nil
		})
	}
	return run(ctx, opt, func(cols []string) (rowFunc, error) {
		res, err := bindResult(cols, opt, ledgerColumns)
		if err != nil {
			return nil, err
		}
		ledger := canon.NewLedger(rules, res.binding, false)
		return func(n int, vals []any) error {
			res.read(vals)
			line, reason := ledger.Line(&res.row)
			if reason != "" {
				return reject(w, opt, n, key("entry", line.EntryID, "line", res.text(canon.Line)), reason, res)
			}
			return w.LedgerLine(line)
		}, nil
	})
}

// aggregatedLine turns a row of per-period sums into one ledger line, and
// gives the row's key for a reject.
func aggregatedLine(res *result, rules *canon.Rules) (costdrift.LedgerLine, string, string) {
	account, cc := res.text(canon.Account), res.text(canon.CostCenter)
	first, reason := month(rules, &res.row[canon.Period])
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
	minor, reason := rules.Money(&res.row[canon.Amount], canon.Amount)
	if reason != "" {
		return costdrift.LedgerLine{}, k, reason
	}
	last := first.AddDate(0, 1, -1)
	return costdrift.LedgerLine{
		Source:      rules.Source,
		EntryID:     "sum:" + p + ":" + account + ":" + cc,
		Line:        1,
		PostedOn:    last.Format(time.DateOnly),
		Period:      p,
		Account:     account,
		CostCenter:  cc,
		AmountMinor: minor,
	}, k, ""
}

// month reads an aggregated row's period (YYYY-MM, or a date or timestamp
// in the month such as date_trunc('month', posted_on)) as its first day.
func month(rules *canon.Rules, c *canon.Cell) (time.Time, string) {
	day, why := rules.PeriodDay(c)
	if why != "" {
		return time.Time{}, why
	}
	return time.Date(day.Year(), day.Month(), 1, 0, 0, 0, 0, time.UTC), ""
}
