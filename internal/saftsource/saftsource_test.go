package saftsource

import (
	"context"
	"encoding/xml"
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"github.com/costdrift/costdrift/internal/costdrift"
	"github.com/costdrift/costdrift/internal/money"
)

// Sources of the expected values in this file:
//   - The two example files in testdata/saft/ (see the README there) are
//     Skatteetaten's published SAF-T Financial examples. Their own control
//     totals (GeneralLedgerEntries NumberOfEntries, TotalDebit, TotalCredit)
//     are the outside check of what the reader adds up; every other value
//     from them is read by hand from the XML at the line number given.
//   - Facts of the trade (common practice): NOK has two decimals of minor
//     unit (ISO 4217), so 374000 NOK is 37400000 øre; in a signed amount
//     debit is positive and credit negative; a double-entry voucher
//     balances, so its signed lines add up to zero.
//   - The inline documents are small invented ledgers written for one case
//     each; their expected values are worked by hand beside them.

const (
	example120 = "../../testdata/saft/example-888888888-v1.20.xml" // 1.20 layout, n1: prefix, BOM, CRLF
	example130 = "../../testdata/saft/example-generated-v1.30.xml" // 1.30 layout, default namespace
)

var nok = money.Currency{Code: "NOK", Exponent: 2}

// monthly is the calendar-month period of a date.
func monthly(d time.Time) string { return d.Format("2006-01") }

func options(analysisType string) Options {
	return Options{Source: "saft", Currency: nok, Period: monthly, AnalysisType: analysisType}
}

// recorder is a costdrift.SourceWriter that keeps what it is given and can
// fail on a chosen call to test that readers stop.
type recorder struct {
	lines    []costdrift.LedgerLine
	accounts []costdrift.Account
	rejects  []costdrift.Reject
	calls    int
	failOn   int // the 1-based call that returns errWriter; 0 never
}

var errWriter = errors.New("store is full")

func (r *recorder) call() error {
	r.calls++
	if r.failOn > 0 && r.calls == r.failOn {
		return errWriter
	}
	return nil
}

func (r *recorder) LedgerLine(l costdrift.LedgerLine) error {
	if err := r.call(); err != nil {
		return err
	}
	r.lines = append(r.lines, l)
	return nil
}

func (r *recorder) Activity(costdrift.ActivityValue) error {
	return errors.New("a SAF-T reader delivers no activity")
}

func (r *recorder) Account(a costdrift.Account) error {
	if err := r.call(); err != nil {
		return err
	}
	r.accounts = append(r.accounts, a)
	return nil
}

func (r *recorder) Reject(x costdrift.Reject) error {
	if err := r.call(); err != nil {
		return err
	}
	r.rejects = append(r.rejects, x)
	return nil
}

// rows returns the stored rows of one entry.
func (r *recorder) rows(entry string) []costdrift.LedgerLine {
	var out []costdrift.LedgerLine
	for _, l := range r.lines {
		if l.EntryID == entry {
			out = append(out, l)
		}
	}
	return out
}

// writeFile writes content to a fresh file and returns its path.
func writeFile(t testing.TB, name, content string) string {
	t.Helper()
	path := filepath.Join(t.TempDir(), name)
	if err := os.WriteFile(path, []byte(content), 0o600); err != nil {
		t.Fatal(err)
	}
	return path
}

// document is a small AuditFile in the default namespace with the given
// control totals around the given journals.
func document(entries int, debit, credit, journals string) string {
	return fmt.Sprintf(`<?xml version="1.0" encoding="UTF-8"?>
<AuditFile xmlns="%s">
  <Header><AuditFileVersion>1.30</AuditFileVersion><DefaultCurrencyCode>NOK</DefaultCurrencyCode></Header>
  <GeneralLedgerEntries>
    <NumberOfEntries>%d</NumberOfEntries><TotalDebit>%s</TotalDebit><TotalCredit>%s</TotalCredit>
%s  </GeneralLedgerEntries>
</AuditFile>
`, Namespace, entries, debit, credit, journals)
}

func journalXML(id string, transactions ...string) string {
	return "    <Journal><JournalID>" + id + "</JournalID><Description>d</Description><Type>GL</Type>\n" +
		strings.Join(transactions, "") + "    </Journal>\n"
}

func transactionXML(id, date string, lines ...string) string {
	return transactionInYear(id, "<PeriodYear>2025</PeriodYear>", date, lines...)
}

// transactionInYear writes a Transaction with the given PeriodYear element
// (or none, or anything else in its place).
func transactionInYear(id, periodYear, date string, lines ...string) string {
	return "      <Transaction><TransactionID>" + id + "</TransactionID><Period>1</Period>" + periodYear +
		"<TransactionDate>" + date + "</TransactionDate><Description>voucher " + id + "</Description>" +
		"<SystemEntryDate>" + date + "</SystemEntryDate><GLPostingDate>" + date + "</GLPostingDate>\n" +
		strings.Join(lines, "") + "      </Transaction>\n"
}

// lineXML writes a Line; side is "Debit" or "Credit"; inner goes after
// AccountID (Analysis elements).
func lineElem(record, account, inner, side, amount string) string {
	return "        <Line><RecordID>" + record + "</RecordID><AccountID>" + account + "</AccountID>" + inner +
		"<Description>line " + record + "</Description><" + side + "Amount><Amount>" + amount + "</Amount></" + side + "Amount></Line>\n"
}

func analysis(typ, id, amountElem, amount string) string {
	s := "<Analysis><AnalysisType>" + typ + "</AnalysisType><AnalysisID>" + id + "</AnalysisID>"
	if amountElem != "" {
		s += "<" + amountElem + "><Amount>" + amount + "</Amount></" + amountElem + ">"
	}
	return s + "</Analysis>"
}

func mustReadLedger(t *testing.T, path string, opt Options) (*recorder, Totals) {
	t.Helper()
	rec := &recorder{}
	tot, err := ReadLedger(context.Background(), path, filepath.Base(path), opt, rec)
	if err != nil {
		t.Fatalf("ReadLedger: %v", err)
	}
	if tot.Rows != len(rec.lines)+len(rec.rejects) {
		t.Errorf("Rows = %d, but %d lines and %d rejects were written", tot.Rows, len(rec.lines), len(rec.rejects))
	}
	return rec, tot
}

// The examples' own control totals are the outside check: every
// transaction is counted and every debit and credit adds up to the figure
// the file declares.
func TestExamplesMatchTheirControlTotals(t *testing.T) {
	tests := []struct {
		name             string
		path             string
		lines            int // Line elements: `grep -c '<n1:Line>'` and `grep -c '<Line>'` on the files (170 also in SUMMARY.md)
		entries          int64
		debitMinor       int64
		creditMinor      int64
		version          string
		analysisType     string
		rowsByDepartment int // rows with departments as cost centres: 170 + 14 parts (8 lines split in 2 or 3); see TestDepartmentsBecomeCostCentres
	}{
		// GeneralLedgerEntries at lines 1093-1095: 53, 9487049.35, 9487049.35; AuditFileVersion 1.0 at line 4.
		{"888888888 v1.20", example120, 170, 53, 948704935, 948704935, "1.0", "A", 184},
		// GeneralLedgerEntries at lines 368-370: 3, 37500.00, 37500.00; AuditFileVersion 1.30 at line 4.
		{"generated v1.30", example130, 8, 3, 3750000, 3750000, "1.30", "A", 8},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			rec, tot := mustReadLedger(t, tc.path, options(""))
			if tot.DeclaredEntries != tc.entries || tot.DeclaredDebitMinor != tc.debitMinor || tot.DeclaredCreditMinor != tc.creditMinor {
				t.Errorf("declared = %d, %d, %d; want %d, %d, %d as written in the file", tot.DeclaredEntries,
					tot.DeclaredDebitMinor, tot.DeclaredCreditMinor, tc.entries, tc.debitMinor, tc.creditMinor)
			}
			if int64(tot.Entries) != tc.entries || tot.DebitMinor != tc.debitMinor || tot.CreditMinor != tc.creditMinor {
				t.Errorf("read %d entries, debit %d, credit %d; the file declares %d, %d, %d",
					tot.Entries, tot.DebitMinor, tot.CreditMinor, tc.entries, tc.debitMinor, tc.creditMinor)
			}
			if err := tot.Check(); err != nil {
				t.Errorf("Check: %v", err)
			}
			if tot.Lines != tc.lines || tot.Rows != tc.lines || len(rec.lines) != tc.lines || len(rec.rejects) != 0 {
				t.Errorf("lines %d, rows %d, stored %d, rejected %d; want %d lines all stored",
					tot.Lines, tot.Rows, len(rec.lines), len(rec.rejects), tc.lines)
			}
			if tot.Version != tc.version {
				t.Errorf("Version = %q, want %q", tot.Version, tc.version)
			}
			// What is stored agrees with the declared totals too: the
			// positive amounts are the debits, the negative ones the
			// credits (common practice: debit positive).
			var debit, credit int64
			for _, l := range rec.lines {
				if l.AmountMinor > 0 {
					debit += l.AmountMinor
				} else {
					credit -= l.AmountMinor
				}
			}
			if debit != tc.debitMinor || credit != tc.creditMinor {
				t.Errorf("stored debits %d and credits %d, want %d and %d", debit, credit, tc.debitMinor, tc.creditMinor)
			}

			// Split between departments, the rows still add up to the
			// declared totals, and every voucher still balances (common
			// practice; SUMMARY.md §10 says both examples balance).
			rec, tot = mustReadLedger(t, tc.path, options(tc.analysisType))
			if tot.Rows != tc.rowsByDepartment || len(rec.rejects) != 0 {
				t.Errorf("with analysis type %s: %d rows, %d rejects; want %d rows", tc.analysisType, tot.Rows, len(rec.rejects), tc.rowsByDepartment)
			}
			debit, credit = 0, 0
			perEntry := map[string]int64{}
			for _, l := range rec.lines {
				perEntry[l.EntryID] += l.AmountMinor
				if l.AmountMinor > 0 {
					debit += l.AmountMinor
				} else {
					credit -= l.AmountMinor
				}
			}
			if debit != tc.debitMinor || credit != tc.creditMinor {
				t.Errorf("split rows: debits %d and credits %d, want %d and %d", debit, credit, tc.debitMinor, tc.creditMinor)
			}
			if int64(len(perEntry)) != tc.entries {
				t.Errorf("%d entries stored, want %d", len(perEntry), tc.entries)
			}
			for id, sum := range perEntry {
				if sum != 0 {
					t.Errorf("entry %s adds up to %d, want 0", id, sum)
				}
			}
		})
	}
}

// Departments (AnalysisType "A", "Avdeling" in the 888888888 file's
// AnalysisTypeTable) become cost centres. Each expected row is read by hand
// from the XML at the line given.
func TestDepartmentsBecomeCostCentres(t *testing.T) {
	rec, _ := mustReadLedger(t, example120, options("A"))
	type row struct {
		line       int
		account    string
		costCenter string
		amount     int64
	}
	tests := []struct {
		name     string
		entry    string
		postedOn string
		period   string
		want     []row
	}{
		// Line 1101: voucher 1001 of 2017-01-04. Its first line, account 4000,
		// carries A 102 without an amount and P 202 10000 (project, not
		// chosen), debit 10000: the whole line is department 102. The
		// supplier line (2400, credit 12500) and the VAT line (2710, debit
		// 2500) have no analysis.
		{"one department without an amount", "2017/123ABC/1001", "2017-01-04", "2017-01", []row{
			{1, "4000", "102", 1000000}, {2, "2400", "", -1250000}, {3, "2710", "", 250000}}},
		// Line 1479: voucher 1007 of 2017-01-12, payroll 374000 on 5000 split
		// A 100 97800, A 101 77200, A 102 199000; paid from 1920 (credit 374000).
		{"payroll split between three departments", "2017/123ABC/1007", "2017-01-12", "2017-01", []row{
			{1, "5000", "100", 9780000}, {2, "5000", "101", 7720000}, {3, "5000", "102", 19900000}, {4, "1920", "", -37400000}}},
		// Line 1894: voucher 1014, TransactionDate 2017-01-31, GLPostingDate
		// 2017-02-01, Period 01: the voucher date keeps it in January.
		// Machine rent 6400 debit 16500 with A 102 16500.
		{"voucher date, not posting date", "2017/123ABC/1014", "2017-01-31", "2017-01", []row{
			{1, "6400", "102", 1650000}}},
		// Line 2138: voucher 1018, TransactionDate 2017-02-08, GLPostingDate
		// 2017-01-08, Period 02. Work clothes 7195 debit 699.00, A 101 699.00.
		{"voucher date after the posting date", "2017/123ABC/1018", "2017-02-08", "2017-02", []row{
			{1, "7195", "101", 69900}}},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			got := rec.rows(tc.entry)
			if len(got) < len(tc.want) {
				t.Fatalf("entry %s has %d rows, want at least %d: %+v", tc.entry, len(got), len(tc.want), got)
			}
			for i, w := range tc.want {
				g := got[i]
				if g.Line != w.line || g.Account != w.account || g.CostCenter != w.costCenter || g.AmountMinor != w.amount ||
					g.PostedOn != tc.postedOn || g.Period != tc.period || g.Source != "saft" {
					t.Errorf("row %d = %+v, want line %d, account %s, cost centre %q, amount %d, posted %s in %s",
						i, g, w.line, w.account, w.costCenter, w.amount, tc.postedOn, tc.period)
				}
			}
		})
	}
	// Line 1344: voucher 1005, sales 3000 credit 352000 split between
	// projects P 200 22000, P 203 251000, P 90 79000. 1.20 analysis amounts
	// are unsigned and take the line's side, so the parts are credits.
	rec, _ = mustReadLedger(t, example120, options("P"))
	got := rec.rows("2017/123ABC/1005")
	want := []struct {
		cc     string
		amount int64
	}{{"200", -2200000}, {"203", -25100000}, {"90", -7900000}}
	if len(got) < 3 {
		t.Fatalf("entry 1005 has %d rows", len(got))
	}
	for i, w := range want {
		if got[i].Account != "3000" || got[i].CostCenter != w.cc || got[i].AmountMinor != w.amount || got[i].Line != i+1 {
			t.Errorf("row %d = %+v, want 3000 in %s for %d", i, got[i], w.cc, w.amount)
		}
	}
	// 1.30: line 376 ff., voucher A1001 line 1, 4000 debit 10000.00 with
	// P 2000 DebitAnalysisAmount 10000.00. Description from the line (393).
	rec, _ = mustReadLedger(t, example130, options("P"))
	if g := rec.rows("2025/A001/A1001"); len(g) != 3 || g[0].CostCenter != "2000" || g[0].AmountMinor != 1000000 ||
		g[0].Description != "Purchase of goods" || g[1].CostCenter != "" {
		t.Errorf("A001/A1001 = %+v", g)
	}
}

// The stored period is the file's own accounting period: for every
// voucher of the 888888888 example, the month of TransactionDate is
// PeriodYear-Period as the file declares it. This is what decides between
// TransactionDate and GLPostingDate (vouchers 1014 and 1018 differ).
func TestPeriodIsTheFilesAccountingPeriod(t *testing.T) {
	// An independent read of the whole file with encoding/xml.Unmarshal.
	var file struct {
		Journals []struct {
			ID           string `xml:"JournalID"`
			Transactions []struct {
				ID         string `xml:"TransactionID"`
				Period     int    `xml:"Period"`
				PeriodYear int    `xml:"PeriodYear"`
				GLPosting  string `xml:"GLPostingDate"`
			} `xml:"Transaction"`
		} `xml:"GeneralLedgerEntries>Journal"`
	}
	data, err := os.ReadFile(example120)
	if err != nil {
		t.Fatal(err)
	}
	if err := xml.Unmarshal([]byte(strings.TrimPrefix(string(data), "\ufeff")), &file); err != nil {
		t.Fatal(err)
	}
	want := map[string]string{}
	differs := 0
	for _, j := range file.Journals {
		for _, tx := range j.Transactions {
			p := fmt.Sprintf("%04d-%02d", tx.PeriodYear, tx.Period)
			want[fmt.Sprint(tx.PeriodYear)+"/"+j.ID+"/"+tx.ID] = p
			if tx.GLPosting[:7] != p {
				differs++
			}
		}
	}
	if len(want) != 53 || differs != 2 {
		t.Fatalf("independent read: %d vouchers, %d with GLPostingDate in another month; want 53 and 2 (1014, 1018)", len(want), differs)
	}
	rec, _ := mustReadLedger(t, example120, options(""))
	for _, l := range rec.lines {
		if l.Period != want[l.EntryID] {
			t.Errorf("%s line %d: period %s, the file says %s", l.EntryID, l.Line, l.Period, want[l.EntryID])
		}
	}
}

func TestAccounts(t *testing.T) {
	tests := []struct {
		name  string
		path  string
		count int // `grep -c '<n1:Account>'` / `grep -c '<Account>'`
		want  []costdrift.Account
	}{
		// 1.20: StandardAccountID is the group (lines 47-50, 182-185, 236-239).
		{"888888888 v1.20", example120, 22, []costdrift.Account{
			{Source: "saft", Account: "1250", Name: "Inventar", Type: "GL", Group: "12"},
			{Source: "saft", Account: "5000", Name: "Lønn til ansatt", Type: "GL", Group: "50"},
			{Source: "saft", Account: "7320", Name: "Reklameannonser", Type: "GL", Group: "73"},
		}},
		// 1.30: GroupingCode is the group, not the account number (lines 115-118, 145-148).
		{"generated v1.30", example130, 7, []costdrift.Account{
			{Source: "saft", Account: "2700", Name: "Output VAT, high rate", Type: "GL", Group: "2740"},
			{Source: "saft", Account: "4000", Name: "Purchase of raw materials and semi-manufactures, high rate", Type: "GL", Group: "4005"},
		}},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			rec := &recorder{}
			n, err := ReadAccounts(context.Background(), tc.path, "x.xml", options(""), rec)
			if err != nil {
				t.Fatal(err)
			}
			if n != tc.count || len(rec.accounts) != tc.count || len(rec.rejects) != 0 {
				t.Errorf("read %d, stored %d, rejected %d; want %d", n, len(rec.accounts), len(rec.rejects), tc.count)
			}
			byID := map[string]costdrift.Account{}
			for _, a := range rec.accounts {
				byID[a.Account] = a
			}
			for _, w := range tc.want {
				if got := byID[w.Account]; got != w {
					t.Errorf("account %s = %+v, want %+v", w.Account, got, w)
				}
			}
		})
	}
}

func TestAccountRejects(t *testing.T) {
	doc := `<AuditFile xmlns="` + Namespace + `"><Header/><MasterFiles><GeneralLedgerAccounts>
<Account><AccountID>6100</AccountID><AccountDescription>Rent</AccountDescription><GroupingCategory>annenDriftskostnad</GroupingCategory><GroupingCode>6300</GroupingCode><AccountType>GL</AccountType></Account>
<Account><AccountDescription>No number</AccountDescription><AccountType>GL</AccountType></Account>
<Account><AccountID>6100</AccountID><AccountDescription>Rent again</AccountDescription><AccountType>GL</AccountType></Account>
</GeneralLedgerAccounts></MasterFiles><GeneralLedgerEntries><broken></AuditFile>`
	rec := &recorder{}
	n, err := ReadAccounts(context.Background(), writeFile(t, "coa.xml", doc), "coa.xml", options(""), rec)
	// The ledger part is broken, but the accounts role stops after MasterFiles.
	if err != nil {
		t.Fatal(err)
	}
	if n != 3 || len(rec.accounts) != 1 || len(rec.rejects) != 2 {
		t.Fatalf("read %d, stored %+v, rejected %+v", n, rec.accounts, rec.rejects)
	}
	if a := rec.accounts[0]; a.Account != "6100" || a.Name != "Rent" || a.Group != "6300" {
		t.Errorf("account = %+v", a)
	}
	want := []costdrift.Reject{
		{Source: "saft", Location: "coa.xml:GeneralLedgerAccounts/Account 2", Reason: "missing AccountID",
			Raw: "<Account><AccountDescription>No number</AccountDescription><AccountType>GL</AccountType></Account>"},
		{Source: "saft", Location: "coa.xml:GeneralLedgerAccounts/Account 3", Reason: "account 6100 is listed a second time (first as Account 1)",
			Raw: "<Account><AccountID>6100</AccountID><AccountDescription>Rent again</AccountDescription><AccountType>GL</AccountType></Account>"},
	}
	for i, w := range want {
		if rec.rejects[i] != w {
			t.Errorf("reject %d = %+v\nwant %+v", i, rec.rejects[i], w)
		}
	}
	_, err = ReadAccounts(context.Background(), writeFile(t, "gl.xml", document(0, "0", "0", "")), "gl.xml", options(""), &recorder{})
	if err == nil || err.Error() != "gl.xml has no MasterFiles/GeneralLedgerAccounts: it holds no chart of accounts" {
		t.Errorf("no chart of accounts: %v", err)
	}
}

// The same ledger in a default namespace, under two different prefixes
// and in no namespace reads the same; an element with the right local name
// in another namespace is not read.
func TestNamespaceNotPrefix(t *testing.T) {
	body := `<H:Header><H:DefaultCurrencyCode>NOK</H:DefaultCurrencyCode></H:Header>
<H:GeneralLedgerEntries><H:NumberOfEntries>1</H:NumberOfEntries><H:TotalDebit>12.50</H:TotalDebit><H:TotalCredit>12.50</H:TotalCredit>
<H:Journal><H:JournalID>GL</H:JournalID><H:Transaction><H:TransactionID>7</H:TransactionID><H:PeriodYear>2025</H:PeriodYear><H:TransactionDate>2025-03-31</H:TransactionDate><H:Description>Taxi</H:Description>
<H:Line><H:RecordID>1</H:RecordID><H:AccountID>7140</H:AccountID><H:Description/><H:DebitAmount><H:Amount>12.50</H:Amount></H:DebitAmount></H:Line>
<H:Line><H:RecordID>2</H:RecordID><H:AccountID>1920</H:AccountID><H:Description>Bank</H:Description><H:CreditAmount><H:Amount>12.50</H:Amount></H:CreditAmount></H:Line>
<Line xmlns="urn:example:extension"><AccountID>9999</AccountID><DebitAmount><Amount>1000</Amount></DebitAmount></Line>
</H:Transaction></H:Journal></H:GeneralLedgerEntries>`
	forms := map[string]string{
		"default namespace": `<AuditFile xmlns="` + Namespace + `">` + strings.ReplaceAll(body, "H:", "") + `</AuditFile>`,
		"prefix n1":         `<n1:AuditFile xmlns:n1="` + Namespace + `">` + strings.ReplaceAll(body, "H:", "n1:") + `</n1:AuditFile>`,
		"prefix saf":        `<saf:AuditFile xmlns:saf="` + Namespace + `">` + strings.ReplaceAll(body, "H:", "saf:") + `</saf:AuditFile>`,
		"no namespace":      `<AuditFile>` + strings.ReplaceAll(body, "H:", "") + `</AuditFile>`,
	}
	want := []costdrift.LedgerLine{
		// The first line's Description is empty: the transaction's is used.
		{Source: "saft", EntryID: "2025/GL/7", Line: 1, PostedOn: "2025-03-31", Period: "2025-03", Account: "7140", AmountMinor: 1250, Description: "Taxi"},
		{Source: "saft", EntryID: "2025/GL/7", Line: 2, PostedOn: "2025-03-31", Period: "2025-03", Account: "1920", AmountMinor: -1250, Description: "Bank"},
	}
	for name, doc := range forms {
		t.Run(name, func(t *testing.T) {
			rec, tot := mustReadLedger(t, writeFile(t, "gl.xml", doc), options(""))
			if err := tot.Check(); err != nil {
				t.Error(err)
			}
			if len(rec.lines) != 2 || len(rec.rejects) != 0 || rec.lines[0] != want[0] || rec.lines[1] != want[1] {
				t.Errorf("got %+v %+v\nwant %+v", rec.lines, rec.rejects, want)
			}
		})
	}
}

// A BOM and CRLF line ends are read, and a reject's raw text is the Line
// element exactly as it stands in the file.
func TestBOMAndCRLF(t *testing.T) {
	bad := lineElem("2", "", "", "Credit", "80.00")
	doc := "\ufeff" + strings.ReplaceAll(document(1, "80.00", "80.00", journalXML("GL",
		transactionXML("1", "2025-01-15", lineElem("1", "6100", "", "Debit", "80.00"), bad))), "\n", "\r\n")
	rec, tot := mustReadLedger(t, writeFile(t, "gl.xml", doc), options(""))
	if len(rec.lines) != 1 || rec.lines[0].AmountMinor != 8000 || len(rec.rejects) != 1 {
		t.Fatalf("lines %+v rejects %+v", rec.lines, rec.rejects)
	}
	if got, want := rec.rejects[0].Raw, strings.TrimSpace(bad); got != want {
		t.Errorf("raw = %q, want %q", got, want)
	}
	if err := tot.Check(); err != nil { // the rejected line's credit still counts
		t.Error(err)
	}
}

// Bad lines become rejects with a location and a one-line reason; the
// other lines of the file load, and the rejected lines' amounts still
// count in the totals.
func TestLineRejects(t *testing.T) {
	good := lineElem("1", "6100", "", "Debit", "50.00")
	tests := []struct {
		name         string
		bad          string // the second line of voucher 2 in journal GL
		date         string // voucher 2's TransactionDate; "" for 2025-02-10
		wholeVoucher bool   // the reason rejects both lines of voucher 2
		reason       string
	}{
		{"missing account", lineElem("2", "", "", "Credit", "50.00"), "", false, "missing AccountID"},
		{"both debit and credit", strings.Replace(lineElem("2", "2400", "", "Credit", "50.00"), "</Line>", "<DebitAmount><Amount>1</Amount></DebitAmount></Line>", 1), "", false,
			"has both DebitAmount and CreditAmount; a line has one"},
		{"neither debit nor credit", "<Line><RecordID>2</RecordID><AccountID>2400</AccountID><Description>x</Description></Line>", "", false,
			"has neither DebitAmount nor CreditAmount"},
		{"decimal comma", lineElem("2", "2400", "", "Credit", "50,00"), "", false, `bad CreditAmount: amount "50,00" is not a decimal number`},
		{"too many decimals", lineElem("2", "2400", "", "Credit", "50.005"), "", false,
			`bad CreditAmount: amount "50.005": more decimals than the currency's minor unit (NOK has 2)`},
		{"exponent", lineElem("2", "2400", "", "Credit", "5e1"), "", false, `bad CreditAmount: amount "5e1" is not a decimal number`},
		{"amount without Amount", "<Line><AccountID>2400</AccountID><CreditAmount><CurrencyAmount>5</CurrencyAmount></CreditAmount></Line>", "", false,
			"CreditAmount has 0 Amount elements; it has one"},
		{"bad date", lineElem("2", "2400", "", "Credit", "50.00"), "2025-02-30", true, `bad TransactionDate: date "2025-02-30" is not YYYY-MM-DD`},
		{"date and time", lineElem("2", "2400", "", "Credit", "50.00"), "2025-02-10T12:00:00", true, `bad TransactionDate: date "2025-02-10T12:00:00" is not YYYY-MM-DD`},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			date := "2025-02-10"
			if tc.date != "" {
				date = tc.date
			}
			doc := document(2, "150.00", "150.00", journalXML("GL",
				transactionXML("1", "2025-02-03", lineElem("1", "6100", "", "Debit", "100.00"), lineElem("2", "2400", "", "Credit", "100.00")),
				transactionXML("2", date, good, tc.bad)))
			rec, tot := mustReadLedger(t, writeFile(t, "gl.xml", doc), options(""))
			location := "gl.xml:Journal GL/Transaction 2/Line 2"
			wantStored := 3
			if tc.wholeVoucher {
				wantStored = 2
			}
			if len(rec.lines) != wantStored {
				t.Errorf("stored %d lines, want %d: %+v", len(rec.lines), wantStored, rec.lines)
			}
			if len(rec.rejects) != 4-wantStored {
				t.Fatalf("rejects %+v, want %d", rec.rejects, 4-wantStored)
			}
			r := rec.rejects[len(rec.rejects)-1]
			if r.Location != location || r.Reason != tc.reason || r.Source != "saft" || !strings.HasPrefix(r.Raw, "<Line>") || !strings.HasSuffix(r.Raw, "</Line>") {
				t.Errorf("reject = %+v\nwant location %q, reason %q", r, location, tc.reason)
			}
			if strings.ContainsAny(r.Reason, "\r\n") {
				t.Errorf("reason is not one line: %q", r.Reason)
			}
			if tot.Lines != 4 || tot.Entries != 2 {
				t.Errorf("lines %d, entries %d", tot.Lines, tot.Entries)
			}
		})
	}
}

// An unreadable amount cannot be added up, so the control totals fail and
// say where the amount is.
func TestUnreadableAmountFailsTheTotals(t *testing.T) {
	doc := document(1, "100.00", "100.00", journalXML("GL",
		transactionXML("1", "2025-02-03", lineElem("1", "6100", "", "Debit", "100.00"), lineElem("2", "2400", "", "Credit", "1OO.00"))))
	rec, tot := mustReadLedger(t, writeFile(t, "gl.xml", doc), options(""))
	if len(rec.rejects) != 1 || tot.UnreadableAmounts != 1 {
		t.Fatalf("rejects %+v, unreadable %d", rec.rejects, tot.UnreadableAmounts)
	}
	want := "control totals do not match, the file is incomplete or damaged: TotalCredit declares 100.00, the lines' credits add up to 0.00" +
		" (1 line amount(s) could not be read, the first at gl.xml:Journal GL/Transaction 1/Line 2)"
	if err := tot.Check(); err == nil || err.Error() != want {
		t.Errorf("Check = %v\nwant %s", err, want)
	}
}

// Voucher numbers repeat across journals and fiscal years: the entry ID
// keeps them apart. A voucher number repeated within one journal and year
// would overwrite the first voucher's lines in the store, so its lines are
// rejected; so are the lines of a voucher without a usable PeriodYear.
func TestEntryIDs(t *testing.T) {
	pair := []string{lineElem("1", "6100", "", "Debit", "10.00"), lineElem("2", "1920", "", "Credit", "10.00")}
	doc := document(8, "80.00", "80.00",
		journalXML("GL", transactionXML("1", "2025-01-10", pair...), transactionXML("1", "2025-01-11", pair...),
			transactionInYear("1", "<PeriodYear>2024</PeriodYear>", "2024-01-10", pair...))+
			journalXML("BANK", transactionXML("1", "2025-01-12", pair...))+
			journalXML("", transactionXML("2", "2025-01-13", pair...))+
			journalXML("GL2", transactionInYear("3", "", "2025-01-14", pair...),
				transactionInYear("4", "<PeriodYear>1066</PeriodYear>", "2025-01-15", pair...),
				transactionInYear("5", "", "2025-01-16", pair[0], "<PeriodYear>2025</PeriodYear>", pair[1])))
	rec, tot := mustReadLedger(t, writeFile(t, "gl.xml", doc), options(""))
	if err := tot.Check(); err != nil {
		t.Error(err)
	}
	if len(rec.rows("2025/GL/1")) != 2 || len(rec.rows("2024/GL/1")) != 2 || len(rec.rows("2025/BANK/1")) != 2 || len(rec.lines) != 6 {
		t.Errorf("stored %+v", rec.lines)
	}
	const dup = "entry 2025/GL/1 appears a second time in the file; its lines would overwrite the first one's"
	const noJournal = "its Journal has no JournalID (or it comes after the transactions)"
	const noYear = "its Transaction has no PeriodYear (or it comes after the lines)"
	wantRejects := []struct{ location, reason string }{
		{"gl.xml:Journal GL/Transaction 1/Line 1", dup},
		{"gl.xml:Journal GL/Transaction 1/Line 2", dup},
		{"gl.xml:Journal #3/Transaction 2/Line 1", noJournal},
		{"gl.xml:Journal #3/Transaction 2/Line 2", noJournal},
		{"gl.xml:Journal GL2/Transaction 3/Line 1", noYear},
		{"gl.xml:Journal GL2/Transaction 3/Line 2", noYear},
		{"gl.xml:Journal GL2/Transaction 4/Line 1", `bad PeriodYear "1066": want a year from 1970 to 2100`},
		{"gl.xml:Journal GL2/Transaction 4/Line 2", `bad PeriodYear "1066": want a year from 1970 to 2100`},
		// A PeriodYear after the first line is not taken for the second.
		{"gl.xml:Journal GL2/Transaction 5/Line 1", noYear},
		{"gl.xml:Journal GL2/Transaction 5/Line 2", noYear},
	}
	if len(rec.rejects) != len(wantRejects) {
		t.Fatalf("rejects %+v", rec.rejects)
	}
	for i, w := range wantRejects {
		if rec.rejects[i].Location != w.location || rec.rejects[i].Reason != w.reason {
			t.Errorf("reject %d = %+v, want %s: %s", i, rec.rejects[i], w.location, w.reason)
		}
	}
}

// How a line is split between cost centres; amounts worked by hand.
func TestAllocation(t *testing.T) {
	type row struct {
		cc     string
		amount int64
	}
	tests := []struct {
		name     string
		analysis string
		side     string
		amount   string
		want     []row
		reason   string
	}{
		{"no analysis", "", "Debit", "100.00", []row{{"", 10000}}, ""},
		{"other type only", analysis("P", "9", "DebitAnalysisAmount", "100.00"), "Debit", "100.00", []row{{"", 10000}}, ""},
		{"one without amount", analysis("A", "WELD", "", ""), "Debit", "100.00", []row{{"WELD", 10000}}, ""},
		{"partial: the rest is unassigned", analysis("A", "WELD", "DebitAnalysisAmount", "60.00"), "Debit", "100.00",
			[]row{{"WELD", 6000}, {"", 4000}}, ""},
		{"one open entry takes the rest", analysis("A", "WELD", "DebitAnalysisAmount", "60.00") + analysis("A", "PAINT", "", ""), "Debit", "100.00",
			[]row{{"WELD", 6000}, {"PAINT", 4000}}, ""},
		{"1.30 credit allocations", analysis("A", "WELD", "CreditAnalysisAmount", "30.00") + analysis("A", "PAINT", "CreditAnalysisAmount", "70.00"), "Credit", "100.00",
			[]row{{"WELD", -3000}, {"PAINT", -7000}}, ""},
		{"1.20 unsigned on a credit line", analysis("A", "WELD", "AnalysisAmount", "30.00") + analysis("A", "PAINT", "AnalysisAmount", "70.00"), "Credit", "100.00",
			[]row{{"WELD", -3000}, {"PAINT", -7000}}, ""},
		{"same cost centre twice is merged", analysis("A", "WELD", "AnalysisAmount", "30.00") + analysis("A", "WELD", "AnalysisAmount", "70.00"), "Debit", "100.00",
			[]row{{"WELD", 10000}}, ""},
		{"a part of zero is left out", analysis("A", "WELD", "AnalysisAmount", "100") + analysis("A", "PAINT", "AnalysisAmount", "0"), "Debit", "100.00",
			[]row{{"WELD", 10000}}, ""},
		{"a line of zero keeps its cost centre", analysis("A", "WELD", "", ""), "Debit", "0.00", []row{{"WELD", 0}}, ""},
		{"two without amount", analysis("A", "WELD", "", "") + analysis("A", "PAINT", "", ""), "Debit", "100.00", nil,
			"2 Analysis entries of type A have no amount, so the line cannot be split between them"},
		{"more than the line", analysis("A", "WELD", "DebitAnalysisAmount", "80.00") + analysis("A", "PAINT", "DebitAnalysisAmount", "30.00"), "Debit", "100.00", nil,
			"Analysis amounts of type A add up to 110.00, more than the line's 100.00"},
		{"against the line's side", analysis("A", "WELD", "CreditAnalysisAmount", "20.00"), "Debit", "100.00", nil,
			"Analysis A WELD is -20.00, against the line's 100.00"},
		{"bad analysis amount", analysis("A", "WELD", "DebitAnalysisAmount", "1,5"), "Debit", "100.00", nil,
			`Analysis A WELD: bad amount: amount "1,5" is not a decimal number`},
		{"two amounts", strings.Replace(analysis("A", "WELD", "DebitAnalysisAmount", "1"), "</Analysis>", "<AnalysisAmount><Amount>1</Amount></AnalysisAmount></Analysis>", 1),
			"Debit", "100.00", nil, "Analysis A WELD: has more than one amount"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			doc := document(1, "0", "0", journalXML("GL", transactionXML("1", "2025-06-30", lineElem("1", "6100", tc.analysis, tc.side, tc.amount))))
			rec, tot := mustReadLedger(t, writeFile(t, "gl.xml", doc), options("A"))
			if tc.reason != "" {
				if len(rec.rejects) != 1 || rec.rejects[0].Reason != tc.reason || len(rec.lines) != 0 {
					t.Errorf("got %+v %+v, want reject %q", rec.lines, rec.rejects, tc.reason)
				}
				return
			}
			if len(rec.lines) != len(tc.want) || tot.Rows != len(tc.want) {
				t.Fatalf("got %+v %+v, want %v", rec.lines, rec.rejects, tc.want)
			}
			for i, w := range tc.want {
				if g := rec.lines[i]; g.CostCenter != w.cc || g.AmountMinor != w.amount || g.Line != i+1 || g.Account != "6100" {
					t.Errorf("row %d = %+v, want %q %d", i, g, w.cc, w.amount)
				}
			}
		})
	}
}

// A line in a foreign currency is stored at its Amount, which SAF-T writes
// in the default currency; CurrencyAmount is the foreign original
// (SUMMARY.md §6: CurrencyAmount x ExchangeRate = Amount).
func TestForeignCurrencyLineUsesAmount(t *testing.T) {
	line := `<Line><RecordID>1</RecordID><AccountID>4000</AccountID><Description>Imported parts</Description>
<DebitAmount><Amount>1150.00</Amount><CurrencyCode>EUR</CurrencyCode><CurrencyAmount>100.00</CurrencyAmount><ExchangeRate>11.5</ExchangeRate></DebitAmount></Line>`
	doc := document(1, "1150.00", "0", journalXML("GL", transactionXML("9", "2025-04-02", line)))
	rec, tot := mustReadLedger(t, writeFile(t, "gl.xml", doc), options(""))
	if len(rec.lines) != 1 || rec.lines[0].AmountMinor != 115000 { // 1150.00 NOK in øre
		t.Errorf("got %+v", rec.lines)
	}
	if err := tot.Check(); err != nil {
		t.Error(err)
	}
}

// When the file holds fewer vouchers than it declares (an export that
// stopped early but closed its tags), Check names the differences. The
// figures: voucher 1007 (payroll, 374000 debit and credit, lines 1478-1527)
// is cut out of the 888888888 example, so 53 - 1 = 52 entries and
// 9487049.35 - 374000 = 9113049.35 each way.
func TestCheckFindsAMissingVoucher(t *testing.T) {
	data, err := os.ReadFile(example120)
	if err != nil {
		t.Fatal(err)
	}
	s := string(data)
	start := strings.Index(s, "<n1:Transaction>\r\n\t\t\t\t<n1:TransactionID>1007<")
	end := strings.Index(s, "<n1:Transaction>\r\n\t\t\t\t<n1:TransactionID>1008<")
	if start < 0 || end < start {
		t.Fatal("voucher 1007 not found in the example")
	}
	rec, tot := mustReadLedger(t, writeFile(t, "gl.xml", s[:start]+s[end:]), options(""))
	if len(rec.lines) != 168 {
		t.Errorf("stored %d lines, want 170 - 2", len(rec.lines))
	}
	want := "control totals do not match, the file is incomplete or damaged: NumberOfEntries declares 53, the file holds 52 transactions; " +
		"TotalDebit declares 9487049.35, the lines' debits add up to 9113049.35; TotalCredit declares 9487049.35, the lines' credits add up to 9113049.35"
	if err := tot.Check(); err == nil || err.Error() != want {
		t.Errorf("Check = %v\nwant %s", err, want)
	}
}

// Whole-file problems are returned errors of one line; nothing is written
// for a file refused before its first line.
func TestWholeFileErrors(t *testing.T) {
	example, err := os.ReadFile(example120)
	if err != nil {
		t.Fatal(err)
	}
	small := document(0, "0", "0", "")
	tests := []struct {
		name    string
		content string
		want    string // the whole message, or a part of it when partial
		partial bool
	}{
		{"empty file", "", "gl.xml is empty: expected a SAF-T Financial XML file", false},
		{"blank file", "\ufeff \r\n\t\r\n", "gl.xml is empty: expected a SAF-T Financial XML file", false},
		{"not XML", "Bilag;Konto;Beløp\n1;6100;100\n", "gl.xml is not XML: it starts with text, not an element", false},
		{"binary", "\x00\x01\x02PK\x03\x04", "gl.xml is not XML: line 1: ", true},
		{"truncated", string(example[:100000]), "gl.xml: XML breaks off or is malformed at line ", true},
		{"end tag missing", strings.TrimSuffix(strings.TrimSpace(small), "</AuditFile>"), "gl.xml: XML breaks off or is malformed at line 7: unexpected EOF (is the file truncated?)", false},
		{"cash register file", `<?xml version="1.0"?><auditfile xmlns="urn:StandardAuditFile-Taxation-CashRegister:NO"><header/></auditfile>`,
			"gl.xml is a SAF-T Cash Register file (namespace urn:StandardAuditFile-Taxation-CashRegister:NO), not SAF-T Financial: it holds no general ledger", false},
		{"cash register under the usual prefix", `<n1:AuditFile xmlns:n1="urn:StandardAuditFile-Taxation-CashRegister:NO"/>`,
			"gl.xml is a SAF-T Cash Register file (namespace urn:StandardAuditFile-Taxation-CashRegister:NO), not SAF-T Financial: it holds no general ledger", false},
		{"wrong root", `<Invoice xmlns="` + Namespace + `"/>`, "gl.xml: root element is Invoice, not AuditFile: this is not a SAF-T Financial file", false},
		{"OECD namespace", `<AuditFile xmlns="urn:OECD:StandardAuditFile-Tax:2.00"/>`,
			"gl.xml: root element AuditFile is in namespace urn:OECD:StandardAuditFile-Tax:2.00, not SAF-T Financial's urn:StandardAuditFile-Taxation-Financial:NO", false},
		{"namespace with a line break", "<A xmlns=\"\r\">", // found by FuzzReadLedger (testdata/fuzz/FuzzReadLedger/7204452077eb0bb2)
			`gl.xml: root element A is in namespace \n, not SAF-T Financial's urn:StandardAuditFile-Taxation-Financial:NO`, false},
		{"undeclared prefix", `<n1:AuditFile/>`, "gl.xml: root element AuditFile is in namespace n1, not SAF-T Financial's", true},
		{"other currency", strings.Replace(small, "NOK", "SEK", 1),
			"gl.xml: amounts are in SEK (Header/DefaultCurrencyCode) but the store's currency is NOK (key currency)", false},
		{"no currency", strings.Replace(small, "<DefaultCurrencyCode>NOK</DefaultCurrencyCode>", "", 1),
			"gl.xml: Header/DefaultCurrencyCode is missing (or comes after GeneralLedgerEntries); it says what currency the amounts are in", false},
		{"master data only", `<AuditFile xmlns="` + Namespace + `"><Header><DefaultCurrencyCode>NOK</DefaultCurrencyCode></Header><MasterFiles/></AuditFile>`,
			"gl.xml has no GeneralLedgerEntries: it holds no ledger lines (is it an export of master data only?)", false},
		{"no control totals", strings.Replace(small, "<TotalCredit>0</TotalCredit>", "", 1),
			"gl.xml: GeneralLedgerEntries has no TotalCredit; SAF-T requires NumberOfEntries, TotalDebit and TotalCredit", false},
		{"bad control total", strings.Replace(small, "<TotalDebit>0</TotalDebit>", "<TotalDebit>1 000</TotalDebit>", 1),
			`gl.xml: GeneralLedgerEntries/TotalDebit: amount "1 000" is not a decimal number`, false},
		{"two ledgers", strings.Replace(small, "</AuditFile>", "<GeneralLedgerEntries/></AuditFile>", 1),
			"gl.xml has more than one GeneralLedgerEntries; SAF-T allows one", false},
		{"latin-1", strings.Replace(small, `encoding="UTF-8"`, `encoding="ISO-8859-1"`, 1),
			`gl.xml declares encoding "ISO-8859-1"; only UTF-8 SAF-T files can be read: export it again as UTF-8`, false},
		{"second root", small + "<AuditFile/>", "gl.xml: element AuditFile after the end of AuditFile; the file is damaged", false},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			rec := &recorder{}
			_, err := ReadLedger(context.Background(), writeFile(t, "gl.xml", tc.content), "gl.xml", options(""), rec)
			if err == nil {
				t.Fatal("no error")
			}
			msg := err.Error()
			if strings.ContainsAny(msg, "\r\n") {
				t.Errorf("error is not one line: %q", msg)
			}
			if (tc.partial && !strings.Contains(msg, tc.want)) || (!tc.partial && msg != tc.want) {
				t.Errorf("error %q\nwant %q", msg, tc.want)
			}
			if tc.name != "truncated" && rec.calls != 0 {
				t.Errorf("%d rows written before the file was refused", rec.calls)
			}
		})
	}

	// Files that cannot be opened.
	dir := t.TempDir()
	if _, err := ReadLedger(context.Background(), dir, "gl", options(""), &recorder{}); err == nil || err.Error() != "cannot read gl: it is a folder, not a file" {
		t.Errorf("folder: %v", err)
	}
	if _, err := ReadAccounts(context.Background(), filepath.Join(dir, "nope.xml"), "nope.xml", options(""), &recorder{}); err == nil ||
		err.Error() != "cannot read nope.xml: no such file or directory" {
		t.Errorf("missing file: %v", err)
	}
}

func TestWriterErrorAndCancelStop(t *testing.T) {
	rec := &recorder{failOn: 5}
	_, err := ReadLedger(context.Background(), example120, "x.xml", options(""), rec)
	if !errors.Is(err, errWriter) || rec.calls != 5 {
		t.Errorf("err %v after %d calls, want the writer's error at call 5", err, rec.calls)
	}
	rec = &recorder{failOn: 3}
	if _, err := ReadAccounts(context.Background(), example130, "x.xml", options(""), rec); !errors.Is(err, errWriter) {
		t.Errorf("accounts: %v", err)
	}
	ctx, cancel := context.WithCancel(context.Background())
	cancel()
	if _, err := ReadLedger(ctx, example120, "x.xml", options(""), &recorder{}); !errors.Is(err, context.Canceled) {
		t.Errorf("cancelled: %v", err)
	}
}

func TestMisusePanics(t *testing.T) {
	for name, opt := range map[string]Options{
		"no period":   {Currency: nok},
		"no currency": {Period: monthly},
	} {
		t.Run(name, func(t *testing.T) {
			defer func() {
				if p := recover(); p == nil || !strings.HasPrefix(fmt.Sprint(p), "saftsource: ") {
					t.Errorf("panic = %v, want one naming the package", p)
				}
			}()
			ReadLedger(context.Background(), example130, "x.xml", opt, &recorder{})
		})
	}
}

func TestFormatMinor(t *testing.T) {
	tests := []struct {
		v    int64
		exp  int32
		want string
	}{
		{948704935, 2, "9487049.35"}, {5, 2, "0.05"}, {-50, 2, "-0.50"}, {0, 2, "0.00"}, {-7, 0, "-7"}, {1234, 3, "1.234"},
		{-9223372036854775808, 2, "-92233720368547758.08"},
	}
	for _, tc := range tests {
		if got := formatMinor(tc.v, tc.exp); got != tc.want {
			t.Errorf("formatMinor(%d, %d) = %q, want %q", tc.v, tc.exp, got, tc.want)
		}
	}
}

// Progress is told the bytes read, ending at the file's size (158136
// bytes, SUMMARY.md's table).
func TestProgress(t *testing.T) {
	var reports []int64
	opt := options("")
	opt.Progress = func(done int64) { reports = append(reports, done) }
	mustReadLedger(t, example120, opt)
	if len(reports) == 0 || reports[len(reports)-1] != 158136 {
		t.Errorf("progress reports %v, want the last to be 158136", reports)
	}
}
