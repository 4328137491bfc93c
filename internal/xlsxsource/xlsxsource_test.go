package xlsxsource

import (
	"archive/zip"
	"bytes"
	"context"
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"reflect"
	"runtime"
	"strings"
	"testing"
	"time"

	"github.com/xuri/excelize/v2"

	"github.com/costdrift/costdrift/internal/canon"
	"github.com/costdrift/costdrift/internal/costdrift"
	"github.com/costdrift/costdrift/internal/costdrift/costdrifttest"
	"github.com/costdrift/costdrift/internal/money"
)

// Expected values in these tests are worked out by hand from the cells
// written beside them: a reader copies, splits and converts, and the
// conversions are facts of the trade (common practice): EUR has two decimals
// of minor unit and JPY none (ISO 4217), so 1234.5 EUR is 123450 cents;
// debit is positive and credit negative in a signed amount. Day numbers of
// date cells are checked against excelize's own conversion
// (excelize.ExcelDateToTime, a general-purpose spreadsheet library) and
// against anchors of the 1900 date system recalled from memory. Every
// workbook is written by excelize inside the test, with invented rows.

// recorder is the shared test writer: it keeps what readers write, in order,
// and fails on a chosen call to test that readers stop.
type recorder = costdrifttest.Recorder

var errWriter = costdrifttest.ErrWriter

var eur = money.Currency{Code: "EUR", Exponent: 2}

func options() Options {
	return Options{Source: "gl", Currency: eur, Period: func(d time.Time) string { return d.Format("2006-01") }}
}

// Cell values for writeSheet beyond what excelize.SetCellValue takes.
type (
	// num is a number cell whose stored text is given exactly, as a
	// spreadsheet writes it (up to 17 significant digits).
	num string
	// formatted is a value under a custom number format.
	formatted struct {
		v      any
		format string
	}
)

func day(y int, m time.Month, d int) time.Time { return time.Date(y, m, d, 0, 0, 0, 0, time.UTC) }

// writeSheet writes rows from A1 down into the named sheet; nil leaves a
// cell empty and an empty row leaves the row out of the file.
func writeSheet(t *testing.T, f *excelize.File, sheet string, rows [][]any) {
	t.Helper()
	if _, err := f.GetSheetIndex(sheet); err != nil {
		t.Fatal(err)
	}
	if idx, _ := f.GetSheetIndex(sheet); idx < 0 {
		if _, err := f.NewSheet(sheet); err != nil {
			t.Fatal(err)
		}
	}
	for r, row := range rows {
		for c, v := range row {
			ref, _ := excelize.CoordinatesToCellName(c+1, r+1)
			if err := put(f, sheet, ref, v); err != nil {
				t.Fatal(err)
			}
		}
	}
}

func put(f *excelize.File, sheet, ref string, v any) error {
	switch v := v.(type) {
	case nil:
		return nil
	case num:
		return f.SetCellDefault(sheet, ref, string(v))
	case formatted:
		if err := put(f, sheet, ref, v.v); err != nil {
			return err
		}
		code := v.format
		style, err := f.NewStyle(&excelize.Style{CustomNumFmt: &code})
		if err != nil {
			return err
		}
		return f.SetCellStyle(sheet, ref, ref, style)
	default:
		return f.SetCellValue(sheet, ref, v)
	}
}

// book writes a one-sheet workbook (Sheet1) and returns its path.
func book(t *testing.T, rows [][]any) string {
	t.Helper()
	f := excelize.NewFile()
	writeSheet(t, f, "Sheet1", rows)
	return save(t, f, "gl.xlsx")
}

func save(t *testing.T, f *excelize.File, name string, opts ...excelize.Options) string {
	t.Helper()
	path := filepath.Join(t.TempDir(), name)
	if err := f.SaveAs(path, opts...); err != nil {
		t.Fatal(err)
	}
	return path
}

var ledgerHeader = []any{"entry_id", "line", "date", "account", "cost_center", "amount", "description"}

func TestReadLedgerSignedAmounts(t *testing.T) {
	path := book(t, [][]any{
		ledgerHeader,
		{"E1", 1, day(2025, 1, 15), "6100", "WELD", 1234.5, "tubing"},  // date cell, number cell
		{"E1", 2, "2025-01-15", 2000, nil, num("-1234.5"), "payable"},  // text date, account as a number
		{"E2", 1, day(2025, 2, 28), "6200", "PAINT", "99.95", "paint"}, // text amount
		{"E3", 1, day(2025, 3, 1), "6300", "", num("0.30000000000000004"), "0.1 + 0.2 as stored"},
	})
	var w recorder
	n, err := ReadLedger(context.Background(), path, "gl.xlsx", options(), &w)
	if err != nil {
		t.Fatal(err)
	}
	// Hand-worked: 1234.5 EUR = 123450 cents; 99.95 = 9995; 0.30000000000000004
	// lies 4e-17 from 0.30, within the 1e-9 tolerance, so 30 cents.
	want := []costdrift.LedgerLine{
		{Source: "gl", EntryID: "E1", Line: 1, PostedOn: "2025-01-15", Period: "2025-01", Account: "6100", CostCenter: "WELD", AmountMinor: 123450, Description: "tubing"},
		{Source: "gl", EntryID: "E1", Line: 2, PostedOn: "2025-01-15", Period: "2025-01", Account: "2000", AmountMinor: -123450, Description: "payable"},
		{Source: "gl", EntryID: "E2", Line: 1, PostedOn: "2025-02-28", Period: "2025-02", Account: "6200", CostCenter: "PAINT", AmountMinor: 9995, Description: "paint"},
		{Source: "gl", EntryID: "E3", Line: 1, PostedOn: "2025-03-01", Period: "2025-03", Account: "6300", AmountMinor: 30, Description: "0.1 + 0.2 as stored"},
	}
	if n != 4 || len(w.Rejects) != 0 || !reflect.DeepEqual(w.Lines, want) {
		t.Fatalf("read %d, rejects %v\ngot  %+v\nwant %+v", n, w.Rejects, w.Lines, want)
	}
}

func TestReadLedgerDebitCredit(t *testing.T) {
	path := book(t, [][]any{
		{"entry_id", "date", "account", "debit", "credit"}, // no line column
		{"E1", day(2025, 4, 30), "6100", 500, nil},
		{"E1", day(2025, 4, 30), "2000", nil, "500.00"},
		{"E2", day(2025, 4, 30), "6100", num("10.1"), num("0.1")},
		{"E1", day(2025, 4, 30), "6900", 0.25, nil},
	})
	var w recorder
	if _, err := ReadLedger(context.Background(), path, "gl.xlsx", options(), &w); err != nil {
		t.Fatal(err)
	}
	// Hand-worked: amount = debit - credit in cents; lines numbered within
	// their entry in sheet order (E1 gets 1, 2, 3 across the sheet).
	type got struct {
		entry  string
		line   int
		amount int64
	}
	var g []got
	for _, l := range w.Lines {
		g = append(g, got{l.EntryID, l.Line, l.AmountMinor})
	}
	want := []got{{"E1", 1, 50000}, {"E1", 2, -50000}, {"E2", 1, 1000}, {"E1", 3, 25}}
	if !reflect.DeepEqual(g, want) || len(w.Rejects) != 0 {
		t.Fatalf("got %v, rejects %v; want %v", g, w.Rejects, want)
	}
}

// A number cell carries no notation; text does. With a decimal comma and
// "." thousands the same sheet can hold both, and only the cell type says
// whether "1.500" is one and a half or fifteen hundred.
func TestReadLedgerNotationAppliesToTextOnly(t *testing.T) {
	path := book(t, [][]any{
		{"entry_id", "date", "account", "amount"},
		{"E1", day(2025, 1, 2), "6100", 1234.5},
		{"E2", day(2025, 1, 2), "6100", "1.234,50"},
		{"E3", day(2025, 1, 2), "6100", "1.500"},
		{"E4", day(2025, 1, 2), "6100", num("1.5")},
	})
	opt := options()
	opt.Notation = money.Notation{DecimalComma: true, ThousandsSeparator: "."}
	var w recorder
	if _, err := ReadLedger(context.Background(), path, "gl.xlsx", opt, &w); err != nil {
		t.Fatal(err)
	}
	var got []int64
	for _, l := range w.Lines {
		got = append(got, l.AmountMinor)
	}
	// Hand-worked: 1234.5 -> 123450; "1.234,50" -> 1234.50 -> 123450;
	// "1.500" -> 1500 -> 150000; the number 1.5 -> 150.
	if want := []int64{123450, 123450, 150000, 150}; !reflect.DeepEqual(got, want) || len(w.Rejects) != 0 {
		t.Fatalf("amounts %v, rejects %v; want %v", got, w.Rejects, want)
	}
}

func TestNumberMinor(t *testing.T) {
	jpy := money.Currency{Code: "JPY", Exponent: 0}
	tests := []struct {
		name string
		text string
		cur  money.Currency
		want int64
		err  string // "" when the amount is read
	}{
		// Expected values hand-worked; the tolerance is 1e-9 currency units.
		{"exact half", "1234.5", eur, 123450, ""},
		{"negative", "-1234.5", eur, -123450, ""},
		{"whole", "250", eur, 25000, ""},
		{"float artefact above", "0.30000000000000004", eur, 30, ""},
		{"float artefact below", "0.29999999999999999", eur, 30, ""},
		{"negative artefact", "-0.30000000000000004", eur, -30, ""},
		{"exponent", "1.5E+3", eur, 150000, ""},
		{"small exponent", "1E-2", eur, 1, ""},
		{"exactly 1e-9 off", "0.300000001", eur, 30, ""},
		{"just over 1e-9 off", "0.3000000011", eur, 0, "number 0.3000000011: more decimals than the currency's minor unit (EUR has 2)"},
		{"a real third decimal", "1234.567", eur, 0, "number 1234.567: more decimals than the currency's minor unit (EUR has 2)"},
		{"half a cent", "0.005", eur, 0, "number 0.005: more decimals than the currency's minor unit (EUR has 2)"},
		{"yen", "1234", jpy, 1234, ""},
		{"yen artefact", "1233.9999999999998", jpy, 1234, ""},
		{"yen with decimals", "1234.5", jpy, 0, "number 1234.5: more decimals than the currency's minor unit (JPY has 0)"},
		{"fraction is not a number", "1/3", eur, 0, `number "1/3": not a decimal number`},
		{"hexadecimal is not a number", "0x10", eur, 0, `number "0x10": not a decimal number`},
		{"out of range", "1E+30", eur, 0, "number 1E+30 is out of range: costdrift stores at most 99999999999999.99 EUR either side of zero"},
		// The bound is 10^16 - 1 minor units (money.MaxMinor).
		{"the bound", "99999999999999.99", eur, 9999999999999999, ""},
		{"the bound, yen", "-9999999999999999", jpy, -9999999999999999, ""},
		{"one cent beyond the bound", "100000000000000", eur, 0, "number 100000000000000 is out of range: costdrift stores at most 99999999999999.99 EUR either side of zero"},
		{"ten quadrillion", "9999999999999999.99", eur, 0, "number 9999999999999999.99 is out of range: costdrift stores at most 99999999999999.99 EUR either side of zero"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			got, err := numberMinor(tc.text, tc.cur)
			if tc.err != "" {
				if err == nil || err.Error() != tc.err {
					t.Fatalf("got %d, %v; want error %q", got, err, tc.err)
				}
				return
			}
			if err != nil || got != tc.want {
				t.Fatalf("got %d, %v; want %d", got, err, tc.want)
			}
		})
	}
}

func TestReadLedgerDates(t *testing.T) {
	path := book(t, [][]any{
		{"entry_id", "date", "account", "amount"},
		{"E1", day(2025, 1, 15), "6100", 1},                                        // built-in date format 14
		{"E2", time.Date(2025, 1, 31, 23, 59, 0, 0, time.UTC), "6100", 1},          // date and time, format 22
		{"E3", formatted{num("45672"), "dd.mm.yyyy"}, "6100", 1},                   // serial under a custom format
		{"E4", formatted{num("45672.75"), "[$-407]d. mmmm yyyy hh:mm"}, "6100", 1}, // locale prefix, time of day
		{"E5", "15.01.2025", "6100", 1},                                            // text in the source's layout
		{"E6", 20250115, "6100", 1},                                                // a General number read with the layout YYYYMMDD fails
	})
	opt := options()
	opt.DateLayout = "02.01.2006"
	var w recorder
	if _, err := ReadLedger(context.Background(), path, "gl.xlsx", opt, &w); err != nil {
		t.Fatal(err)
	}
	var got []string
	for _, l := range w.Lines {
		got = append(got, l.EntryID+" "+l.PostedOn)
	}
	// Hand-worked: serial 45672 = 1899-12-30 + 45672 days = 2025-01-15; the
	// fraction .75 is 18:00 of that day; 23:59 stays on the 31st.
	want := []string{"E1 2025-01-15", "E2 2025-01-31", "E3 2025-01-15", "E4 2025-01-15", "E5 2025-01-15"}
	if !reflect.DeepEqual(got, want) {
		t.Fatalf("got %v, want %v", got, want)
	}
	if len(w.Rejects) != 1 || w.Rejects[0].Location != "gl.xlsx:Sheet1!7" ||
		w.Rejects[0].Reason != "bad date 20250115: a number without a date format; format the column as a date or write DD.MM.YYYY" {
		t.Fatalf("rejects %+v", w.Rejects)
	}
}

func TestReadLedgerDate1904(t *testing.T) {
	f := excelize.NewFile()
	yes := true
	if err := f.SetWorkbookProps(&excelize.WorkbookPropsOptions{Date1904: &yes}); err != nil {
		t.Fatal(err)
	}
	writeSheet(t, f, "Sheet1", [][]any{
		{"entry_id", "date", "account", "amount"},
		{"E1", day(2025, 1, 15), "6100", 1},
		{"E2", formatted{num("44210"), "yyyy-mm-dd"}, "6100", 1},
	})
	path := save(t, f, "gl.xlsx")
	var w recorder
	if _, err := ReadLedger(context.Background(), path, "gl.xlsx", options(), &w); err != nil {
		t.Fatal(err)
	}
	// Hand-worked: in the 1904 system 2025-01-15 is 1904-01-01 + 44210 days.
	if len(w.Lines) != 2 || w.Lines[0].PostedOn != "2025-01-15" || w.Lines[1].PostedOn != "2025-01-15" {
		t.Fatalf("lines %+v rejects %+v", w.Lines, w.Rejects)
	}
}

func TestSerialDay(t *testing.T) {
	anchors := []struct {
		serial string
		want   string
	}{
		// Anchors of the 1900 date system, from memory: serial 1 is the
		// first day, 59 the last of February 1900, 61 the first of March
		// after the 29 February that never was.
		{"1", "1900-01-01"}, {"59", "1900-02-28"}, {"61", "1900-03-01"},
		{"36526", "2000-01-01"}, {"45658", "2025-01-01"}, {"45658.999999", "2025-01-01"},
	}
	for _, a := range anchors {
		d, why := serialDay(a.serial, false)
		if why != "" || d.Format("2006-01-02") != a.want {
			t.Errorf("serial %s: got %v %q, want %s", a.serial, d, why, a.want)
		}
	}
	// Every whole serial of two centuries agrees with excelize's conversion,
	// in both date systems (the 1900 system's nonexistent day 60 aside).
	for s := 1; s < 73050; s++ {
		if s == 60 {
			continue
		}
		for _, d1904 := range []bool{false, true} {
			want, err := excelize.ExcelDateToTime(float64(s), d1904)
			if err != nil {
				t.Fatal(err)
			}
			got, why := serialDay(fmt.Sprint(s), d1904)
			if why != "" || !got.Equal(want) {
				t.Fatalf("serial %d (1904: %v): got %v %q, excelize %v", s, d1904, got, why, want)
			}
		}
	}
	for _, bad := range []struct{ serial, why string }{
		{"60", "bad date: serial 60 is 1900-02-29, a day that does not exist"},
		{"0.5", "bad date: the date cell holds 0.5, a time of day without a date"},
		{"2958466", "bad date: serial 2958466 is after 9999-12-31"},
	} {
		if _, why := serialDay(bad.serial, false); why != bad.why {
			t.Errorf("serial %s: got %q, want %q", bad.serial, why, bad.why)
		}
	}
}

func TestIsDateFormat(t *testing.T) {
	str := func(s string) *string { return &s }
	tests := []struct {
		name   string
		id     int
		custom *string
		want   bool
	}{
		// Built-in ids per ECMA-376 Part 1, 18.8.30, from memory.
		{"General", 0, nil, false},
		{"0.00", 2, nil, false},
		{"#,##0.00", 4, nil, false},
		{"m/d/yyyy", 14, nil, true},
		{"m/d/yy h:mm", 22, nil, true},
		{"mm:ss", 45, nil, true},
		{"@ text", 49, nil, false},
		{"custom day first", 0, str("dd.mm.yyyy"), true},
		{"custom time", 0, str("hh:mm"), true},
		{"custom with locale", 0, str("[$-407]d. mmmm yyyy"), true},
		{"amount with quoted unit", 0, str(`#,##0.00 "days"`), false},
		{"amount with currency bracket", 0, str("#,##0.00 [$€-407]"), false},
		{"amount red negatives", 0, str("#,##0.00;[Red]-#,##0.00"), false},
		{"accounting with fill", 0, str(`_-* #,##0.00\ "€"_-;\-* #,##0.00\ "€"_-;_-* "-"??\ "€"_-;_-@_-`), false},
		{"scientific", 0, str("0.00E+00"), false},
		{"escaped letters", 0, str(`0.0\h`), false},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			if got := isDateFormat(tc.id, tc.custom); got != tc.want {
				t.Fatalf("isDateFormat(%d, %v) = %v, want %v", tc.id, tc.custom, got, tc.want)
			}
		})
	}
}

func TestReadLedgerMappedHeaderBelowBlankRows(t *testing.T) {
	path := book(t, [][]any{
		{}, // rows 1 and 2 are left out of the file
		{},
		{"Beleg", "Datum", "Konto", "Kostenstelle", "Betrag", "Buchungstext"},
		{"B-7", day(2025, 6, 3), "6100", "ASSY", 42.1, "Verpackung"},
		{"B-8", day(2025, 6, 4), "", "ASSY", 1, "ohne Konto"},
	})
	opt := options()
	opt.Columns = map[string]string{"entry_id": "Beleg", "date": "datum", "account": "Konto",
		"cost_center": "Kostenstelle", "amount": "Betrag", "description": "Buchungstext"}
	var w recorder
	n, err := ReadLedger(context.Background(), path, "gl.xlsx", opt, &w)
	if err != nil {
		t.Fatal(err)
	}
	want := costdrift.LedgerLine{Source: "gl", EntryID: "B-7", Line: 1, PostedOn: "2025-06-03", Period: "2025-06",
		Account: "6100", CostCenter: "ASSY", AmountMinor: 4210, Description: "Verpackung"}
	if n != 2 || len(w.Lines) != 1 || w.Lines[0] != want {
		t.Fatalf("read %d, lines %+v", n, w.Lines)
	}
	// The reject is located on the row a spreadsheet shows: 5.
	if len(w.Rejects) != 1 || w.Rejects[0] != (costdrift.Reject{Source: "gl", Location: "gl.xlsx:Sheet1!5",
		Reason: "missing account", Raw: "B-8,45812,,ASSY,1,ohne Konto"}) {
		t.Fatalf("rejects %+v", w.Rejects)
	}
}

func TestReadLedgerSheetByNameOrPosition(t *testing.T) {
	f := excelize.NewFile()
	if err := f.SetSheetName("Sheet1", "Notes"); err != nil {
		t.Fatal(err)
	}
	writeSheet(t, f, "Notes", [][]any{{"entry_id", "date", "account", "amount"}, {"N1", day(2025, 1, 1), "6100", 1}})
	writeSheet(t, f, "GL 2025", [][]any{{"entry_id", "date", "account", "amount"}, {"G1", day(2025, 1, 1), "6100", 1}})
	writeSheet(t, f, "3", [][]any{{"entry_id", "date", "account", "amount"}, {"T1", day(2025, 1, 1), "6100", 1}})
	path := save(t, f, "book.xlsx")

	for _, tc := range []struct{ sheet, entry, location string }{
		{"", "N1", "book.xlsx:Notes!2"},
		{"GL 2025", "G1", "book.xlsx:GL 2025!2"},
		{"gl 2025", "G1", "book.xlsx:GL 2025!2"}, // sheet names compare without case
		{"2", "G1", "book.xlsx:GL 2025!2"},       // position from 1
		{"3", "T1", "book.xlsx:3!2"},             // a sheet named 3 wins over the third position
	} {
		opt := options()
		opt.Sheet = tc.sheet
		var w recorder
		if _, err := ReadLedger(context.Background(), path, "book.xlsx", opt, &w); err != nil {
			t.Fatalf("sheet %q: %v", tc.sheet, err)
		}
		if len(w.Lines) != 1 || w.Lines[0].EntryID != tc.entry {
			t.Fatalf("sheet %q: lines %+v", tc.sheet, w.Lines)
		}
	}
	for _, tc := range []struct{ sheet, err string }{
		{"Budget", `book.xlsx has no sheet "Budget": its sheets are Notes, GL 2025, 3`},
		{"4", "book.xlsx has no sheet 4: it has 3 (Notes, GL 2025, 3)"},
		{"0", "book.xlsx has no sheet 0: it has 3 (Notes, GL 2025, 3)"},
	} {
		opt := options()
		opt.Sheet = tc.sheet
		var w recorder
		if _, err := ReadLedger(context.Background(), path, "book.xlsx", opt, &w); err == nil || err.Error() != tc.err {
			t.Fatalf("sheet %q: got %v, want %q", tc.sheet, err, tc.err)
		}
	}
}

func TestReadLedgerRejects(t *testing.T) {
	path := book(t, [][]any{
		ledgerHeader,
		{"E1", 1, day(2025, 1, 15), "6100", "WELD", 10, "kept"},                     // 2
		{"E2", 1, day(2025, 1, 15), nil, "WELD", 10, "no account"},                  // 3
		{"E3", 1, "15.01.2025", "6100", "WELD", 10, "text date, wrong layout"},      // 4
		{"E4", 1, 45672, "6100", "WELD", 10, "number without date format"},          // 5
		{"E5", 1, day(2025, 1, 15), "6100", "WELD", num("12.345"), "third decimal"}, // 6
		{"E6", 1, day(2025, 1, 15), "6100", "WELD", "12,50", "comma not declared"},  // 7
		{"E7", 1, day(2025, 1, 15), "6100", "WELD", true, "boolean"},                // 8
		{}, // 9: blank, skipped
		{"E8", 1, day(2025, 1, 15), "6100", "WELD", 10, "spill", nil, "stray"},           // 10
		{"E9", 0, day(2025, 1, 15), "6100", "WELD", 10, "line zero"},                     // 11
		{"E10", 1, day(2025, 1, 15), "6100", "WELD", day(2025, 1, 15), "date as amount"}, // 12
		{"E11", 1, day(2025, 1, 15), "6100", "WELD", nil, "no amount"},                   // 13
	})
	var w recorder
	n, err := ReadLedger(context.Background(), path, "gl.xlsx", options(), &w)
	if err != nil {
		t.Fatal(err)
	}
	if n != 11 || len(w.Lines) != 1 || w.Lines[0].EntryID != "E1" {
		t.Fatalf("read %d, lines %+v", n, w.Lines)
	}
	want := []struct{ location, reason string }{
		{"gl.xlsx:Sheet1!3", "missing account"},
		{"gl.xlsx:Sheet1!4", `bad date "15.01.2025": want YYYY-MM-DD; set date_format (e.g. DD.MM.YYYY)`},
		{"gl.xlsx:Sheet1!5", "bad date 45672: a number without a date format; format the column as a date or write YYYY-MM-DD"},
		{"gl.xlsx:Sheet1!6", "bad amount: number 12.345: more decimals than the currency's minor unit (EUR has 2)"},
		{"gl.xlsx:Sheet1!7", `bad amount: amount "12,50" has a ','; declare decimal_comma or thousands_separator for this source (with decimal_comma: true it reads as 12.50)`},
		{"gl.xlsx:Sheet1!8", "bad amount: the cell is TRUE, not an amount"},
		{"gl.xlsx:Sheet1!10", "column I has a value but the header ends at column G"},
		{"gl.xlsx:Sheet1!11", `bad line "0": want a whole number from 1`},
		{"gl.xlsx:Sheet1!12", "bad amount: the cell is a date (45672), not an amount"},
		{"gl.xlsx:Sheet1!13", "bad amount: empty amount"},
	}
	if len(w.Rejects) != len(want) {
		t.Fatalf("got %d rejects, want %d: %+v", len(w.Rejects), len(want), w.Rejects)
	}
	for i, r := range w.Rejects {
		if r.Source != "gl" || r.Location != want[i].location || r.Reason != want[i].reason {
			t.Errorf("reject %d: got %s %q, want %s %q", i, r.Location, r.Reason, want[i].location, want[i].reason)
		}
		if strings.ContainsAny(r.Reason, "\r\n") {
			t.Errorf("reject %d: reason spans lines: %q", i, r.Reason)
		}
	}
	if got := w.Rejects[1].Raw; got != "E3,1,15.01.2025,6100,WELD,10,\"text date, wrong layout\"" {
		t.Errorf("raw row: %q", got)
	}
}

func TestCellErrorsAreReasons(t *testing.T) {
	// excelize cannot write a formula error as a saved result, so the cell
	// is built directly: a t="e" cell holding #DIV/0!, under an amount, a
	// value and a text column.
	c := cell{text: "#DIV/0!", kind: errorCell}
	opt := options()
	rules := opt.rules()
	tb := &table{}
	amount := tb.canonical(canon.Amount, c, opt)
	if _, why := rules.Money(&amount, canon.Amount); why != "bad amount: the cell holds the error #DIV/0!" {
		t.Errorf("amount: %q", why)
	}
	value := tb.canonical(canon.Value, c, opt)
	if _, why := rules.Quantity(&value); why != "bad value: the cell holds the error #DIV/0!" {
		t.Errorf("value: %q", why)
	}
	var row canon.Row
	row[canon.Account] = tb.canonical(canon.Account, c, opt)
	if _, why := rules.Account(&row); why != "account: the cell holds the error #DIV/0!" {
		t.Errorf("text: %q", why)
	}
}

func TestReadActivityLong(t *testing.T) {
	path := book(t, [][]any{
		{"period", "driver", "value", "cost_center", "unit"},
		{"2025-01", "machine_hours", 412.5, "WELD", "hour"},
		{formatted{day(2025, 2, 1), "mmm yy"}, "machine_hours", "398,25", "WELD", "hour"}, // a month as a date cell; text value
		{day(2025, 3, 31), "frames_built", 120, nil, nil},
		{"2025-04", "frames_built", -3, nil, nil},
		{"2025-13", "frames_built", 3, nil, nil},
	})
	opt := options()
	opt.Source = "act"
	opt.Notation = money.Notation{DecimalComma: true}
	var w recorder
	n, err := ReadActivity(context.Background(), path, "act.xlsx", opt, &w)
	if err != nil {
		t.Fatal(err)
	}
	want := []costdrift.ActivityValue{
		{Source: "act", Period: "2025-01", Driver: "machine_hours", CostCenter: "WELD", Value: 412.5, Unit: "hour", Location: "act.xlsx:Sheet1!2"},
		{Source: "act", Period: "2025-02", Driver: "machine_hours", CostCenter: "WELD", Value: 398.25, Unit: "hour", Location: "act.xlsx:Sheet1!3"},
		{Source: "act", Period: "2025-03", Driver: "frames_built", Value: 120, Location: "act.xlsx:Sheet1!4"},
	}
	if n != 5 || !reflect.DeepEqual(w.Values, want) {
		t.Fatalf("read %d\ngot  %+v\nwant %+v", n, w.Values, want)
	}
	wantRejects := []costdrift.Reject{
		{Source: "act", Location: "act.xlsx:Sheet1!5", Reason: `bad value "-3": activity cannot be negative`, Raw: "2025-04,frames_built,-3"},
		{Source: "act", Location: "act.xlsx:Sheet1!6", Reason: `bad period "2025-13": want YYYY-MM or a date`, Raw: "2025-13,frames_built,3"},
	}
	if !reflect.DeepEqual(w.Rejects, wantRejects) {
		t.Fatalf("rejects %+v", w.Rejects)
	}
}

func TestReadActivityWide(t *testing.T) {
	path := book(t, [][]any{
		{"Monat", "cost_center", "machine_hours", "frames_built", "shipments"},
		{"2025-01", "WELD", 412.5, 120, nil},
		{day(2025, 2, 1), "WELD", 398, "abc", 7}, // one bad value rejects the whole row
		{"2025-03", "", nil, 131, 9},
	})
	opt := options()
	opt.Source = "act"
	opt.Columns = map[string]string{"period": "Monat"}
	var w recorder
	n, err := ReadActivity(context.Background(), path, "act.xlsx", opt, &w)
	if err != nil {
		t.Fatal(err)
	}
	want := []costdrift.ActivityValue{
		{Source: "act", Period: "2025-01", Driver: "machine_hours", CostCenter: "WELD", Value: 412.5, Location: "act.xlsx:Sheet1!2"},
		{Source: "act", Period: "2025-01", Driver: "frames_built", CostCenter: "WELD", Value: 120, Location: "act.xlsx:Sheet1!2"},
		{Source: "act", Period: "2025-03", Driver: "frames_built", Value: 131, Location: "act.xlsx:Sheet1!4"},
		{Source: "act", Period: "2025-03", Driver: "shipments", Value: 9, Location: "act.xlsx:Sheet1!4"},
	}
	if n != 3 || !reflect.DeepEqual(w.Values, want) {
		t.Fatalf("read %d\ngot  %+v\nwant %+v", n, w.Values, want)
	}
	if len(w.Rejects) != 1 || w.Rejects[0].Location != "act.xlsx:Sheet1!3" || w.Rejects[0].Reason != `frames_built: bad value "abc": not a number` {
		t.Fatalf("rejects %+v", w.Rejects)
	}
}

func TestReadAccounts(t *testing.T) {
	path := book(t, [][]any{
		{"account", "name", "type", "group"},
		{6100, "Tubing", "expense", "materials"}, // an account number typed as a number
		{"6200", "Paint", "expense", "materials"},
		{nil, "Orphan", "expense", nil},
	})
	opt := options()
	opt.Source = "coa"
	var w recorder
	n, err := ReadAccounts(context.Background(), path, "coa.xlsx", opt, &w)
	if err != nil {
		t.Fatal(err)
	}
	want := []costdrift.Account{
		{Source: "coa", Account: "6100", Name: "Tubing", Type: "expense", Group: "materials"},
		{Source: "coa", Account: "6200", Name: "Paint", Type: "expense", Group: "materials"},
	}
	if n != 3 || !reflect.DeepEqual(w.Accounts, want) {
		t.Fatalf("read %d, accounts %+v", n, w.Accounts)
	}
	if len(w.Rejects) != 1 || w.Rejects[0] != (costdrift.Reject{Source: "coa", Location: "coa.xlsx:Sheet1!4", Reason: "missing account", Raw: ",Orphan,expense"}) {
		t.Fatalf("rejects %+v", w.Rejects)
	}
}

func TestWorkbookErrors(t *testing.T) {
	dir := t.TempDir()
	write := func(name string, data []byte) string {
		p := filepath.Join(dir, name)
		if err := os.WriteFile(p, data, 0o600); err != nil {
			t.Fatal(err)
		}
		return p
	}
	encrypted := func() string {
		f := excelize.NewFile()
		writeSheet(t, f, "Sheet1", [][]any{{"entry_id", "date", "account", "amount"}})
		return save(t, f, "locked.xlsx", excelize.Options{Password: "secret"})
	}
	empty := func() string { return save(t, excelize.NewFile(), "empty.xlsx") }
	// An old .xls is a Compound File without an EncryptionInfo stream: the
	// signature and nothing else is enough to tell it apart.
	oldXLS := append(append([]byte{}, oleMagic...), make([]byte, 504)...)

	tests := []struct {
		name string
		path func() string
		want string
	}{
		{"missing", func() string { return filepath.Join(dir, "none.xlsx") }, "cannot read gl.xlsx: no such file or directory"},
		{"folder", func() string { return dir }, "cannot read gl.xlsx: it is a folder, not a file"},
		{"zero bytes", func() string { return write("zero.xlsx", nil) }, "gl.xlsx is empty: expected an XLSX workbook"},
		{"csv renamed", func() string { return write("csv.xlsx", []byte("entry_id,date\nE1,2025-01-01\n")) },
			"gl.xlsx is not an XLSX workbook (it is not a zip archive); save it as an Excel workbook (.xlsx)"},
		{"zip without a workbook", func() string {
			var b bytes.Buffer
			zw := zip.NewWriter(&b)
			if w, err := zw.Create("readme.txt"); err != nil {
				t.Fatal(err)
			} else if _, err := w.Write([]byte("not a workbook")); err != nil {
				t.Fatal(err)
			}
			if err := zw.Close(); err != nil {
				t.Fatal(err)
			}
			return write("archive.xlsx", b.Bytes())
		}, "gl.xlsx is a zip archive but not an XLSX workbook (it has no xl/workbook.xml)"},
		{"encrypted", encrypted, "gl.xlsx is encrypted (password-protected); save a copy without a password for costdrift to read"},
		{"old xls", func() string { return write("old.xls", oldXLS) }, "gl.xlsx is an old binary Excel workbook (.xls), not XLSX; save it as an Excel workbook (.xlsx)"},
		{"empty sheet", empty, "gl.xlsx: sheet Sheet1 is empty: expected a header row and rows"},
		{"header without required columns", func() string {
			return book(t, [][]any{{}, {"Beleg", "Datum", "Konto", "Betrag"}})
		}, "gl.xlsx:Sheet1!2: header has no column entry_id, date, account (found: Beleg, Datum, Konto, Betrag); " +
			"expected entry_id, date, account and amount (or debit and credit), or map yours under `columns:` in the source's config"},
		{"header without amount", func() string {
			return book(t, [][]any{{"entry_id", "date", "account", "debit"}})
		}, "gl.xlsx:Sheet1!1: header has neither an amount column nor debit and credit columns (found: entry_id, date, account, debit); " +
			"expected entry_id, date, account and amount (or debit and credit), or map yours under `columns:` in the source's config"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			var w recorder
			n, err := ReadLedger(context.Background(), tc.path(), "gl.xlsx", options(), &w)
			if err == nil || err.Error() != tc.want {
				t.Fatalf("got %v\nwant %s", err, tc.want)
			}
			if n != 0 || w.Calls != 0 {
				t.Fatalf("read %d and wrote %d rows before failing", n, w.Calls)
			}
		})
	}

	// The same checks hold for the other roles.
	var w recorder
	_, err := ReadActivity(context.Background(), book(t, [][]any{{"period"}}), "act.xlsx", options(), &w)
	if want := "act.xlsx:Sheet1!1: wide-form header has a period column but no driver columns (found: period)"; err == nil || err.Error() != want {
		t.Errorf("activity: got %v, want %s", err, want)
	}
	_, err = ReadAccounts(context.Background(), book(t, [][]any{{"Konto", "Name"}}), "coa.xlsx", options(), &w)
	if want := "coa.xlsx:Sheet1!1: header has no column account (found: Konto, Name); expected account, name, type, group, or map yours under `columns:` in the source's config"; err == nil || err.Error() != want {
		t.Errorf("accounts: got %v, want %s", err, want)
	}
}

// excelize's row iterator ends a sheet without a word where its XML breaks
// off; a workbook cut short must fail, not load as a shorter ledger.
func TestReadLedgerDamagedSheet(t *testing.T) {
	path := book(t, [][]any{
		{"entry_id", "date", "account", "amount"},
		{"E1", day(2025, 1, 1), "6100", 1},
		{"E2", day(2025, 1, 1), "6100", 2},
		{"E3", day(2025, 1, 1), "6100", 3},
	})
	for _, tc := range []struct {
		name, keep, want string
	}{
		{"inside a row", `<row r="4"><c r="A4"`, "gl.xlsx: sheet Sheet1 is damaged at row 4: XML syntax error on line 2: unexpected EOF"},
		{"between rows", `<ro`, "gl.xlsx: sheet Sheet1 is damaged after row 3: XML syntax error on line 2: unexpected EOF"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			damaged := rewritePart(t, path, "xl/worksheets/sheet1.xml", func(data []byte) []byte {
				cut := bytes.Index(data, []byte(`<row r="4"`))
				if cut < 0 {
					t.Fatalf("no row 4 in %s", data)
				}
				return data[:cut+len(tc.keep)]
			})
			var w recorder
			_, err := ReadLedger(context.Background(), damaged, "gl.xlsx", options(), &w)
			if err == nil || err.Error() != tc.want {
				t.Fatalf("got %v, want %s", err, tc.want)
			}
		})
	}
}

// rewritePart copies a workbook with one part changed by edit.
func rewritePart(t *testing.T, path, part string, edit func([]byte) []byte) string {
	t.Helper()
	src, err := zip.OpenReader(path)
	if err != nil {
		t.Fatal(err)
	}
	defer src.Close()
	copyPath := filepath.Join(t.TempDir(), "copy.xlsx")
	out, err := os.Create(copyPath)
	if err != nil {
		t.Fatal(err)
	}
	zw := zip.NewWriter(out)
	for _, f := range src.File {
		rc, err := f.Open()
		if err != nil {
			t.Fatal(err)
		}
		data, err := io.ReadAll(rc)
		rc.Close()
		if err != nil {
			t.Fatal(err)
		}
		if f.Name == part {
			data = edit(data)
		}
		w, err := zw.Create(f.Name)
		if err == nil {
			_, err = w.Write(data)
		}
		if err != nil {
			t.Fatal(err)
		}
	}
	if err := zw.Close(); err != nil {
		t.Fatal(err)
	}
	if err := out.Close(); err != nil {
		t.Fatal(err)
	}
	return copyPath
}

func TestReadLedgerStopsWhenTheWriterFails(t *testing.T) {
	path := book(t, [][]any{
		{"entry_id", "date", "account", "amount"},
		{"E1", day(2025, 1, 1), "6100", 1},
		{"E2", day(2025, 1, 1), "6100", 2},
		{"E3", day(2025, 1, 1), "6100", 3},
	})
	w := recorder{FailOn: 2}
	n, err := ReadLedger(context.Background(), path, "gl.xlsx", options(), &w)
	if !errors.Is(err, errWriter) || n != 2 || len(w.Lines) != 1 {
		t.Fatalf("read %d, err %v, lines %d", n, err, len(w.Lines))
	}
}

// heapSampler is a SourceWriter that keeps nothing and measures the live
// heap at chosen ledger lines.
type heapSampler struct {
	lines   int
	sumMin  int64
	at      map[int]uint64 // line -> live heap bytes after a collection
	rejects int
}

func (h *heapSampler) LedgerLine(l costdrift.LedgerLine) error {
	h.lines++
	h.sumMin += l.AmountMinor
	if _, ok := h.at[h.lines]; ok {
		h.at[h.lines] = liveHeap()
	}
	return nil
}
func (h *heapSampler) Activity(costdrift.ActivityValue) error { return nil }
func (h *heapSampler) Account(costdrift.Account) error        { return nil }
func (h *heapSampler) Reject(costdrift.Reject) error          { h.rejects++; return nil }

func liveHeap() uint64 {
	// Two collections: the first leaves sync.Pool's victim cache and
	// objects with finalizers for the second.
	runtime.GC()
	runtime.GC()
	var m runtime.MemStats
	runtime.ReadMemStats(&m)
	return m.HeapAlloc
}

// writeLargeLedger streams rows ledger lines into a workbook and returns
// its path and the sum of the amounts in cents. The workbook is closed
// before it returns, so that it is not part of the heap measured after.
func writeLargeLedger(t *testing.T, rows int) (string, int64) {
	t.Helper()
	f := excelize.NewFile()
	defer f.Close()
	sw, err := f.NewStreamWriter("Sheet1")
	if err != nil {
		t.Fatal(err)
	}
	if err := sw.SetRow("A1", []any{"entry_id", "line", "date", "account", "cost_center", "amount", "description"}); err != nil {
		t.Fatal(err)
	}
	var sum int64
	for i := range rows {
		cents := int64(1000 + i%1000) // 10.00 to 19.99 EUR, stored as doubles
		sum += cents
		ref, _ := excelize.CoordinatesToCellName(1, i+2)
		row := []any{fmt.Sprintf("E%05d", i), 1, day(2024, time.Month(1+i%12), 1+i%28), "6100", "WELD", float64(cents) / 100, "tubing for frame " + fmt.Sprint(i)}
		if err := sw.SetRow(ref, row); err != nil {
			t.Fatal(err)
		}
	}
	if err := sw.Flush(); err != nil {
		t.Fatal(err)
	}
	return save(t, f, "big.xlsx"), sum
}

func TestReadLedgerStreamsLargeSheet(t *testing.T) {
	const rows = 20000
	path, wantSum := writeLargeLedger(t, rows)

	h := &heapSampler{at: map[int]uint64{2000: 0, rows: 0}}
	before := liveHeap()
	start := time.Now()
	n, err := ReadLedger(context.Background(), path, "big.xlsx", options(), h)
	if err != nil {
		t.Fatal(err)
	}
	elapsed := time.Since(start)
	// Hand-worked: sum of 1000 + i mod 1000 over 20,000 rows
	// = 20,000·1000 + 20·(0 + … + 999) = 29,990,000 cents.
	if n != rows || h.lines != rows || h.rejects != 0 || wantSum != 29_990_000 || h.sumMin != wantSum {
		t.Fatalf("read %d, lines %d, rejects %d, sum %d (want %d)", n, h.lines, h.rejects, h.sumMin, wantSum)
	}
	// A reader that kept its rows (GetRows, or a slice of lines) would hold
	// well over 100 bytes for each of the 18,000 rows between the samples,
	// about 2 MiB, and the whole sheet at the first sample; the bounds leave
	// room for the collector's noise and excelize's workbook-wide state.
	grown := int64(h.at[rows]) - int64(h.at[2000])
	above := int64(max(h.at[2000], h.at[rows])) - int64(before)
	t.Logf("%d rows in %v; live heap %d B above the start, growth from row 2,000 to %d: %d B", rows, elapsed, above, rows, grown)
	if grown > 512<<10 {
		t.Errorf("live heap grew by %d bytes from row 2,000 to row %d", grown, rows)
	}
	if above > 2<<20 {
		t.Errorf("live heap while reading is %d bytes above the start", above)
	}
}

func TestReadLedgerGroupingAndBound(t *testing.T) {
	// Text cells follow the source's notation ("," thousands): digits not
	// grouped in threes are rejected, quoted as the cell writes them, and
	// so is an amount beyond the bound, as text or as a number cell.
	path := book(t, [][]any{
		{"entry_id", "date", "account", "debit", "credit"},
		{"G1", day(2025, 1, 2), "6100", "1,234.50", nil},                               // 2: 123450 (by hand)
		{"B1", day(2025, 1, 2), "6100", "1,23", nil},                                   // 3
		{"B2", day(2025, 1, 2), "6100", nil, "12,3456"},                                // 4
		{"B3", day(2025, 1, 2), "6100", "9,999,999,999,999,999.99", nil},               // 5
		{"B4", day(2025, 1, 2), "6100", num("100000000000000"), nil},                   // 6
		{"B5", day(2025, 1, 2), "6100", num("60000000000000"), num("-60000000000000")}, // 7: the sides fit, the line does not
	})
	opt := options()
	opt.Notation = money.Notation{ThousandsSeparator: ","}
	var w recorder
	if _, err := ReadLedger(context.Background(), path, "gl.xlsx", opt, &w); err != nil {
		t.Fatal(err)
	}
	if len(w.Lines) != 1 || w.Lines[0].AmountMinor != 123450 {
		t.Errorf("lines %+v, want G1 at 123450", w.Lines)
	}
	const grouping = `digits are not grouped in threes by the thousands separator "," (as in 1,234,567)`
	want := []struct{ location, reason string }{
		{"gl.xlsx:Sheet1!3", `bad debit: amount "1,23": ` + grouping},
		{"gl.xlsx:Sheet1!4", `bad credit: amount "12,3456": ` + grouping},
		{"gl.xlsx:Sheet1!5", `bad debit: amount "9,999,999,999,999,999.99" is out of range: costdrift stores at most 99,999,999,999,999.99 EUR either side of zero`},
		{"gl.xlsx:Sheet1!6", `bad debit: number 100000000000000 is out of range: costdrift stores at most 99999999999999.99 EUR either side of zero`},
		{"gl.xlsx:Sheet1!7", `bad amount: debit "60000000000000" minus credit "-60000000000000" is out of range: costdrift stores at most 99,999,999,999,999.99 EUR either side of zero`},
	}
	if len(w.Rejects) != len(want) {
		t.Fatalf("got %d rejects, want %d: %+v", len(w.Rejects), len(want), w.Rejects)
	}
	for i, r := range w.Rejects {
		if r.Location != want[i].location || r.Reason != want[i].reason {
			t.Errorf("reject %d: got %s %q, want %s %q", i, r.Location, r.Reason, want[i].location, want[i].reason)
		}
	}
}
