package xlsxsource

import (
	"context"

	"github.com/costdrift/costdrift/internal/canon"
	"github.com/costdrift/costdrift/internal/costdrift"
)

// ReadAccounts streams the chart of accounts (account, name, type, group) to w.
func ReadAccounts(ctx context.Context, path, display string, opt Options, w costdrift.SourceWriter) (int, error) {
	t, err := open(path, display, opt.Sheet)
	if err != nil {
		return 0, err
	}
	defer t.close()
	b, err := t.bind(opt.Columns, canon.AccountColumns)
	if err != nil {
		return 0, err
	}
	rules := opt.rules()
	bound := b.Bound()
	var row canon.Row
	return t.each(ctx, func() error {
		if why := t.overflow(); why != "" {
			return t.reject(opt, w, why)
		}
		t.fill(&row, bound, opt)
		a, reason := rules.Account(&row)
		if reason != "" {
			return t.reject(opt, w, reason)
		}
		return w.Account(a)
	})
}
