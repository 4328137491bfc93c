package saftsource

import (
	"context"
	"encoding/xml"
	"fmt"
	"strings"

	"github.com/costdrift/costdrift/internal/costdrift"
)

// accountXML is one MasterFiles/GeneralLedgerAccounts/Account, in the 1.30
// layout (GroupingCategory and GroupingCode, both mandatory) or the 1.20
// one (StandardAccountID, or GroupingCategory and GroupingCode, optional).
type accountXML struct {
	AccountID          string `xml:"AccountID"`
	AccountDescription string `xml:"AccountDescription"`
	StandardAccountID  string `xml:"StandardAccountID"`
	GroupingCode       string `xml:"GroupingCode"`
	AccountType        string `xml:"AccountType"`
}

// ReadAccounts streams the chart of accounts of one SAF-T Financial file
// to w and returns how many Account elements it read:
//
//	Account = AccountID, Name = AccountDescription, Type = AccountType
//	Group   = GroupingCode, else StandardAccountID
//
// GroupingCode comes first because it is the only mapping 1.30 has, and it
// is mandatory there; within the income-statement list
// (naeringsspesifikasjon) each code is unique and names the line of the
// statement an account reports in, e.g. 4005 cost of goods. 1.20 files may
// map accounts by StandardAccountID instead (the 2- or 4-character standard
// chart of accounts, e.g. 12 or 1920), which is then the group. The
// GroupingCategory is not kept: the code is unique without it.
//
// An Account without AccountID, or with one already read, is rejected with
// its location (file:GeneralLedgerAccounts/Account <position>): the store
// keeps one row per account, so a second would silently replace the first.
//
// Reading stops at the end of MasterFiles, which the schema puts before the
// ledger, so the general-ledger part of the file is not read. A file that is
// empty, not XML, not AuditFile in the SAF-T Financial namespace, truncated
// before the end of its MasterFiles, or without
// MasterFiles/GeneralLedgerAccounts is an error.
func ReadAccounts(ctx context.Context, path, display string, opt Options, w costdrift.SourceWriter) (int, error) {
	if err := ctx.Err(); err != nil {
		return 0, err
	}
	x, closer, err := openFile(path, display, opt.Progress)
	if err != nil {
		return 0, err
	}
	defer closer.Close()
	return readAccounts(ctx, x, opt, w)
}

// readAccounts reads the chart of accounts of an opened file.
func readAccounts(ctx context.Context, x *file, opt Options, w costdrift.SourceWriter) (int, error) {
	a := &accounts{file: x, ctx: ctx, opt: opt, w: w, seen: map[string]int{}}
	found, err := a.root()
	if err == nil && !found {
		err = fmt.Errorf("%s has no MasterFiles/GeneralLedgerAccounts: it holds no chart of accounts", x.display)
	}
	return a.read, err
}

// accounts reads the chart of accounts of one file.
type accounts struct {
	*file
	ctx  context.Context
	opt  Options
	w    costdrift.SourceWriter
	read int
	seen map[string]int // AccountID -> position of the Account first read
}

// root finds MasterFiles and reads it; it returns whether it found
// GeneralLedgerAccounts there.
func (a *accounts) root() (bool, error) {
	for {
		tok, err := a.token()
		if err != nil {
			return false, err
		}
		switch t := tok.(type) {
		case xml.EndElement:
			return false, nil
		case xml.StartElement:
			if a.ours(t.Name) && t.Name.Local == "MasterFiles" {
				return a.masterFiles()
			}
			if err := a.skip(); err != nil {
				return false, err
			}
		}
	}
}

func (a *accounts) masterFiles() (bool, error) {
	found := false
	for {
		tok, err := a.token()
		if err != nil {
			return false, err
		}
		switch t := tok.(type) {
		case xml.EndElement:
			return found, nil
		case xml.StartElement:
			if a.ours(t.Name) && t.Name.Local == "GeneralLedgerAccounts" {
				found = true
				err = a.generalLedgerAccounts()
			} else {
				err = a.skip()
			}
			if err != nil {
				return false, err
			}
		}
	}
}

func (a *accounts) generalLedgerAccounts() error {
	for {
		before := a.d.InputOffset()
		tok, err := a.token()
		if err != nil {
			return err
		}
		switch t := tok.(type) {
		case xml.EndElement:
			return nil
		case xml.StartElement:
			if a.ours(t.Name) && t.Name.Local == "Account" {
				err = a.account(&t, before)
			} else {
				err = a.skip()
			}
			if err != nil {
				return err
			}
		}
	}
}

// account reads one Account and writes it, or a reject.
func (a *accounts) account(start *xml.StartElement, from int64) error {
	var x accountXML
	if err := a.decode(&x, start); err != nil {
		return err
	}
	a.read++
	if a.read%1024 == 0 {
		if err := a.ctx.Err(); err != nil {
			return err
		}
	}
	acct := costdrift.Account{
		Source:  a.opt.Source,
		Account: strings.TrimSpace(x.AccountID),
		Name:    strings.TrimSpace(x.AccountDescription),
		Type:    strings.TrimSpace(x.AccountType),
		Group:   strings.TrimSpace(x.GroupingCode),
	}
	if acct.Group == "" {
		acct.Group = strings.TrimSpace(x.StandardAccountID)
	}
	reason := ""
	if acct.Account == "" {
		reason = "missing AccountID"
	} else if first, dup := a.seen[acct.Account]; dup {
		reason = fmt.Sprintf("account %s is listed a second time (first as Account %d)", shorten(acct.Account), first)
	} else {
		a.seen[acct.Account] = a.read
	}
	if reason != "" {
		return a.w.Reject(costdrift.Reject{Source: a.opt.Source,
			Location: fmt.Sprintf("%s:GeneralLedgerAccounts/Account %d", a.display, a.read),
			Reason:   reason, Raw: a.raw(from, a.d.InputOffset())})
	}
	return a.w.Account(acct)
}
