package csvsource

import (
	"context"

	"github.com/costdrift/costdrift/internal/costdrift"
)

// ReadAccounts streams the chart of accounts (account, name, type, group) to w.
func ReadAccounts(ctx context.Context, path, display string, opt Options, w costdrift.SourceWriter) (int, error) {
	t, closer, err := open(path, display, opt)
	if err != nil {
		return 0, err
	}
	defer closer.Close()
	if err := t.bind(opt.Columns, []string{"account"}, []string{"name", "type", "group"}, "expected account, name, type, group"); err != nil {
		return 0, err
	}
	return t.rows(ctx, display, opt, w, func(rec []string) error {
		a := costdrift.Account{Source: opt.Source, Account: t.field(rec, "account"), Name: t.field(rec, "name"),
			Type: t.field(rec, "type"), Group: t.field(rec, "group")}
		switch {
		case t.rowProblem(rec) != "":
			return t.reject(opt, w, t.rowProblem(rec))
		case a.Account == "":
			return t.reject(opt, w, "missing account")
		}
		return w.Account(a)
	})
}
