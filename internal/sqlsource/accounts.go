package sqlsource

import (
	"context"

	"github.com/costdrift/costdrift/internal/costdrift"
)

// ReadAccounts runs the source's query and streams the chart of accounts
// (account, and optionally name, type, group) to w.
func ReadAccounts(ctx context.Context, opt Options, w costdrift.SourceWriter) (Result, error) {
	return run(ctx, opt, func(cols []string) (rowFunc, error) {
		col, err := bindColumns(cols, opt.Columns, []string{"account"}, []string{"name", "type", "group"},
			"expected account, name, type, group")
		if err != nil {
			return nil, err
		}
		return func(n int, vals []any) error {
			r := row{col: col, vals: vals, cols: cols}
			a := costdrift.Account{Source: opt.Source, Account: r.text("account"), Name: r.text("name"), Type: r.text("type"), Group: r.text("group")}
			if a.Account == "" {
				return reject(w, opt, n, "", "missing account", r)
			}
			return w.Account(a)
		}, nil
	})
}
