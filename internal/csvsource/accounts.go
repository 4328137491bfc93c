package csvsource

import (
	"context"
	"fmt"

	"github.com/costdrift/costdrift/internal/canon"
	"github.com/costdrift/costdrift/internal/costdrift"
)

// ReadAccounts streams the chart of accounts (account, name, type, group) to w.
func ReadAccounts(ctx context.Context, path, display string, opt Options, w costdrift.SourceWriter) (int, error) {
	t, closer, err := open(path, display, opt)
	if err != nil {
		return 0, err
	}
	defer closer.Close()
	b, err := canon.Bind(t.header, opt.Columns, canon.AccountColumns)
	if err != nil {
		return 0, fmt.Errorf("%s: %w", display, err)
	}
	rules := opt.rules()
	bound := b.Bound()
	var row canon.Row
	return t.rows(ctx, display, opt, w, func(rec []string) error {
		if reason := t.rowProblem(rec); reason != "" {
			return t.reject(opt, w, reason)
		}
		fill(&row, bound, rec)
		a, reason := rules.Account(&row)
		if reason != "" {
			return t.reject(opt, w, reason)
		}
		return w.Account(a)
	})
}
