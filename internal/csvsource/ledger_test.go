package csvsource

import (
	"context"
	"errors"
	"fmt"
	"path/filepath"
	"reflect"
	"strings"
	"testing"

	"github.com/costdrift/costdrift/internal/costdrift"
	"github.com/costdrift/costdrift/internal/money"
)

const ledgerHeader = "entry_id,line,date,account,cost_center,amount,description\n"

func readLedger(t *testing.T, path string, opt Options) (*recorder, int) {
	t.Helper()
	rec := &recorder{}
	n, err := ReadLedger(context.Background(), path, filepath.Base(path), opt, rec)
	if err != nil {
		t.Fatalf("ReadLedger: %v", err)
	}
	return rec, n
}

func TestLedgerSignedAmountToMinorUnits(t *testing.T) {
	// Expected minor units: the decimal amount times 100 (EUR, two decimals,
	// ISO 4217, common practice), by hand. Parentheses and a trailing minus
	// are how accounting exports write negatives (common practice).
	tests := []struct {
		name   string
		amount string
		want   int64
	}{
		{"two decimals", "1234.56", 123456},
		{"negative", "-1234.56", -123456},
		{"one decimal", "0.5", 50},
		{"whole", "7", 700},
		{"smallest unit", "0.01", 1},
		{"explicit plus", "+3.10", 310},
		{"parentheses", "(12.30)", -1230},
		{"trailing minus", "12.30-", -1230},
		{"zero", "0.00", 0},
		{"padded", " 42.00 ", 4200},
		{"a billion", "1000000000.00", 100000000000},
		// 0.1 + 0.2 is not 0.3 in binary floating point; in minor units it must be exact.
		{"not a binary fraction", "0.30", 30},
	}
	var b strings.Builder
	b.WriteString(ledgerHeader)
	for i, tc := range tests {
		fmt.Fprintf(&b, "E%d,1,2025-03-15,6200,WELD,%q,%s\n", i, tc.amount, tc.name)
	}
	rec, n := readLedger(t, writeFile(t, "gl.csv", b.String()), options())
	if n != len(tests) || len(rec.Lines) != len(tests) {
		t.Fatalf("read %d rows, stored %d lines, want %d; rejects %+v", n, len(rec.Lines), len(tests), rec.Rejects)
	}
	for i, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			got := rec.Lines[i]
			want := costdrift.LedgerLine{Source: "gl", EntryID: fmt.Sprintf("E%d", i), Line: 1, PostedOn: "2025-03-15",
				Period: "2025-03", Account: "6200", CostCenter: "WELD", AmountMinor: tc.want, Description: tc.name}
			if got != want {
				t.Errorf("amount %q:\n got  %+v\n want %+v", tc.amount, got, want)
			}
		})
	}
}

func TestLedgerDebitCredit(t *testing.T) {
	// amount = debit - credit in cents (debit positive, common practice), by hand.
	path := writeFile(t, "gl.csv", "entry_id,date,account,debit,credit\n"+
		"A,2025-01-10,6200,100.00,\n"+ // 10000 - 0
		"A,2025-01-10,2100,,40.25\n"+ // 0 - 4025
		"B,2025-01-11,6200,10.00,2.50\n"+ // 1000 - 250
		"C,2025-01-12,6200,,\n") // neither: rejected
	rec, n := readLedger(t, path, options())
	if n != 4 {
		t.Errorf("read %d rows, want 4", n)
	}
	var got []int64
	for _, l := range rec.Lines {
		got = append(got, l.AmountMinor)
	}
	if want := []int64{10000, -4025, 750}; !reflect.DeepEqual(got, want) {
		t.Errorf("amounts %v, want %v", got, want)
	}
	checkRejects(t, rec.Rejects, []costdrift.Reject{
		{Source: "gl", Location: "gl.csv:5", Reason: "missing amount: both debit and credit are empty", Raw: "C,2025-01-12,6200,,"},
	})
}

func TestLedgerHeaderVariants(t *testing.T) {
	// The same three rows in every header spelling, delimiter and encoding a
	// file may arrive in; each must give the same lines.
	want := []costdrift.LedgerLine{
		{Source: "gl", EntryID: "J1", Line: 1, PostedOn: "2025-04-30", Period: "2025-04", Account: "6200", CostCenter: "WELD", AmountMinor: 150000, Description: "wire, gas"},
		{Source: "gl", EntryID: "J1", Line: 2, PostedOn: "2025-04-30", Period: "2025-04", Account: "2100", CostCenter: "", AmountMinor: -150000, Description: "payable"},
		{Source: "gl", EntryID: "J2", Line: 1, PostedOn: "2025-05-02", Period: "2025-05", Account: "6100", CostCenter: "PAINT", AmountMinor: 9999, Description: ""},
	}
	rows := func(sep string, header string) string {
		quote := func(s string) string {
			if strings.Contains(s, sep) || strings.Contains(s, ",") {
				return `"` + s + `"`
			}
			return s
		}
		lines := []string{header}
		for _, l := range want {
			lines = append(lines, strings.Join([]string{l.EntryID, fmt.Sprint(l.Line), l.PostedOn, l.Account, l.CostCenter,
				fmt.Sprintf("%d.%02d", l.AmountMinor/100, abs(l.AmountMinor%100)), quote(l.Description)}, sep))
		}
		return strings.Join(lines, "\n") + "\n"
	}
	tests := []struct {
		name    string
		content string
		opt     func(*Options)
	}{
		{"canonical", rows(",", "entry_id,line,date,account,cost_center,amount,description"), nil},
		{"upper and mixed case", rows(",", "ENTRY_ID,Line,DATE,Account,COST_CENTER,Amount,Description"), nil},
		{"spaces around names", rows(",", " entry_id , line,date ,account,cost_center,amount,description "), nil},
		{"byte-order mark", "\xef\xbb\xbf" + rows(",", "entry_id,line,date,account,cost_center,amount,description"), nil},
		{"semicolon detected", rows(";", "entry_id;line;date;account;cost_center;amount;description"), nil},
		{"tab detected", rows("\t", "entry_id\tline\tdate\taccount\tcost_center\tamount\tdescription"), nil},
		{"mark and semicolon", "\xef\xbb\xbf" + rows(";", "Entry_Id;Line;Date;Account;Cost_Center;Amount;Description"), nil},
		{"columns in another order", "amount,description,cost_center,account,date,line,entry_id\n" +
			"1500.00,\"wire, gas\",WELD,6200,2025-04-30,1,J1\n-1500.00,payable,,2100,2025-04-30,2,J1\n99.99,,PAINT,6100,2025-05-02,1,J2\n", nil},
		{"column mapping", rows(",", "Voucher,Pos,Booked,GL Account,Cost Centre,Net,Text"), func(o *Options) {
			o.Columns = map[string]string{"entry_id": "Voucher", "line": "Pos", "date": "Booked", "account": "gl account",
				"cost_center": "Cost Centre", "amount": "NET", "description": "Text"}
		}},
		{"delimiter given", rows(";", "entry_id;line;date;account;cost_center;amount;description"), func(o *Options) { o.Delimiter = ';' }},
		{"windows line ends", strings.ReplaceAll(rows(",", "entry_id,line,date,account,cost_center,amount,description"), "\n", "\r\n"), nil},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			opt := options()
			if tc.opt != nil {
				tc.opt(&opt)
			}
			rec, n := readLedger(t, writeFile(t, "gl.csv", tc.content), opt)
			if n != 3 || len(rec.Rejects) != 0 {
				t.Fatalf("read %d rows, want 3; rejects %+v", n, rec.Rejects)
			}
			if !reflect.DeepEqual(rec.Lines, want) {
				t.Errorf("lines:\n got  %+v\n want %+v", rec.Lines, want)
			}
		})
	}
}

func abs(n int64) int64 {
	if n < 0 {
		return -n
	}
	return n
}

func TestDetectDelimiter(t *testing.T) {
	// Expected by counting the delimiters outside quotes by hand.
	tests := []struct {
		name   string
		header string
		want   rune
	}{
		{"comma", "a,b,c\n1;2", ','},
		{"semicolon", "a;b;c\n1,2,3,4,5", ';'},
		{"tab", "a\tb\tc", '\t'},
		{"quoted commas ignored", `"a,b,c";d;e`, ';'},
		{"one column", "account", ','},
		{"carriage return ends the header", "a;b\r\n1,2,3,4", ';'},
	}
	for _, tc := range tests {
		if got := detectDelimiter([]byte(tc.header)); got != tc.want {
			t.Errorf("%s: detectDelimiter(%q) = %q, want %q", tc.name, tc.header, got, tc.want)
		}
	}
}

func TestLedgerEuropeanNotation(t *testing.T) {
	// DD.MM.YYYY dates, decimal comma, "." thousands: 1.234,56 is 1234.56
	// EUR = 123456 cents (by hand).
	opt := options()
	opt.DateLayout = "02.01.2006"
	opt.Notation = money.Notation{DecimalComma: true, ThousandsSeparator: "."}
	path := writeFile(t, "gl.csv", "entry_id;date;account;amount\n"+
		"E1;05.03.2025;6200;1.234,56\n"+ // 123456
		"E2;31.12.2024;6200;-12.345.678,90\n"+ // -1234567890
		"E3;01.01.2025;6200;0,05\n"+ // 5
		"E4;15.06.2025;6200;1234\n"+ // 123400
		"E5;2025-06-15;6200;1,00\n"+ // ISO date under a DD.MM.YYYY layout: rejected
		"E6;15.06.2025;6200;1.5\n") // "." separates thousands here, and one digit after it is no group: rejected, neither 15 nor 1.50 EUR
	rec, _ := readLedger(t, path, opt)
	type got struct {
		posted, period string
		minor          int64
	}
	var lines []got
	for _, l := range rec.Lines {
		lines = append(lines, got{l.PostedOn, l.Period, l.AmountMinor})
	}
	want := []got{{"2025-03-05", "2025-03", 123456}, {"2024-12-31", "2024-12", -1234567890}, {"2025-01-01", "2025-01", 5},
		{"2025-06-15", "2025-06", 123400}}
	if !reflect.DeepEqual(lines, want) {
		t.Errorf("lines %+v, want %+v", lines, want)
	}
	checkRejects(t, rec.Rejects, []costdrift.Reject{
		{Source: "gl", Location: "gl.csv:6", Reason: `bad date "2025-06-15": want DD.MM.YYYY`, Raw: "E5;2025-06-15;6200;1,00"},
		{Source: "gl", Location: "gl.csv:7", Reason: `bad amount: amount "1.5": digits are not grouped in threes by the thousands separator "." (as in 1.234.567)`,
			Raw: "E6;15.06.2025;6200;1.5"},
	})
}

func TestLedgerLineNumbersAssigned(t *testing.T) {
	// Without a line column, lines count up within each entry in file
	// order, even when an entry's lines are not adjacent.
	path := writeFile(t, "gl.csv", "entry_id,date,account,amount\n"+
		"A,2025-01-31,6200,1.00\n"+ // A/1
		"A,2025-01-31,6300,2.00\n"+ // A/2
		"B,2025-01-31,6200,3.00\n"+ // B/1
		"A,2025-01-31,2100,-3.00\n"+ // A/3
		"B,2025-01-31,2100,-3.00\n") // B/2
	rec, _ := readLedger(t, path, options())
	var got []string
	for _, l := range rec.Lines {
		got = append(got, fmt.Sprintf("%s/%d", l.EntryID, l.Line))
	}
	if want := []string{"A/1", "A/2", "B/1", "A/3", "B/2"}; !reflect.DeepEqual(got, want) {
		t.Errorf("lines %v, want %v", got, want)
	}
}

func TestLedgerBlankLinesSkipped(t *testing.T) {
	path := writeFile(t, "gl.csv", ledgerHeader+
		"\n"+ // line 2: empty
		"E1,1,2025-01-31,6200,,10.00,\n"+ // line 3
		",,,,,,\n"+ // line 4: only delimiters
		"   \n"+ // line 5: only spaces
		"\r\n"+ // line 6
		"E2,1,2025-01-31,6200,,bad,\n"+ // line 7: rejected, its line number counts the blanks
		" , ,,,, ,\n"+ // line 8
		"E3,1,2025-01-31,6200,,30.00,\n"+ // line 9
		"\n\n") // lines 10, 11
	rec, n := readLedger(t, path, options())
	if n != 3 {
		t.Errorf("read %d rows, want 3 (blank lines are not rows)", n)
	}
	if len(rec.Lines) != 2 || rec.Lines[0].EntryID != "E1" || rec.Lines[1].EntryID != "E3" {
		t.Errorf("lines %+v, want E1 and E3", rec.Lines)
	}
	checkRejects(t, rec.Rejects, []costdrift.Reject{
		{Source: "gl", Location: "gl.csv:7", Reason: `bad amount: amount "bad" is not a number`, Raw: "E2,1,2025-01-31,6200,,bad,"},
	})
}

func TestLedgerRejects(t *testing.T) {
	// Every bad row is rejected with file:line (header = line 1) and why;
	// the good rows around it are stored. Reasons are the package's words.
	content := ledgerHeader +
		"G1,1,2025-01-31,6200,WELD,100.00,good\n" + // 2
		"B1,1,2025-02-30,6200,WELD,100.00,no such day\n" + // 3
		"B2,1,31/01/2025,6200,WELD,100.00,wrong layout\n" + // 4
		"B3,1,2025-01-31,6200,WELD,12.345,too precise\n" + // 5
		"B4,1,2025-01-31,6200,WELD,\"12,50\",decimal comma undeclared\n" + // 6
		"B5,1,2025-01-31,6200,WELD,n/a,not a number\n" + // 7
		"B6,1,2025-01-31,6200,WELD,,empty amount\n" + // 8
		"B7,1,2025-01-31,,WELD,1.00,no account\n" + // 9
		",1,2025-01-31,6200,WELD,1.00,no entry\n" + // 10
		"B9,1,2025-01-31,6200,WELD,1.00\n" + // 11: six fields
		"B10,1,2025-01-31,6200,WELD,1.00,x,extra\n" + // 12: eight fields
		"B11,1,2025-01-31,6200,WELD,1.00,a \"quoted\" word\n" + // 13: bare quote
		"B12,1,2025-01-31,6200,WELD,1.00,\"closed\"early\n" + // 14: text after a closing quote
		"B13,0,2025-01-31,6200,WELD,1.00,line zero\n" + // 15
		"B14,x,2025-01-31,6200,WELD,1.00,line not a number\n" + // 16
		"B15,1,,6200,WELD,1.00,no date\n" + // 17
		"B16,1,2025-01-31,6200,WELD,1e3,exponent\n" + // 18
		"G2,1,2025-01-31,6300,,-5.00,\"good, after the bad ones\"\n" // 19
	rec, n := readLedger(t, writeFile(t, "gl.csv", content), options())
	if n != 18 {
		t.Errorf("read %d rows, want 18", n)
	}
	if len(rec.Lines) != 2 || rec.Lines[0].EntryID != "G1" || rec.Lines[1].EntryID != "G2" || rec.Lines[1].AmountMinor != -500 ||
		rec.Lines[1].Description != "good, after the bad ones" {
		t.Errorf("stored %+v, want G1 and G2", rec.Lines)
	}
	checkRejects(t, rec.Rejects, []costdrift.Reject{
		rej("gl", "gl.csv:3", `bad date "2025-02-30": want YYYY-MM-DD`, "B1,1,2025-02-30,6200,WELD,100.00,no such day"),
		rej("gl", "gl.csv:4", `bad date "31/01/2025": want YYYY-MM-DD; set date_format (e.g. DD/MM/YYYY)`, "B2,1,31/01/2025,6200,WELD,100.00,wrong layout"),
		rej("gl", "gl.csv:5", `bad amount: amount "12.345": more decimals than the currency's minor unit (EUR has 2)`, "B3,1,2025-01-31,6200,WELD,12.345,too precise"),
		rej("gl", "gl.csv:6", `bad amount: amount "12,50" has a ','; declare decimal_comma or thousands_separator for this source (with decimal_comma: true it reads as 12.50)`, `B4,1,2025-01-31,6200,WELD,"12,50",decimal comma undeclared`),
		rej("gl", "gl.csv:7", `bad amount: amount "n/a" is not a number`, "B5,1,2025-01-31,6200,WELD,n/a,not a number"),
		rej("gl", "gl.csv:8", `bad amount: empty amount`, "B6,1,2025-01-31,6200,WELD,,empty amount"),
		rej("gl", "gl.csv:9", "missing account", "B7,1,2025-01-31,,WELD,1.00,no account"),
		rej("gl", "gl.csv:10", "missing entry_id", ",1,2025-01-31,6200,WELD,1.00,no entry"),
		rej("gl", "gl.csv:11", "has 6 fields, the header has 7", "B9,1,2025-01-31,6200,WELD,1.00"),
		rej("gl", "gl.csv:12", "has 8 fields, the header has 7", "B10,1,2025-01-31,6200,WELD,1.00,x,extra"),
		rej("gl", "gl.csv:13", `malformed CSV: bare " in non-quoted-field`, `B11,1,2025-01-31,6200,WELD,1.00,a "quoted" word`),
		rej("gl", "gl.csv:14", `malformed CSV: extraneous or missing " in quoted-field`, `B12,1,2025-01-31,6200,WELD,1.00,"closed"early`),
		rej("gl", "gl.csv:15", `bad line "0": want a whole number from 1`, "B13,0,2025-01-31,6200,WELD,1.00,line zero"),
		rej("gl", "gl.csv:16", `bad line "x": want a whole number from 1`, "B14,x,2025-01-31,6200,WELD,1.00,line not a number"),
		rej("gl", "gl.csv:17", "missing date", "B15,1,,6200,WELD,1.00,no date"),
		rej("gl", "gl.csv:18", `bad amount: amount "1e3" is in exponent notation`, "B16,1,2025-01-31,6200,WELD,1e3,exponent"),
	})
}

func TestLedgerRejectedDebitCredit(t *testing.T) {
	path := writeFile(t, "gl.csv", "entry_id;date;account;debit;credit\n"+
		"E1;2025-01-31;6200;;\n"+
		"E2;2025-01-31;6200;1.001;\n"+
		"E3;2025-01-31;6200;;x\n")
	rec, _ := readLedger(t, path, options())
	if len(rec.Lines) != 0 {
		t.Errorf("stored %+v, want nothing", rec.Lines)
	}
	checkRejects(t, rec.Rejects, []costdrift.Reject{
		rej("gl", "gl.csv:2", "missing amount: both debit and credit are empty", "E1;2025-01-31;6200;;"),
		rej("gl", "gl.csv:3", `bad debit: amount "1.001": more decimals than the currency's minor unit (EUR has 2)`, "E2;2025-01-31;6200;1.001;"),
		rej("gl", "gl.csv:4", `bad credit: amount "x" is not a number`, "E3;2025-01-31;6200;;x"),
	})
}

func TestLedgerMalformedRowSpanningLines(t *testing.T) {
	// An opening quote that never closes swallows the rest of the file:
	// one reject, located at the line where the row starts, holding the
	// text as written.
	path := writeFile(t, "gl.csv", ledgerHeader+
		"E1,1,2025-01-31,6200,,1.00,ok\n"+
		"E2,1,2025-01-31,6200,,2.00,\"never closed\n"+
		"E3,1,2025-01-31,6200,,3.00,swallowed\n")
	rec, n := readLedger(t, path, options())
	if n != 2 || len(rec.Lines) != 1 {
		t.Errorf("read %d rows, stored %+v; want 2 rows and E1", n, rec.Lines)
	}
	checkRejects(t, rec.Rejects, []costdrift.Reject{
		rej("gl", "gl.csv:3", `malformed CSV: extraneous or missing " in quoted-field`,
			"E2,1,2025-01-31,6200,,2.00,\"never closed\nE3,1,2025-01-31,6200,,3.00,swallowed"),
	})
}

func TestLedgerMalformedRawAfterByteOrderMark(t *testing.T) {
	// The raw text of a malformed row is cut from the file by offset: the
	// byte-order mark before the header must not shift it.
	path := writeFile(t, "gl.csv", "\xef\xbb\xbf"+ledgerHeader+"E1,1,2025-01-31,6200,,1.00,a \"b\" c\r\n")
	rec, _ := readLedger(t, path, options())
	checkRejects(t, rec.Rejects, []costdrift.Reject{
		rej("gl", "gl.csv:2", `malformed CSV: bare " in non-quoted-field`, `E1,1,2025-01-31,6200,,1.00,a "b" c`),
	})
}

func TestLedgerWholeFileErrors(t *testing.T) {
	dir := t.TempDir()
	tests := []struct {
		name    string
		content *string // nil: no file at all
		opt     func(*Options)
		want    []string // parts of the message, in order
	}{
		{"missing file", nil, nil, []string{"cannot read gl.csv: no such file or directory"}},
		{"zero bytes", ptr(""), nil, []string{"gl.csv is empty: expected a header line and rows"}},
		{"only whitespace", ptr("  \n\n\t\r\n  "), nil, []string{"gl.csv is empty"}},
		{"only a byte-order mark", ptr("\xef\xbb\xbf\n"), nil, []string{"gl.csv is empty"}},
		{"required columns missing", ptr("id,date,acct,amount\nE1,2025-01-31,6200,1.00\n"), nil,
			[]string{"gl.csv: header has no column entry_id, account", "(found: id, date, acct, amount)", "expected entry_id, date, account and amount"}},
		{"mapping to an absent header", ptr("Voucher,date,account,amount\n"), func(o *Options) { o.Columns = map[string]string{"entry_id": "Beleg"} },
			[]string{"header has no column entry_id", "(found: Voucher, date, account, amount)"}},
		{"no amount and no debit or credit", ptr("entry_id,date,account,value\nE1,2025-01-31,6200,1.00\n"), nil,
			[]string{"gl.csv: header has neither an amount column nor debit and credit columns", "(found: entry_id, date, account, value)"}},
		{"debit without credit", ptr("entry_id,date,account,debit\n"), nil,
			[]string{"header has neither an amount column nor debit and credit columns"}},
		{"header is malformed", ptr("entry_id,\"date,account\n"), nil, []string{"gl.csv: cannot read the header line"}},
	}
	for i, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			path := filepath.Join(dir, fmt.Sprintf("case%d", i), "gl.csv")
			if tc.content != nil {
				path = writeFile(t, "gl.csv", *tc.content)
			}
			opt := options()
			if tc.opt != nil {
				tc.opt(&opt)
			}
			rec := &recorder{}
			n, err := ReadLedger(context.Background(), path, "gl.csv", opt, rec)
			if err == nil {
				t.Fatalf("no error; wrote %+v", rec)
			}
			if n != 0 || !rec.Empty() {
				t.Errorf("read %d rows and wrote %+v; a whole-file error must write nothing", n, rec)
			}
			msg := err.Error()
			oneLine(t, "error", msg)
			rest := msg
			for _, part := range tc.want {
				i := strings.Index(rest, part)
				if i < 0 {
					t.Fatalf("error %q lacks %q (in order)", msg, part)
				}
				rest = rest[i+len(part):]
			}
		})
	}
}

func ptr(s string) *string { return &s }

func TestLedgerWriterErrorStops(t *testing.T) {
	// A store that fails must stop the read at once with its error.
	path := writeFile(t, "gl.csv", ledgerHeader+
		"E1,1,2025-01-31,6200,,1.00,\n"+
		"E2,1,2025-01-31,6200,,bad,\n"+
		"E3,1,2025-01-31,6200,,3.00,\n")
	for failOn := 1; failOn <= 3; failOn++ {
		rec := &recorder{FailOn: failOn}
		n, err := ReadLedger(context.Background(), path, "gl.csv", options(), rec)
		if !errors.Is(err, errWriter) {
			t.Errorf("fail on call %d: error %v, want %v", failOn, err, errWriter)
		}
		if n != failOn || rec.Calls != failOn {
			t.Errorf("fail on call %d: read %d rows with %d calls, want %d of each", failOn, n, rec.Calls, failOn)
		}
	}
}

func TestLedgerCancelled(t *testing.T) {
	// The context is checked every 4096 rows, so a cancelled read stops
	// on row 4096 with nothing after it written.
	var b strings.Builder
	b.WriteString(ledgerHeader)
	for i := range 5000 {
		fmt.Fprintf(&b, "E%d,1,2025-01-31,6200,,1.00,\n", i)
	}
	ctx, cancel := context.WithCancel(context.Background())
	cancel()
	rec := &recorder{}
	n, err := ReadLedger(ctx, writeFile(t, "gl.csv", b.String()), "gl.csv", options(), rec)
	if !errors.Is(err, context.Canceled) {
		t.Fatalf("error %v, want context.Canceled", err)
	}
	if n != 4096 || len(rec.Lines) != 4095 {
		t.Errorf("read %d rows, stored %d; want 4096 and 4095", n, len(rec.Lines))
	}
}

func TestLedgerFixtureCanonical(t *testing.T) {
	path := filepath.Join("..", "..", "testdata", "csv", "ledger_comma_iso", "gl.csv")
	rec := &recorder{}
	opt := options()
	opt.Source = "erp"
	n, err := ReadLedger(context.Background(), path, "data/gl.csv", opt, rec)
	if err != nil {
		t.Fatal(err)
	}
	if n != 8 {
		t.Errorf("read %d rows, want 8", n)
	}
	// Amounts in cents by hand from the file.
	want := []costdrift.LedgerLine{
		gl("erp", "JE-2025-0101", 1, "2025-01-31", "2025-01", "6200", "WELD", 431275, "Weld wire and gas, January"),
		gl("erp", "JE-2025-0101", 2, "2025-01-31", "2025-01", "2100", "", -431275, "Supplier invoice Quillmoor Metals"),
		gl("erp", "JE-2025-0102", 1, "2025-01-31", "2025-01", "6100", "PAINT", 189000, "Paint line power"),
		gl("erp", "JE-2025-0102", 2, "2025-01-31", "2025-01", "2100", "", -189000, "Utility payable"),
		gl("erp", "JE-2025-0201", 1, "2025-02-28", "2025-02", "6200", "WELD", 398740, "Weld wire and gas, February"),
		gl("erp", "JE-2025-0201", 2, "2025-02-28", "2025-02", "2100", "", -398740, "Supplier invoice Quillmoor Metals"),
		gl("erp", "JE-2025-0203", 1, "2025-02-28", "2025-02", "6500", "", 250000, "Rent of hall B"),
	}
	if !reflect.DeepEqual(rec.Lines, want) {
		t.Errorf("lines:\n got  %+v\n want %+v", rec.Lines, want)
	}
	checkRejects(t, rec.Rejects, []costdrift.Reject{
		rej("erp", "data/gl.csv:8", `bad date "2025-02-30": want YYYY-MM-DD`, "JE-2025-0202,1,2025-02-30,6100,PAINT,1775.00,Paint line power"),
	})
}

func TestLedgerFixtureSemicolonDecimalComma(t *testing.T) {
	// A spreadsheet export: byte-order mark, ';', CRLF, DD.MM.YYYY, decimal
	// comma with "." thousands, debit and credit columns under local names.
	path := filepath.Join("..", "..", "testdata", "csv", "ledger_semicolon_decimal_comma", "buchungen.csv")
	opt := options()
	opt.DateLayout = "02.01.2006"
	opt.Notation = money.Notation{DecimalComma: true, ThousandsSeparator: "."}
	opt.Columns = map[string]string{"entry_id": "Beleg", "date": "Datum", "account": "Konto", "cost_center": "Kostenstelle",
		"debit": "Soll", "credit": "Haben", "description": "Buchungstext"}
	rec := &recorder{}
	n, err := ReadLedger(context.Background(), path, "buchungen.csv", opt, rec)
	if err != nil {
		t.Fatal(err)
	}
	if n != 5 {
		t.Errorf("read %d rows, want 5 (the empty line is not a row)", n)
	}
	// 1.234,56 = 123456 cents; 250,5 credit = -25050 cents (by hand).
	want := []costdrift.LedgerLine{
		gl("gl", "B-17", 1, "2025-02-03", "2025-02", "6200", "WELD", 123456, "Schweißdraht"),
		gl("gl", "B-17", 2, "2025-02-03", "2025-02", "1600", "", -123456, "Verbindlichkeit"),
		gl("gl", "B-18", 1, "2025-02-28", "2025-02", "6100", "PAINT", -25050, "Gutschrift Strom"),
	}
	if !reflect.DeepEqual(rec.Lines, want) {
		t.Errorf("lines:\n got  %+v\n want %+v", rec.Lines, want)
	}
	checkRejects(t, rec.Rejects, []costdrift.Reject{
		rej("gl", "buchungen.csv:4", "has 8 fields, the header has 7", "B-18;28.02.2025;6100;PAINT;12.000,00;;Stromabrechnung; Februar"),
		rej("gl", "buchungen.csv:7", `bad date "31.02.2025": want DD.MM.YYYY`, "B-19;31.02.2025;6500;;800,00;;Miete"),
	})
}

func TestLedgerMalformedRawIsCapped(t *testing.T) {
	// An unclosed quote near the top of a large file must not copy the
	// rest of the file into one reject.
	var b strings.Builder
	b.WriteString(ledgerHeader + "E1,1,2025-01-31,6200,,1.00,\"open\n")
	for i := range 1000 {
		fmt.Fprintf(&b, "E%d,1,2025-01-31,6200,,1.00,swallowed\n", i+2)
	}
	rec, _ := readLedger(t, writeFile(t, "gl.csv", b.String()), options())
	if len(rec.Rejects) != 1 {
		t.Fatalf("got %d rejects, want 1", len(rec.Rejects))
	}
	raw := rec.Rejects[0].Raw
	if len(raw) != maxRaw || !strings.HasPrefix(raw, "E1,1,2025-01-31,6200,,1.00,\"open\nE2,1,") {
		t.Errorf("raw has %d bytes and starts %q; want %d bytes from the row's start", len(raw), raw[:min(40, len(raw))], maxRaw)
	}
}

func TestLedgerFolderIsNotAFile(t *testing.T) {
	// A source glob such as data/* can match a folder.
	rec := &recorder{}
	n, err := ReadLedger(context.Background(), t.TempDir(), "data/archive", options(), rec)
	if err == nil || err.Error() != "cannot read data/archive: it is a folder, not a file" {
		t.Errorf("error %v, want the folder named", err)
	}
	if n != 0 || !rec.Empty() {
		t.Errorf("read %d rows, wrote %+v", n, rec)
	}
}

func TestLedgerGroupingAndBound(t *testing.T) {
	// "," thousands: only digits grouped in threes are amounts. Each bad
	// one below was stored as another amount before the grouping was
	// checked (1,23 as 123.00; 12,3456 and 1,234,56 as 123456.00), and the
	// reject quotes it as the file writes it. Minor units by hand (EUR, two
	// decimals, ISO 4217).
	opt := options()
	opt.Notation = money.Notation{ThousandsSeparator: ","}
	path := writeFile(t, "gl.csv", "entry_id;date;account;amount\n"+
		"G1;2025-01-31;6200;1,234.56\n"+ // 2: 123456
		"B1;2025-01-31;6200;1,23\n"+ // 3
		"B2;2025-01-31;6200;12,3456\n"+ // 4
		"B3;2025-01-31;6200;1,234,56\n"+ // 5
		"B4;2025-01-31;6200;9,999,999,999,999,999.99\n"+ // 6: ten such lines overflowed a period's total
		"G2;2025-01-31;6200;-99,999,999,999,999.99\n"+ // 7: the bound itself, -9999999999999999
		"B5;2025-01-31;6200;(100,000,000,000,000.00)\n") // 8: one cent beyond it
	rec, n := readLedger(t, path, opt)
	if n != 7 {
		t.Errorf("read %d rows, want 7", n)
	}
	if len(rec.Lines) != 2 || rec.Lines[0].AmountMinor != 123456 || rec.Lines[1].AmountMinor != -9999999999999999 {
		t.Errorf("stored %+v, want G1 at 123456 and G2 at -9999999999999999", rec.Lines)
	}
	const grouping = `digits are not grouped in threes by the thousands separator "," (as in 1,234,567)`
	const bound = `is out of range: costdrift stores at most 99,999,999,999,999.99 EUR either side of zero`
	checkRejects(t, rec.Rejects, []costdrift.Reject{
		rej("gl", "gl.csv:3", `bad amount: amount "1,23": `+grouping, "B1;2025-01-31;6200;1,23"),
		rej("gl", "gl.csv:4", `bad amount: amount "12,3456": `+grouping, "B2;2025-01-31;6200;12,3456"),
		rej("gl", "gl.csv:5", `bad amount: amount "1,234,56": `+grouping, "B3;2025-01-31;6200;1,234,56"),
		rej("gl", "gl.csv:6", `bad amount: amount "9,999,999,999,999,999.99" `+bound, "B4;2025-01-31;6200;9,999,999,999,999,999.99"),
		rej("gl", "gl.csv:8", `bad amount: amount "(100,000,000,000,000.00)" `+bound, "B5;2025-01-31;6200;(100,000,000,000,000.00)"),
	})
}

func TestLedgerGroupingEuropean(t *testing.T) {
	// Decimal comma, "." thousands: "1234.56" is no amount here (it was
	// stored as 123456.00), and "1,2,3" is quoted as written, not as the
	// "1.2,3" the comma made of it.
	opt := options()
	opt.Notation = money.Notation{DecimalComma: true, ThousandsSeparator: "."}
	path := writeFile(t, "gl.csv", "entry_id;date;account;amount\n"+
		"G1;2025-01-31;6200;1.234,56\n"+ // 2: 123456
		"B1;2025-01-31;6200;1234.56\n"+ // 3
		"B2;2025-01-31;6200;1,2,3\n"+ // 4
		"B3;2025-01-31;6200;100.000.000.000.000,00\n") // 5: one cent beyond the bound
	rec, _ := readLedger(t, path, opt)
	if len(rec.Lines) != 1 || rec.Lines[0].AmountMinor != 123456 {
		t.Errorf("stored %+v, want G1 at 123456", rec.Lines)
	}
	checkRejects(t, rec.Rejects, []costdrift.Reject{
		rej("gl", "gl.csv:3", `bad amount: amount "1234.56": digits are not grouped in threes by the thousands separator "." (as in 1.234.567)`,
			"B1;2025-01-31;6200;1234.56"),
		rej("gl", "gl.csv:4", `bad amount: amount "1,2,3" is not a number`, "B2;2025-01-31;6200;1,2,3"),
		rej("gl", "gl.csv:5", `bad amount: amount "100.000.000.000.000,00" is out of range: costdrift stores at most 99.999.999.999.999,99 EUR either side of zero`,
			"B3;2025-01-31;6200;100.000.000.000.000,00"),
	})
}

func TestLedgerDebitMinusCreditBound(t *testing.T) {
	// Debit and credit each within the bound, but debit - credit beyond it:
	// 60,000,000,000,000.00 - (-60,000,000,000,000.00) = 120,000,000,000,000.00.
	path := writeFile(t, "gl.csv", "entry_id;date;account;debit;credit\n"+
		"B1;2025-01-31;6200;60000000000000.00;-60000000000000.00\n"+
		"G1;2025-01-31;6200;60000000000000.00;10000000000000.00\n") // 5,000,000,000,000,000 minor units
	rec, _ := readLedger(t, path, options())
	if len(rec.Lines) != 1 || rec.Lines[0].AmountMinor != 5000000000000000 {
		t.Errorf("stored %+v, want G1 at 5000000000000000", rec.Lines)
	}
	checkRejects(t, rec.Rejects, []costdrift.Reject{
		rej("gl", "gl.csv:2", `bad amount: debit "60000000000000.00" minus credit "-60000000000000.00" is out of range: costdrift stores at most 99999999999999.99 EUR either side of zero`,
			"B1;2025-01-31;6200;60000000000000.00;-60000000000000.00"),
	})
}
