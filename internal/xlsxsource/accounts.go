package xlsxsource

import (
	"context"

	"github.com/costdrift/costdrift/internal/costdrift"
)

// ReadAccounts streams the chart of accounts (account, name, type, group) to w.
func ReadAccounts(ctx context.Context, path, display string, opt Options, w costdrift.SourceWriter) (int, error) {
	t, err := open(path, display, opt.Sheet)
	if err != nil {
		return 0, err
	}
	defer t.close()
	if err := t.bind(opt.Columns, []string{"account"}, []string{"name", "type", "group"}, "expected account, name, type, group"); err != nil {
		return 0, err
	}
	return t.each(ctx, func() error {
		a, reason := accountRow(t, opt)
		if reason != "" {
			return t.reject(opt, w, reason)
		}
		return w.Account(a)
	})
}

func accountRow(t *table, opt Options) (costdrift.Account, string) {
	if why := t.overflow(); why != "" {
		return costdrift.Account{}, why
	}
	a := costdrift.Account{Source: opt.Source}
	for _, f := range []struct {
		name string
		to   *string
	}{{"account", &a.Account}, {"name", &a.Name}, {"type", &a.Type}, {"group", &a.Group}} {
		var why string
		if *f.to, why = t.text(f.name); why != "" {
			return a, why
		}
	}
	if a.Account == "" {
		return a, "missing account"
	}
	return a, ""
}
