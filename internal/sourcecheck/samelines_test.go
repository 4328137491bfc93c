package sourcecheck

import (
	"context"
	"database/sql"
	"encoding/csv"
	"encoding/xml"
	"fmt"
	"os"
	"path/filepath"
	"reflect"
	"strconv"
	"strings"
	"testing"
	"time"

	_ "github.com/mattn/go-sqlite3" // the SQLite driver the SQL source reads with
	"github.com/xuri/excelize/v2"

	"github.com/costdrift/costdrift/internal/costdrift"
	"github.com/costdrift/costdrift/internal/costdrift/costdrifttest"
	"github.com/costdrift/costdrift/internal/csvsource"
	"github.com/costdrift/costdrift/internal/money"
	"github.com/costdrift/costdrift/internal/saftsource"
	"github.com/costdrift/costdrift/internal/sqlsource"
	"github.com/costdrift/costdrift/internal/xlsxsource"
)

// Expected values are worked out by hand from the lines beside them, and
// the conversions are facts of the trade (common practice): EUR has two
// decimals of minor unit (ISO 4217), so 1234.56 EUR is 123456 cents; a
// signed amount is debit positive, credit negative, and debit minus credit
// otherwise; the period of a date is its calendar month (a monthly calendar
// whose year starts in January). A line in another currency counts through
// its amount in the functional currency (README, Sources: Foreign
// currency). The lines are invented.

var eur = money.Currency{Code: "EUR", Exponent: 2}

func monthly(d time.Time) string { return d.Format("2006-01") }

// notation is how a source writes dates and amounts as text.
type notation struct {
	name       string
	layout     string // Go layout of dates
	human      string // the same as date_format spells it
	money      money.Notation
	date       func(iso string) string   // an ISO date as the source writes it
	decimal    func(plain string) string // a plain decimal as the source writes it
	typedKinds bool                      // also write number and date cells and typed columns
}

var iso = notation{name: "ISO dates, decimal point", layout: "2006-01-02", human: "YYYY-MM-DD",
	date: func(s string) string { return s }, decimal: func(s string) string { return s }, typedKinds: true}

// european writes 2025-03-15 as 15.03.2025 and -1234.56 as -1.234,56.
var european = notation{name: "DD.MM.YYYY dates, decimal comma, '.' thousands", layout: "02.01.2006", human: "DD.MM.YYYY",
	money: money.Notation{DecimalComma: true, ThousandsSeparator: "."},
	date: func(s string) string {
		if len(s) != 10 {
			return s
		}
		return s[8:10] + "." + s[5:7] + "." + s[0:4]
	},
	decimal: func(s string) string {
		if s == "" {
			return ""
		}
		sign, whole, frac := "", s, ""
		if strings.HasPrefix(whole, "-") {
			sign, whole = "-", whole[1:]
		}
		if i := strings.IndexByte(whole, '.'); i >= 0 {
			whole, frac = whole[:i], ","+whole[i+1:]
		}
		for i := len(whole) - 3; i > 0; i -= 3 {
			whole = whole[:i] + "." + whole[i:]
		}
		return sign + whole + frac
	},
}

// ledgerLine is one ledger line as a person would type it: an ISO date,
// amounts as plain decimals with a point, "" for an empty field.
type ledgerLine struct {
	entry, line, date, account, costCenter      string
	amount, debit, credit, currency, functional string
	description                                 string

	want costdrift.LedgerLine // the stored line; zero when the line is rejected
	// reason is why the line is rejected; {date} and {amount} stand for
	// the date and the amount as the source writes them, {layout} for the
	// date format.
	reason string
	// kindReason replaces reason for a kind whose typed value is named as
	// what it is: a number cell, a floating-point column, a SAF-T element.
	kindReason map[string]string
	noSAFT     bool // SAF-T cannot express the line
}

// The kinds whose reasons may differ, as kindReason names them.
const (
	xlsxTyped = "xlsx number and date cells"
	sqlTyped  = "sql typed columns"
	saft      = "saft"
)

func gl(entry string, line int, posted, account, cc string, minor int64, description string) costdrift.LedgerLine {
	return costdrift.LedgerLine{Source: "gl", EntryID: entry, Line: line, PostedOn: posted, Period: posted[:7],
		Account: account, CostCenter: cc, AmountMinor: minor, Description: description}
}

// signedLedger has a line column, a signed amount and the currency
// columns.
var signedLedger = []ledgerLine{
	{entry: "E1", line: "1", date: "2025-03-15", account: "6200", costCenter: "WELD", amount: "1234.56", currency: "EUR",
		description: "Weld wire, argon and tips",
		want:        gl("E1", 1, "2025-03-15", "6200", "WELD", 123456, "Weld wire, argon and tips")},
	{entry: "E1", line: "2", date: "2025-03-15", account: "2100", amount: "-1234.56",
		description: `Supplier "Quillmoor Metals", invoice 7`,
		want:        gl("E1", 2, "2025-03-15", "2100", "", -123456, `Supplier "Quillmoor Metals", invoice 7`)},
	// 100.00 USD booked at 92.00 EUR: 9200 cents, never 10000.
	{entry: "E2", line: "1", date: "2025-03-20", account: "6300", costCenter: "ASSY", amount: "100.00", currency: "USD", functional: "92.00",
		description: "Fixings from Zürich – ½ price",
		want:        gl("E2", 1, "2025-03-20", "6300", "ASSY", 9200, "Fixings from Zürich – ½ price")},
	{entry: "E2", line: "2", date: "2025-03-20", account: "2100", amount: "-92.00", description: "Überweisung",
		want: gl("E2", 2, "2025-03-20", "2100", "", -9200, "Überweisung")},
	{entry: "E3", line: "1", date: "2025-03-21", account: "6300", costCenter: "ASSY", amount: "100.00", currency: "USD",
		description: "dollars without a functional amount", reason: "amount in USD with no functional_amount in EUR", noSAFT: true},
	// The functional currency in small letters is still the functional currency.
	{entry: "E4", line: "1", date: "2024-12-31", account: "6500", amount: "2500.00", currency: "eur", description: "Rent of hall B, December",
		want: gl("E4", 1, "2024-12-31", "6500", "", 250000, "Rent of hall B, December")},
	{entry: "E5", line: "1", date: "2025-03-22", account: "6200", costCenter: "WELD", amount: "12.345", description: "a tenth of a cent",
		reason: `bad amount: amount "{amount}": more decimals than the currency's minor unit (EUR has 2)`,
		kindReason: map[string]string{
			xlsxTyped: "bad amount: number 12.345: more decimals than the currency's minor unit (EUR has 2)",
			sqlTyped:  `bad amount: amount "12.345": more decimals than the currency's minor unit (EUR has 2) (a floating-point column: store or sum amounts as NUMERIC or DECIMAL)`,
			saft:      `bad DebitAmount: amount "12.345": more decimals than the currency's minor unit (EUR has 2)`,
		}},
	{entry: "E6", line: "1", date: "2025-02-30", account: "6200", costCenter: "WELD", amount: "10.00", description: "30 February",
		reason: `bad date "{date}": want {layout}`,
		kindReason: map[string]string{
			// The SQLite driver turns a DATE value it cannot read into the
			// zero time (go-sqlite3's rows.Next), so the text is gone.
			sqlTyped: "bad date: 0001-01-01, which the driver returns for a value it cannot read as a date",
			saft:     `bad TransactionDate: date "2025-02-30" is not YYYY-MM-DD`,
		}},
	// -2000.00 USD booked at -1843.40 EUR.
	{entry: "E7", line: "1", date: "2025-03-31", account: "6100", costCenter: "PAINT", amount: "-2000.00", currency: "USD", functional: "-1843.40",
		description: "Credit note, paint", want: gl("E7", 1, "2025-03-31", "6100", "PAINT", -184340, "Credit note, paint")},
}

// debitCreditLedger has debit and credit columns, the currency columns and
// no line column: lines are numbered by their place in the entry, rejected
// lines included.
var debitCreditLedger = []ledgerLine{
	{entry: "D1", date: "2025-04-01", account: "6200", costCenter: "WELD", debit: "250.00", description: "Überstunden Schweißerei",
		want: gl("D1", 1, "2025-04-01", "6200", "WELD", 25000, "Überstunden Schweißerei")},
	{entry: "D1", date: "2025-04-01", account: "2100", credit: "250.00", description: "Lohnverbindlichkeit",
		want: gl("D1", 2, "2025-04-01", "2100", "", -25000, "Lohnverbindlichkeit")},
	// 10.00 - 2.50 = 7.50; a SAF-T line has one side only.
	{entry: "D2", date: "2025-04-02", account: "6100", costCenter: "PAINT", debit: "10.00", credit: "2.50", description: "net of a refund",
		want: gl("D2", 1, "2025-04-02", "6100", "PAINT", 750, "net of a refund"), noSAFT: true},
	// The third line of D1, after a line of D2.
	{entry: "D1", date: "2025-04-01", account: "6300", debit: "5.00", description: "late line, \"D1\"",
		want: gl("D1", 3, "2025-04-01", "6300", "", 500, "late line, \"D1\"")},
	{entry: "D3", date: "2025-04-03", account: "6200", costCenter: "WELD", description: "neither side",
		reason:     "missing amount: both debit and credit are empty",
		kindReason: map[string]string{saft: "has neither DebitAmount nor CreditAmount"}},
	// The rejected line before it keeps number 1.
	{entry: "D3", date: "2025-04-03", account: "2100", credit: "40.25", description: "after a rejected line",
		want: gl("D3", 2, "2025-04-03", "2100", "", -4025, "after a rejected line")},
	// 100.00 USD debit booked at 92.00 EUR: the functional amount is signed.
	{entry: "D4", date: "2025-04-04", account: "6300", costCenter: "ASSY", debit: "100.00", currency: "USD", functional: "92.00",
		description: "debit in dollars", want: gl("D4", 1, "2025-04-04", "6300", "ASSY", 9200, "debit in dollars")},
}

// ledgerColumns are the columns a ledger is written with.
func ledgerColumns(debitCredit bool) []string {
	if debitCredit {
		return []string{"entry_id", "date", "account", "cost_center", "debit", "credit", "currency", "functional_amount", "description"}
	}
	return []string{"entry_id", "line", "date", "account", "cost_center", "amount", "currency", "functional_amount", "description"}
}

// fields returns a line's fields under the columns, as the notation writes
// them.
func (l ledgerLine) fields(cols []string, n notation) []string {
	out := make([]string, len(cols))
	for i, c := range cols {
		switch c {
		case "entry_id":
			out[i] = l.entry
		case "line":
			out[i] = l.line
		case "date":
			out[i] = n.date(l.date)
		case "account":
			out[i] = l.account
		case "cost_center":
			out[i] = l.costCenter
		case "amount":
			out[i] = n.decimal(l.amount)
		case "debit":
			out[i] = n.decimal(l.debit)
		case "credit":
			out[i] = n.decimal(l.credit)
		case "currency":
			out[i] = l.currency
		case "functional_amount":
			out[i] = n.decimal(l.functional)
		case "description":
			out[i] = l.description
		}
	}
	return out
}

// wantReason is the reject reason for the kind, in the notation.
func (l ledgerLine) wantReason(kind string, n notation) string {
	if r, ok := l.kindReason[kind]; ok {
		return r
	}
	amount := l.amount
	if amount == "" {
		amount = l.debit
	}
	return strings.NewReplacer("{date}", n.date(l.date), "{amount}", n.decimal(amount), "{layout}", n.human).Replace(l.reason)
}

// sourceKind reads a ledger written in a notation into a recorder.
type sourceKind struct {
	name  string
	typed bool // writes number and date cells or typed columns: ISO notation only
	read  func(t *testing.T, lines []ledgerLine, debitCredit bool, n notation) *costdrifttest.Recorder
}

var ledgerKinds = []sourceKind{
	{name: "csv", read: readCSVLedger},
	{name: "xlsx text cells", read: func(t *testing.T, lines []ledgerLine, dc bool, n notation) *costdrifttest.Recorder {
		return readXLSXLedger(t, lines, dc, n, false)
	}},
	{name: xlsxTyped, typed: true, read: func(t *testing.T, lines []ledgerLine, dc bool, n notation) *costdrifttest.Recorder {
		return readXLSXLedger(t, lines, dc, n, true)
	}},
	{name: "sql text columns", read: func(t *testing.T, lines []ledgerLine, dc bool, n notation) *costdrifttest.Recorder {
		return readSQLLedger(t, lines, dc, n, false)
	}},
	{name: sqlTyped, typed: true, read: func(t *testing.T, lines []ledgerLine, dc bool, n notation) *costdrifttest.Recorder {
		return readSQLLedger(t, lines, dc, n, true)
	}},
}

// TestSameLinesEverySourceKind puts the same ledger lines through every
// source kind and every notation a kind can hold them in, and compares the
// stored lines field by field and the reasons of the rejected ones.
func TestSameLinesEverySourceKind(t *testing.T) {
	for _, ledger := range []struct {
		name        string
		lines       []ledgerLine
		debitCredit bool
	}{
		{"signed amounts and a line column", signedLedger, false},
		{"debit and credit, no line column", debitCreditLedger, true},
	} {
		for _, n := range []notation{iso, european} {
			for _, kind := range ledgerKinds {
				if kind.typed && !n.typedKinds {
					continue
				}
				t.Run(ledger.name+"/"+n.name+"/"+kind.name, func(t *testing.T) {
					rec := kind.read(t, ledger.lines, ledger.debitCredit, n)
					var want []costdrift.LedgerLine
					var reasons []string
					for _, l := range ledger.lines {
						if l.reason != "" {
							reasons = append(reasons, l.wantReason(kind.name, n))
						} else {
							want = append(want, l.want)
						}
					}
					compareLines(t, rec.Lines, want)
					compareReasons(t, rec.Rejects, reasons)
				})
			}
		}
		t.Run(ledger.name+"/"+saft, func(t *testing.T) {
			lines := groupByEntry(ledger.lines)
			rec := readSAFTLedger(t, lines)
			var want []costdrift.LedgerLine
			var reasons []string
			for _, l := range lines {
				if l.reason != "" {
					reasons = append(reasons, l.wantReason(saft, iso))
					continue
				}
				w := l.want
				w.EntryID = l.date[:4] + "/GL/" + l.entry // PeriodYear/JournalID/TransactionID
				want = append(want, w)
			}
			compareLines(t, rec.Lines, want)
			compareReasons(t, rec.Rejects, reasons)
		})
	}
}

// compareLines matches stored and expected lines by entry and line number
// and names every field in which a stored line differs; then it checks
// that they were stored in the same order.
func compareLines(t *testing.T, got, want []costdrift.LedgerLine) {
	t.Helper()
	type key struct {
		entry string
		line  int
	}
	stored := map[key]costdrift.LedgerLine{}
	for _, g := range got {
		stored[key{g.EntryID, g.Line}] = g
	}
	for _, w := range want {
		k := key{w.EntryID, w.Line}
		g, ok := stored[k]
		if !ok {
			t.Errorf("line %s/%d: not stored, want %+v", w.EntryID, w.Line, w)
			continue
		}
		delete(stored, k)
		gv, wv := reflect.ValueOf(g), reflect.ValueOf(w)
		for f := range gv.NumField() {
			if !reflect.DeepEqual(gv.Field(f).Interface(), wv.Field(f).Interface()) {
				t.Errorf("line %s/%d: %s = %#v, want %#v", w.EntryID, w.Line, gv.Type().Field(f).Name, gv.Field(f).Interface(), wv.Field(f).Interface())
			}
		}
	}
	for _, g := range got {
		if _, extra := stored[key{g.EntryID, g.Line}]; extra {
			t.Errorf("line %s/%d: stored %+v, want none", g.EntryID, g.Line, g)
		}
	}
	if !t.Failed() && !reflect.DeepEqual(got, want) {
		t.Errorf("lines stored in another order:\n got  %+v\n want %+v", got, want)
	}
}

func compareReasons(t *testing.T, got []costdrift.Reject, want []string) {
	t.Helper()
	for i := range max(len(got), len(want)) {
		switch {
		case i >= len(got):
			t.Errorf("reject %d: missing, want %q", i+1, want[i])
		case i >= len(want):
			t.Errorf("reject %d at %s: %q, want none", i+1, got[i].Location, got[i].Reason)
		case got[i].Reason != want[i] || got[i].Source != "gl":
			t.Errorf("reject %d at %s (source %s):\n got  %q\n want %q", i+1, got[i].Location, got[i].Source, got[i].Reason, want[i])
		}
	}
}

// groupByEntry puts each entry's lines together, entries in the order they
// first appear: a SAF-T Transaction holds all its lines.
func groupByEntry(lines []ledgerLine) []ledgerLine {
	var order []string
	byEntry := map[string][]ledgerLine{}
	for _, l := range lines {
		if l.noSAFT {
			continue
		}
		if _, ok := byEntry[l.entry]; !ok {
			order = append(order, l.entry)
		}
		byEntry[l.entry] = append(byEntry[l.entry], l)
	}
	var out []ledgerLine
	for _, e := range order {
		out = append(out, byEntry[e]...)
	}
	return out
}

func writeFile(t *testing.T, name string, content []byte) string {
	t.Helper()
	path := filepath.Join(t.TempDir(), name)
	if err := os.WriteFile(path, content, 0o600); err != nil {
		t.Fatal(err)
	}
	return path
}

func readCSVLedger(t *testing.T, lines []ledgerLine, debitCredit bool, n notation) *costdrifttest.Recorder {
	t.Helper()
	var b strings.Builder
	w := csv.NewWriter(&b)
	w.Comma = ';'
	cols := ledgerColumns(debitCredit)
	w.Write(cols)
	for _, l := range lines {
		w.Write(l.fields(cols, n))
	}
	w.Flush()
	rec := &costdrifttest.Recorder{}
	opt := csvsource.Options{Source: "gl", DateLayout: n.layout, Notation: n.money, Currency: eur, Period: monthly}
	if _, err := csvsource.ReadLedger(context.Background(), writeFile(t, "gl.csv", []byte(b.String())), "gl.csv", opt, rec); err != nil {
		t.Fatal(err)
	}
	return rec
}

// readXLSXLedger writes the lines into a workbook: every value a text cell,
// or (typed) amounts and line numbers as number cells and dates that exist
// as date cells.
func readXLSXLedger(t *testing.T, lines []ledgerLine, debitCredit bool, n notation, typed bool) *costdrifttest.Recorder {
	t.Helper()
	f := excelize.NewFile()
	defer f.Close()
	cols := ledgerColumns(debitCredit)
	put := func(row, col int, v any) {
		ref, err := excelize.CoordinatesToCellName(col+1, row+1)
		if err != nil {
			t.Fatal(err)
		}
		if err := f.SetCellValue("Sheet1", ref, v); err != nil {
			t.Fatal(err)
		}
	}
	for c, name := range cols {
		put(0, c, name)
	}
	for r, l := range lines {
		for c, text := range l.fields(cols, n) {
			if text == "" {
				continue
			}
			var v any = text
			if typed {
				switch cols[c] {
				case "line":
					v, _ = strconv.Atoi(text)
				case "amount", "debit", "credit", "functional_amount":
					v, _ = strconv.ParseFloat(text, 64)
				case "date":
					if d, err := time.Parse("2006-01-02", text); err == nil {
						v = d
					}
				}
			}
			put(r+1, c, v)
		}
	}
	path := filepath.Join(t.TempDir(), "gl.xlsx")
	if err := f.SaveAs(path); err != nil {
		t.Fatal(err)
	}
	rec := &costdrifttest.Recorder{}
	opt := xlsxsource.Options{Source: "gl", DateLayout: n.layout, Notation: n.money, Currency: eur, Period: monthly}
	if _, err := xlsxsource.ReadLedger(context.Background(), path, "gl.xlsx", opt, rec); err != nil {
		t.Fatal(err)
	}
	return rec
}

// readSQLLedger writes the lines into a SQLite table and reads them with a
// query. Text columns hold every value as text and an empty one as NULL;
// typed columns are INTEGER line, DATE date and REAL amounts, and an empty
// cost centre the empty string. Without a line column the query numbers the lines, as the
// README tells users to.
func readSQLLedger(t *testing.T, lines []ledgerLine, debitCredit bool, n notation, typed bool) *costdrifttest.Recorder {
	t.Helper()
	path := filepath.Join(t.TempDir(), "books.db")
	db, err := sql.Open("sqlite3", path)
	if err != nil {
		t.Fatal(err)
	}
	defer db.Close()
	lineType, dateType, moneyType := "TEXT", "TEXT", "TEXT"
	if typed {
		lineType, dateType, moneyType = "INTEGER", "DATE", "REAL"
	}
	create := fmt.Sprintf(`CREATE TABLE gl (id INTEGER PRIMARY KEY, entry_id TEXT, line %s, date %s, account TEXT, cost_center TEXT,
		amount %[3]s, debit %[3]s, credit %[3]s, currency TEXT, functional_amount %[3]s, description TEXT)`, lineType, dateType, moneyType)
	if _, err := db.Exec(create); err != nil {
		t.Fatal(err)
	}
	cols := []string{"entry_id", "line", "date", "account", "cost_center", "amount", "debit", "credit", "currency", "functional_amount", "description"}
	for i, l := range lines {
		args := []any{i + 1}
		for c, text := range l.fields(cols, n) {
			var v any = text
			switch {
			case text == "" && typed && cols[c] == "cost_center":
				v = ""
			case text == "":
				v = nil
			case typed && cols[c] == "line":
				v, _ = strconv.Atoi(text)
			case typed && (cols[c] == "amount" || cols[c] == "debit" || cols[c] == "credit" || cols[c] == "functional_amount"):
				v, _ = strconv.ParseFloat(text, 64)
			}
			args = append(args, v)
		}
		if _, err := db.Exec(`INSERT INTO gl VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?)`, args...); err != nil {
			t.Fatal(err)
		}
	}
	query := `SELECT entry_id, line, date, account, cost_center, amount, currency, functional_amount, description FROM gl ORDER BY id`
	if debitCredit {
		query = `SELECT entry_id, ROW_NUMBER() OVER (PARTITION BY entry_id ORDER BY id) AS line, date, account, cost_center,
			debit, credit, currency, functional_amount, description FROM gl ORDER BY id`
	}
	rec := &costdrifttest.Recorder{}
	opt := sqlsource.Options{Source: "gl", Driver: "sqlite", DSN: path, DSNOrigin: "dsn_file books.dsn", Query: query,
		DateLayout: n.layout, Notation: n.money, Currency: eur, Period: monthly, Timeout: 10 * time.Second}
	if _, err := sqlsource.ReadLedger(context.Background(), opt, rec); err != nil {
		t.Fatal(err)
	}
	return rec
}

// readSAFTLedger writes the lines as a SAF-T Financial file, one
// Transaction per entry in journal GL, PeriodYear the year of the date. A
// line in another currency holds its functional amount in Amount and the
// original in CurrencyCode and CurrencyAmount; the cost centre is an
// Analysis of type A without an amount, which takes the whole line.
func readSAFTLedger(t *testing.T, lines []ledgerLine) *costdrifttest.Recorder {
	t.Helper()
	var b strings.Builder
	entries := 0
	for i, l := range lines {
		if i == 0 || lines[i-1].entry != l.entry {
			if i > 0 {
				b.WriteString("</Transaction>\n")
			}
			entries++
			fmt.Fprintf(&b, "<Transaction><TransactionID>%s</TransactionID><Period>1</Period><PeriodYear>%s</PeriodYear>"+
				"<TransactionDate>%s</TransactionDate><Description>voucher %[1]s</Description>\n", l.entry, l.date[:4], l.date)
		}
		fmt.Fprintf(&b, "<Line><RecordID>%d</RecordID><AccountID>%s</AccountID>", i+1, l.account)
		if l.costCenter != "" {
			fmt.Fprintf(&b, "<Analysis><AnalysisType>A</AnalysisType><AnalysisID>%s</AnalysisID></Analysis>", l.costCenter)
		}
		b.WriteString("<Description>")
		xml.EscapeText(&b, []byte(l.description))
		b.WriteString("</Description>")
		side, amount := "Debit", l.debit
		switch {
		case l.amount != "" && strings.HasPrefix(l.amount, "-"):
			side, amount = "Credit", l.amount[1:]
		case l.amount != "":
			amount = l.amount
		case l.credit != "":
			side, amount = "Credit", l.credit
		}
		original := ""
		if l.functional != "" {
			original = fmt.Sprintf("<CurrencyCode>%s</CurrencyCode><CurrencyAmount>%s</CurrencyAmount>", l.currency,
				strings.TrimPrefix(strings.TrimPrefix(l.amount+l.debit, "-"), "+"))
			amount = strings.TrimPrefix(l.functional, "-")
		}
		if amount != "" {
			fmt.Fprintf(&b, "<%sAmount><Amount>%s</Amount>%s</%[1]sAmount>", side, amount, original)
		}
		b.WriteString("</Line>\n")
	}
	if len(lines) > 0 {
		b.WriteString("</Transaction>\n")
	}
	// The control totals are not what this test is about (saftsource's tests
	// check Totals.Check); ReadLedger only needs them declared.
	doc := fmt.Sprintf(`<?xml version="1.0" encoding="UTF-8"?>
<AuditFile xmlns="%s">
<Header><AuditFileVersion>1.30</AuditFileVersion><DefaultCurrencyCode>EUR</DefaultCurrencyCode></Header>
<GeneralLedgerEntries><NumberOfEntries>%d</NumberOfEntries><TotalDebit>0</TotalDebit><TotalCredit>0</TotalCredit>
<Journal><JournalID>GL</JournalID><Description>general</Description><Type>GL</Type>
%s</Journal>
</GeneralLedgerEntries>
</AuditFile>
`, saftsource.Namespace, entries, b.String())
	rec := &costdrifttest.Recorder{}
	opt := saftsource.Options{Source: "gl", Currency: eur, Period: monthly, AnalysisType: "A"}
	if _, err := saftsource.ReadLedger(context.Background(), writeFile(t, "gl.xml", []byte(doc)), "gl.xml", opt, rec); err != nil {
		t.Fatal(err)
	}
	return rec
}

// activityRow is one activity value in long form as a person would type it.
type activityRow struct {
	period, driver, costCenter, value, unit string

	want costdrift.ActivityValue // the stored value; zero when the row is rejected
	// reason is why the row is rejected; {period} and {value} stand for
	// them as the source writes them.
	reason string
}

func act(period, driver, cc string, value float64, unit string) costdrift.ActivityValue {
	return costdrift.ActivityValue{Source: "ops", Period: period, Driver: driver, CostCenter: cc, Value: value, Unit: unit}
}

var activityRows = []activityRow{
	{period: "2025-01", driver: "machine_hours", costCenter: "WELD", value: "410.5", unit: "machine hour",
		want: act("2025-01", "machine_hours", "WELD", 410.5, "machine hour")},
	// A date stands for its period.
	{period: "2025-02-15", driver: "machine_hours", costCenter: "WELD", value: "395", unit: "machine hour",
		want: act("2025-02", "machine_hours", "WELD", 395, "machine hour")},
	// No cost centre: company-wide.
	{period: "2025-03", driver: "frames_built", value: "1234.5", unit: "frame",
		want: act("2025-03", "frames_built", "", 1234.5, "frame")},
	{period: "2025-03", costCenter: "WELD", value: "1", reason: "missing driver"},
	{period: "2025-13", driver: "machine_hours", costCenter: "WELD", value: "1", unit: "machine hour",
		reason: `bad period "{period}": want YYYY-MM or a date`},
	{period: "2025-04", driver: "machine_hours", costCenter: "PAINT", value: "-3", unit: "machine hour",
		reason: `bad value "{value}": activity cannot be negative`},
}

var activityColumns = []string{"period", "driver", "cost_center", "value", "unit"}

func (a activityRow) fields(n notation) []string {
	period := a.period
	if len(period) == 10 {
		period = n.date(period)
	}
	return []string{period, a.driver, a.costCenter, n.decimal(a.value), a.unit}
}

// TestSameActivityEverySourceKind puts the same activity values in long
// form through the CSV, XLSX and SQL sources and compares the stored values
// and the reasons of the rejected ones.
func TestSameActivityEverySourceKind(t *testing.T) {
	kinds := []struct {
		name  string
		typed bool
		read  func(t *testing.T, n notation, typed bool) *costdrifttest.Recorder
	}{
		{"csv", false, readCSVActivity},
		{"xlsx text cells", false, readXLSXActivity},
		{xlsxTyped, true, readXLSXActivity},
		{"sql text columns", false, readSQLActivity},
		{sqlTyped, true, readSQLActivity},
	}
	for _, n := range []notation{iso, european} {
		for _, kind := range kinds {
			if kind.typed && !n.typedKinds {
				continue
			}
			t.Run(n.name+"/"+kind.name, func(t *testing.T) {
				rec := kind.read(t, n, kind.typed)
				var want []costdrift.ActivityValue
				var reasons []string
				for _, a := range activityRows {
					if a.reason == "" {
						want = append(want, a.want)
						continue
					}
					f := a.fields(n)
					reasons = append(reasons, strings.NewReplacer("{period}", f[0], "{value}", f[3]).Replace(a.reason))
				}
				// Location says where a value was read, for messages; it is
				// not stored.
				got := make([]costdrift.ActivityValue, len(rec.Values))
				for i, v := range rec.Values {
					v.Location = ""
					got[i] = v
				}
				// Values are short decimals that strconv.ParseFloat reads
				// exactly, or whole numbers: equal with tolerance 0.
				if !reflect.DeepEqual(got, want) {
					t.Errorf("values:\n got  %+v\n want %+v", got, want)
				}
				compareReasonsAs(t, "ops", rec.Rejects, reasons)
			})
		}
	}
}

func compareReasonsAs(t *testing.T, source string, got []costdrift.Reject, want []string) {
	t.Helper()
	for i := range max(len(got), len(want)) {
		switch {
		case i >= len(got):
			t.Errorf("reject %d: missing, want %q", i+1, want[i])
		case i >= len(want):
			t.Errorf("reject %d at %s: %q, want none", i+1, got[i].Location, got[i].Reason)
		case got[i].Reason != want[i] || got[i].Source != source:
			t.Errorf("reject %d at %s (source %s):\n got  %q\n want %q", i+1, got[i].Location, got[i].Source, got[i].Reason, want[i])
		}
	}
}

func readCSVActivity(t *testing.T, n notation, _ bool) *costdrifttest.Recorder {
	t.Helper()
	var b strings.Builder
	w := csv.NewWriter(&b)
	w.Comma = ';'
	w.Write(activityColumns)
	for _, a := range activityRows {
		w.Write(a.fields(n))
	}
	w.Flush()
	rec := &costdrifttest.Recorder{}
	opt := csvsource.Options{Source: "ops", DateLayout: n.layout, Notation: n.money, Currency: eur, Period: monthly}
	if _, err := csvsource.ReadActivity(context.Background(), writeFile(t, "activity.csv", []byte(b.String())), "activity.csv", opt, rec); err != nil {
		t.Fatal(err)
	}
	return rec
}

// readXLSXActivity writes text cells, or (typed) values as number cells
// and dated periods as date cells.
func readXLSXActivity(t *testing.T, n notation, typed bool) *costdrifttest.Recorder {
	t.Helper()
	f := excelize.NewFile()
	defer f.Close()
	put := func(row, col int, v any) {
		ref, err := excelize.CoordinatesToCellName(col+1, row+1)
		if err != nil {
			t.Fatal(err)
		}
		if err := f.SetCellValue("Sheet1", ref, v); err != nil {
			t.Fatal(err)
		}
	}
	for c, name := range activityColumns {
		put(0, c, name)
	}
	for r, a := range activityRows {
		for c, text := range a.fields(n) {
			if text == "" {
				continue
			}
			var v any = text
			if typed && c == 3 {
				v, _ = strconv.ParseFloat(text, 64)
			}
			if typed && c == 0 && len(text) == 10 {
				if d, err := time.Parse("2006-01-02", text); err == nil {
					v = d
				}
			}
			put(r+1, c, v)
		}
	}
	path := filepath.Join(t.TempDir(), "activity.xlsx")
	if err := f.SaveAs(path); err != nil {
		t.Fatal(err)
	}
	rec := &costdrifttest.Recorder{}
	opt := xlsxsource.Options{Source: "ops", DateLayout: n.layout, Notation: n.money, Currency: eur, Period: monthly}
	if _, err := xlsxsource.ReadActivity(context.Background(), path, "activity.xlsx", opt, rec); err != nil {
		t.Fatal(err)
	}
	return rec
}

// readSQLActivity writes text columns (NULL for empty), or (typed) a REAL
// value column.
func readSQLActivity(t *testing.T, n notation, typed bool) *costdrifttest.Recorder {
	t.Helper()
	path := filepath.Join(t.TempDir(), "ops.db")
	db, err := sql.Open("sqlite3", path)
	if err != nil {
		t.Fatal(err)
	}
	defer db.Close()
	valueType := "TEXT"
	if typed {
		valueType = "REAL"
	}
	if _, err := db.Exec(`CREATE TABLE activity (id INTEGER PRIMARY KEY, period TEXT, driver TEXT, cost_center TEXT, value ` + valueType + `, unit TEXT)`); err != nil {
		t.Fatal(err)
	}
	for i, a := range activityRows {
		args := []any{i + 1}
		for c, text := range a.fields(n) {
			var v any = text
			switch {
			case text == "":
				v = nil
			case typed && c == 3:
				v, _ = strconv.ParseFloat(text, 64)
			}
			args = append(args, v)
		}
		if _, err := db.Exec(`INSERT INTO activity VALUES (?, ?, ?, ?, ?, ?)`, args...); err != nil {
			t.Fatal(err)
		}
	}
	rec := &costdrifttest.Recorder{}
	opt := sqlsource.Options{Source: "ops", Driver: "sqlite", DSN: path, DSNOrigin: "dsn_file ops.dsn",
		Query:      `SELECT period, driver, cost_center, value, unit FROM activity ORDER BY id`,
		DateLayout: n.layout, Notation: n.money, Currency: eur, Period: monthly, Timeout: 10 * time.Second}
	if _, err := sqlsource.ReadActivity(context.Background(), opt, rec); err != nil {
		t.Fatal(err)
	}
	return rec
}
