package sqlsource

import (
	"context"

	"github.com/costdrift/costdrift/internal/canon"
	"github.com/costdrift/costdrift/internal/costdrift"
)

// ReadAccounts runs the source's query and streams the chart of accounts
// (account, and optionally name, type, group) to w.
func ReadAccounts(ctx context.Context, opt Options, w costdrift.SourceWriter) (Result, error) {
	rules := opt.rules()
	return run(ctx, opt, func(cols []string) (rowFunc, error) {
		res, err := bindResult(cols, opt, canon.AccountColumns)
		if err != nil {
			return nil, err
		}
		return func(n int, vals []any) error {
			res.read(vals)
			a, reason := rules.Account(&res.row)
			if reason != "" {
				return reject(w, opt, n, "", reason, res)
			}
			return w.Account(a)
		}, nil
	})
}
