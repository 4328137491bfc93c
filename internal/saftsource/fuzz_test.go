package saftsource

import (
	"bytes"
	"context"
	"flag"
	"os"
	"strings"
	"testing"
	"time"
)

// FuzzReadLedger feeds arbitrary bytes, and an arbitrary analysis type, to
// both readers (ledger and accounts). Whatever the input, they must not
// panic, and:
//   - every row given to the writer is counted: Rows = stored + rejected;
//   - no line is lost or invented: Rows >= Lines, and Rows == Lines when no
//     analysis type splits lines between cost centres;
//   - no two stored rows share an entry and line number, nor two accounts
//     an account number, because the store would silently keep the last;
//   - stored rows have an entry, an account, a line number from 1, a real
//     date and that date's period;
//   - errors and reject reasons are one line.
//
// Seeds: the two example files and small documents for the edges.
func FuzzReadLedger(f *testing.F) {
	for _, p := range []string{example120, example130} {
		data, err := os.ReadFile(p)
		if err != nil {
			f.Fatal(err)
		}
		f.Add(data, "A")
	}
	two := transactionXML("1", "2025-01-31",
		lineElem("1", "6100", analysis("A", "WELD", "DebitAnalysisAmount", "60.00")+analysis("A", "PAINT", "", ""), "Debit", "100.00"),
		lineElem("2", "2400", analysis("A", "WELD", "AnalysisAmount", "100"), "Credit", "100.00"))
	for _, doc := range []string{
		document(1, "100.00", "100.00", journalXML("GL", two)),
		document(2, "200.00", "200.00", journalXML("GL", two, two)+journalXML("", two)),
		"\ufeff" + strings.ReplaceAll(document(1, "100.00", "100.00", journalXML("GL", two)), "\n", "\r\n"),
		`<n1:AuditFile xmlns:n1="` + Namespace + `"><n1:Header><n1:DefaultCurrencyCode>NOK</n1:DefaultCurrencyCode></n1:Header>` +
			`<n1:MasterFiles><n1:GeneralLedgerAccounts><n1:Account><n1:AccountID>6100</n1:AccountID></n1:Account></n1:GeneralLedgerAccounts></n1:MasterFiles>` +
			`<n1:GeneralLedgerEntries><n1:NumberOfEntries>0</n1:NumberOfEntries><n1:TotalDebit>0</n1:TotalDebit><n1:TotalCredit>0</n1:TotalCredit></n1:GeneralLedgerEntries></n1:AuditFile>`,
		`<AuditFile xmlns="urn:StandardAuditFile-Taxation-CashRegister:NO"/>`,
		"",
	} {
		f.Add([]byte(doc), "A")
	}
	f.Add([]byte(document(1, "1", "1", journalXML("GL", two))), "")

	// Go minimises every input that finds new code, for up to a minute by
	// default. An input grown from the 158 KB example needs some 160,000
	// runs of the reader to minimise, so a one-minute session would do
	// nothing else; unless -fuzzminimizetime is given, a few seconds are
	// spent instead. (The coordinator reads the flag when f.Fuzz is called.)
	if fl := flag.Lookup("test.fuzzminimizetime"); fl != nil {
		given := false
		flag.Visit(func(g *flag.Flag) { given = given || g.Name == fl.Name })
		if !given {
			if err := fl.Value.Set("5s"); err != nil {
				f.Fatal(err)
			}
		}
	}

	f.Fuzz(func(t *testing.T, data []byte, analysisType string) {
		// The bytes are read from memory: ReadLedger and ReadAccounts only
		// open the file before calling these, and a file per input would
		// spend the fuzzing time in system calls.
		const name = "fuzz.xml"
		rec := &recorder{}
		var tot Totals
		x, err := newFile(bytes.NewReader(data), name, nil)
		if err == nil {
			tot, err = readLedger(context.Background(), x, options(analysisType), rec)
		}
		if tot.Rows != len(rec.lines)+len(rec.rejects) {
			t.Fatalf("Rows = %d, but %d lines and %d rejects were written (err %v)", tot.Rows, len(rec.lines), len(rec.rejects), err)
		}
		if err != nil && strings.ContainsAny(err.Error(), "\r\n") {
			t.Fatalf("error is not one line: %q", err)
		}
		if err == nil {
			// Checking never panics, and says one line.
			if cerr := tot.Check(); cerr != nil && strings.ContainsAny(cerr.Error(), "\r\n") {
				t.Fatalf("check is not one line: %q", cerr)
			}
		}
		if strings.TrimSpace(analysisType) == "" && tot.Rows != tot.Lines {
			t.Fatalf("no analysis type, yet %d rows from %d lines", tot.Rows, tot.Lines)
		}
		if tot.Rows < tot.Lines {
			t.Fatalf("%d rows from %d lines: a line was lost", tot.Rows, tot.Lines)
		}
		type key struct {
			entry string
			line  int
		}
		seen := map[key]bool{}
		for _, l := range rec.lines {
			k := key{l.EntryID, l.Line}
			if seen[k] {
				t.Fatalf("entry %q line %d stored twice", l.EntryID, l.Line)
			}
			seen[k] = true
			d, derr := time.Parse("2006-01-02", l.PostedOn)
			if l.Line < 1 || derr != nil || l.Period != monthly(d) || l.Account == "" || l.EntryID == "" {
				t.Fatalf("bad row %+v", l)
			}
		}
		for _, r := range rec.rejects {
			if strings.ContainsAny(r.Reason, "\r\n") || strings.ContainsAny(r.Location, "\r\n") || r.Location == "" || len(r.Raw) > maxRaw {
				t.Fatalf("bad reject %+v", r)
			}
		}

		accts := &recorder{}
		n := 0
		x, err = newFile(bytes.NewReader(data), name, nil)
		if err == nil {
			n, err = readAccounts(context.Background(), x, options(analysisType), accts)
		}
		if n != len(accts.accounts)+len(accts.rejects) {
			t.Fatalf("accounts: read %d, but %d stored and %d rejected (err %v)", n, len(accts.accounts), len(accts.rejects), err)
		}
		if err != nil && strings.ContainsAny(err.Error(), "\r\n") {
			t.Fatalf("accounts error is not one line: %q", err)
		}
		ids := map[string]bool{}
		for _, a := range accts.accounts {
			if a.Account == "" || ids[a.Account] {
				t.Fatalf("account %q empty or stored twice", a.Account)
			}
			ids[a.Account] = true
		}
	})
}
