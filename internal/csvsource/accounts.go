package csvsource

import (
	"context"
	"encoding/csv"
	"errors"
	"fmt"
	"io"

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
	read := 0
	for {
		rec, err := t.next()
		if errors.Is(err, io.EOF) {
			return read, nil
		}
		var pe *csv.ParseError
		if errors.As(err, &pe) {
			read++
			if err := w.Reject(costdrift.Reject{Source: opt.Source, Location: t.location(), Reason: "malformed CSV: " + pe.Err.Error(), Raw: t.rawInput()}); err != nil {
				return read, err
			}
			continue
		}
		if err != nil {
			return read, fmt.Errorf("%s: %w", display, err)
		}
		if blank(rec) {
			continue
		}
		read++
		if err := checkCtx(ctx, read); err != nil {
			return read, err
		}
		a := costdrift.Account{Source: opt.Source, Account: t.field(rec, "account"), Name: t.field(rec, "name"),
			Type: t.field(rec, "type"), Group: t.field(rec, "group")}
		switch {
		case t.rowProblem(rec) != "":
			err = w.Reject(costdrift.Reject{Source: opt.Source, Location: t.location(), Reason: t.rowProblem(rec), Raw: t.rawInput()})
		case a.Account == "":
			err = w.Reject(costdrift.Reject{Source: opt.Source, Location: t.location(), Reason: "missing account", Raw: t.rawInput()})
		default:
			err = w.Account(a)
		}
		if err != nil {
			return read, err
		}
	}
}
