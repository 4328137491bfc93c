package canon

import (
	"errors"
	"math"
	"reflect"
	"strings"
	"testing"
	"time"

	"github.com/costdrift/costdrift/internal/costdrift"
	"github.com/costdrift/costdrift/internal/money"
)

// Expected values are worked out by hand from the cells beside them, and
// the conversions are facts of the trade (common practice): EUR has two
// decimals of minor unit (ISO 4217), so 1234.56 EUR is 123456 cents; a
// signed amount is debit positive, and debit minus credit otherwise; the
// period of a date is its calendar month here (a monthly calendar whose
// year starts in January). The rows are invented.

var eur = money.Currency{Code: "EUR", Exponent: 2}

func monthly(d time.Time) string { return d.Format("2006-01") }

func rules() Rules { return Rules{Source: "gl", Currency: eur, Period: monthly} }

// textRow binds header and returns the row of the text cells under it.
func textRow(t *testing.T, header []string, cells []string, cols Columns) (Binding, *Row) {
	t.Helper()
	b, err := Bind(header, nil, cols)
	if err != nil {
		t.Fatal(err)
	}
	var row Row
	for _, bc := range b.Bound() {
		row[bc.Column] = TextCell(cells[bc.Index])
	}
	return b, &row
}

func TestBind(t *testing.T) {
	header := []string{" Voucher ", "DATE", "account", "Net", "net", "extra", ""}
	b, err := Bind(header, map[string]string{"entry_id": "voucher", "amount": "NET"}, LedgerColumns)
	if err != nil {
		t.Fatal(err)
	}
	// Case and space do not matter; of the two "net" headers the later is
	// bound, and Twice names the first.
	for c, want := range map[Column]int{EntryID: 0, Date: 1, Account: 2, Amount: 4, Line: -1, Debit: -1} {
		if got := b.Index(c); got != want {
			t.Errorf("Index(%s) = %d, want %d", c, got, want)
		}
	}
	if b.Twice() != "Net" {
		t.Errorf("Twice() = %q, want Net", b.Twice())
	}
	want := []Bound{{EntryID, 0}, {Date, 1}, {Account, 2}, {Amount, 4}}
	if !reflect.DeepEqual(b.Bound(), want) {
		t.Errorf("Bound() = %v, want %v", b.Bound(), want)
	}

	tests := []struct {
		name    string
		header  []string
		cols    Columns
		subject string
		want    string
	}{
		{"required columns missing", []string{"id", "date", "acct", "amount"}, LedgerColumns, "header",
			"header has no column entry_id, account (found: id, date, acct, amount); expected entry_id, date, account and amount (or debit and credit), or map yours under `columns:` in the source's config"},
		{"neither amount nor debit and credit", []string{"entry_id", "date", "account", "debit", " "}, LedgerColumns, "the query result",
			"the query result has neither an amount column nor debit and credit columns (found: entry_id, date, account, debit); expected entry_id, date, account and amount (or debit and credit), or map yours under `columns:` in the source's config"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			_, err := Bind(tc.header, nil, tc.cols)
			var ce *ColumnsError
			if !errors.As(err, &ce) || ce.Of(tc.subject) != tc.want {
				t.Errorf("error %v,\n want %s", err, tc.want)
			}
		})
	}
}

func TestBindActivity(t *testing.T) {
	tests := []struct {
		name, layout string
		header       []string
		wide         bool
		drivers      []DriverColumn
		err          string
	}{
		{"long detected", "", []string{"period", "Driver", "value", "unit"}, false, nil, ""},
		{"wide detected", "", []string{"period", "cost_center", "machine_hours", " ", "orders "}, true,
			[]DriverColumn{{2, "machine_hours"}, {4, "orders"}}, ""},
		{"wide without drivers", "", []string{"period", "cost_center"}, true, nil,
			"wide-form header has a period column but no driver columns (found: period, cost_center)"},
		{"long asked, columns missing", "long", []string{"period", "driver_hours"}, false, nil,
			"header has no column driver, value (found: period, driver_hours); expected period, driver, value (long form) or period and one column per driver (wide form), or map yours under `columns:` in the source's config"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			h, err := BindActivity(tc.header, nil, tc.layout)
			if tc.err != "" {
				if err == nil || err.Error() != tc.err {
					t.Fatalf("error %v, want %q", err, tc.err)
				}
				return
			}
			if err != nil {
				t.Fatal(err)
			}
			if h.Wide != tc.wide || !reflect.DeepEqual(h.Drivers, tc.drivers) {
				t.Errorf("wide %v, drivers %v; want %v, %v", h.Wide, h.Drivers, tc.wide, tc.drivers)
			}
		})
	}
}

func TestLedgerLine(t *testing.T) {
	header := []string{"entry_id", "line", "date", "account", "cost_center", "amount", "currency", "functional_amount", "description"}
	tests := []struct {
		name   string
		cells  []string
		want   int64 // minor units
		reason string
	}{
		{"plain", []string{"E1", "1", "2025-03-15", "6200", "WELD", "1234.56", "", "", "x"}, 123456, ""},
		{"the functional currency", []string{"E1", "1", "2025-03-15", "6200", "", "-5.00", "eur", "99.00", ""}, -500, ""},
		// 100.00 USD booked at 92.00 EUR.
		{"another currency", []string{"E1", "1", "2025-03-15", "6200", "", "100.00", "USD", "92.00", ""}, 9200, ""},
		{"another currency, no functional amount", []string{"E1", "1", "2025-03-15", "6200", "", "100.00", "usd", " ", ""}, 0,
			"amount in USD with no functional_amount in EUR"},
		{"a bad functional amount", []string{"E1", "1", "2025-03-15", "6200", "", "100.00", "USD", "92.001", ""}, 0,
			`bad functional_amount: amount "92.001": more decimals than the currency's minor unit (EUR has 2)`},
		{"empty amount", []string{"E1", "1", "2025-03-15", "6200", "", "", "", "", ""}, 0, "bad amount: empty amount"},
		{"no date", []string{"E1", "1", " ", "6200", "", "1.00", "", "", ""}, 0, "missing date"},
		{"no such day", []string{"E1", "1", "2025-02-30", "6200", "", "1.00", "", "", ""}, 0, `bad date "2025-02-30": want YYYY-MM-DD`},
		{"line zero", []string{"E1", "0", "2025-03-15", "6200", "", "1.00", "", "", ""}, 0, `bad line "0": want a whole number from 1`},
		// The first problem in the rules' order is the reason.
		{"no entry and no account", []string{"", "x", "bad", "", "", "bad", "", "", ""}, 0, "missing entry_id"},
		{"no account, bad date", []string{"E1", "x", "bad", "", "", "bad", "", "", ""}, 0, "missing account"},
		{"bad date, bad amount", []string{"E1", "x", "bad", "6200", "", "bad", "", "", ""}, 0, `bad date "bad": want YYYY-MM-DD`},
		{"bad amount, bad line", []string{"E1", "x", "2025-03-15", "6200", "", "bad", "", "", ""}, 0, `bad amount: amount "bad" is not a number`},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			b, row := textRow(t, header, tc.cells, LedgerColumns)
			l, reason := NewLedger(rules(), b, true).Line(row)
			if reason != tc.reason {
				t.Fatalf("reason %q, want %q", reason, tc.reason)
			}
			if reason == "" && l.AmountMinor != tc.want {
				t.Errorf("amount %d, want %d", l.AmountMinor, tc.want)
			}
		})
	}

	// A whole line, field by field.
	b, row := textRow(t, header, []string{" E1 ", "2", "2024-12-31", "6500", " ", "2500.00", "", "", "Rent, hall B"}, LedgerColumns)
	l, reason := NewLedger(rules(), b, true).Line(row)
	want := costdrift.LedgerLine{Source: "gl", EntryID: "E1", Line: 2, PostedOn: "2024-12-31", Period: "2024-12", Account: "6500",
		AmountMinor: 250000, Description: "Rent, hall B"}
	if reason != "" || l != want {
		t.Errorf("got %+v, %q\nwant %+v", l, reason, want)
	}
}

func TestLedgerNumbersLinesByPlace(t *testing.T) {
	// Without a line number a line gets its place in its entry, counting
	// rejected lines, so A's third row is A/3 although its second was
	// rejected; B's numbers are B's own.
	header := []string{"entry_id", "date", "account", "debit", "credit"}
	b, err := Bind(header, nil, LedgerColumns)
	if err != nil {
		t.Fatal(err)
	}
	ledger := NewLedger(rules(), b, true)
	var got []string
	for _, cells := range [][]string{
		{"A", "2025-01-31", "6200", "1.00", ""},
		{"A", "2025-01-31", "6300", "", ""}, // both sides empty: rejected
		{"B", "2025-01-31", "6200", "3.00", ""},
		{"A", "2025-01-31", "2100", "", "1.00"},
	} {
		var row Row
		for _, bc := range b.Bound() {
			row[bc.Column] = TextCell(cells[bc.Index])
		}
		l, reason := ledger.Line(&row)
		if reason != "" {
			got = append(got, reason)
			continue
		}
		got = append(got, l.EntryID+"/"+string(rune('0'+l.Line)))
	}
	want := []string{"A/1", "missing amount: both debit and credit are empty", "B/1", "A/3"}
	if !reflect.DeepEqual(got, want) {
		t.Errorf("got %q, want %q", got, want)
	}

	// A source whose lines must carry their number rejects a line without.
	var row Row
	row[EntryID], row[Date], row[Account], row[Debit] = TextCell("A"), TextCell("2025-01-31"), TextCell("6200"), TextCell("1.00")
	if _, reason := NewLedger(rules(), b, false).Line(&row); reason != "missing line" {
		t.Errorf("reason %q, want missing line", reason)
	}
}

func TestLedgerTypedCells(t *testing.T) {
	// Cells a source read itself: the rules take the amount and the day as
	// they are, bound the amount and the difference of the sides, and give a
	// bad cell's reason when they reach it.
	b, err := Bind([]string{"entry_id", "line", "date", "account", "debit", "credit"}, nil, LedgerColumns)
	if err != nil {
		t.Fatal(err)
	}
	ledger := NewLedger(Rules{Source: "gl", Currency: eur, Notation: money.Notation{ThousandsSeparator: ","}, Period: monthly}, b, false)
	day := time.Date(2025, 1, 31, 23, 30, 0, 0, time.FixedZone("UTC-5", -5*3600))
	tests := []struct {
		name          string
		date          Cell
		debit, credit Cell
		want          costdrift.LedgerLine
		reason        string
	}{
		{"a day and an exact amount", DayCell(day, ""), MoneyCell(123450, "1234.5"), Cell{},
			costdrift.LedgerLine{Source: "gl", EntryID: "E1", Line: 1, PostedOn: "2025-01-31", Period: "2025-01", Account: "6200", AmountMinor: 123450}, ""},
		{"a bad date cell", BadCell("bad date: serial 60 is 1900-02-29, a day that does not exist"), MoneyCell(1, "0.01"), Cell{},
			costdrift.LedgerLine{}, "bad date: serial 60 is 1900-02-29, a day that does not exist"},
		{"a bad amount cell", DayCell(day, ""), BadCell("bad debit: the cell holds the error #DIV/0!"), Cell{},
			costdrift.LedgerLine{}, "bad debit: the cell holds the error #DIV/0!"},
		// 60,000,000,000,000.00 - (-60,000,000,000,000.00) lies beyond the
		// bound of 99,999,999,999,999.99 either side of zero.
		{"sides within the bound, the line beyond", DayCell(day, ""), MoneyCell(6e15, "60000000000000"), MoneyCell(-6e15, "-60000000000000"),
			costdrift.LedgerLine{}, `bad amount: debit "60000000000000" minus credit "-60000000000000" is out of range: costdrift stores at most 99,999,999,999,999.99 EUR either side of zero`},
		{"a number beyond the bound", DayCell(day, ""), MoneyCell(money.MaxMinor+1, "100000000000000"), Cell{},
			costdrift.LedgerLine{}, "bad debit: number 100000000000000 is out of range: costdrift stores at most 99999999999999.99 EUR either side of zero"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			var row Row
			row[EntryID], row[Line], row[Account] = TextCell("E1"), TextCell("1"), TextCell("6200")
			row[Date], row[Debit], row[Credit] = tc.date, tc.debit, tc.credit
			l, reason := ledger.Line(&row)
			if reason != tc.reason || (reason == "" && l != tc.want) {
				t.Errorf("got %+v, %q\nwant %+v, %q", l, reason, tc.want, tc.reason)
			}
		})
	}
}

func TestDateLayouts(t *testing.T) {
	tests := []struct {
		name, layout string
		database     bool
		text         string
		want, reason string
	}{
		{"ISO", "", false, "2025-01-31", "2025-01-31", ""},
		{"source layout", "02.01.2006", false, "31.01.2025", "2025-01-31", ""},
		// A file's dates follow its date_format only.
		{"ISO under another layout", "02.01.2006", false, "2025-01-31", "", `bad date "2025-01-31": want DD.MM.YYYY`},
		// A database may write a date value as ISO text, with a time.
		{"database ISO under another layout", "02.01.2006", true, "2025-01-31", "2025-01-31", ""},
		{"database ISO with a time", "", true, "2025-01-31 17:04:05", "2025-01-31", ""},
		{"database RFC 3339", "", true, "2025-01-31T10:00:00Z", "2025-01-31", ""},
		{"text with a time in a file", "", false, "2025-01-31 17:04:05", "", `bad date "2025-01-31 17:04:05": want YYYY-MM-DD`},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			r := Rules{DateLayout: tc.layout, DatabaseDates: tc.database, Period: monthly}
			c := TextCell(tc.text)
			d, reason := r.Date(&c)
			got := ""
			if reason == "" {
				got = d.Format("2006-01-02")
			}
			if got != tc.want || reason != tc.reason {
				t.Errorf("Date(%q) = %q, %q; want %q, %q", tc.text, got, reason, tc.want, tc.reason)
			}
		})
	}
}

func TestHumanLayout(t *testing.T) {
	// The config's spelling of Go layouts (the mapping is the package's own).
	for layout, want := range map[string]string{"2006-01-02": "YYYY-MM-DD", "02.01.2006": "DD.MM.YYYY", "01/02/2006": "MM/DD/YYYY", "20060102": "YYYYMMDD"} {
		if got := HumanLayout(layout); got != want {
			t.Errorf("HumanLayout(%q) = %q, want %q", layout, got, want)
		}
	}
}

func TestQuantity(t *testing.T) {
	r := Rules{Notation: money.Notation{ThousandsSeparator: ","}}
	tests := []struct {
		name   string
		cell   Cell
		want   float64
		reason string
	}{
		// Short decimals that strconv.ParseFloat reads exactly: tolerance 0.
		{"text", TextCell(" 410.5 "), 410.5, ""},
		// Text follows the notation as amounts do: 1,234.5 is 1234.5 (by
		// hand); 1,23 was read as 123 before grouping was checked.
		{"grouped", TextCell("1,234.5"), 1234.5, ""},
		{"badly grouped", TextCell("1,23"), 0, `bad value "1,23": digits are not grouped in threes by the thousands separator "," (as in 1,234,567)`},
		{"a number", NumberCell(340, "340"), 340, ""},
		{"zero", TextCell("0"), 0, ""},
		{"negative text", TextCell("-3"), 0, `bad value "-3": activity cannot be negative`},
		{"negative number", NumberCell(-3, "-3"), 0, `bad value "-3": activity cannot be negative`},
		{"infinite", NumberCell(math.Inf(1), "+Inf"), 0, `bad value "+Inf": not a number`},
		{"NaN text", TextCell("NaN"), 0, `bad value "NaN": not a number`},
		{"words", TextCell("n/a"), 0, `bad value "n/a": not a number`},
		{"empty", TextCell(" "), 0, "missing value"},
		{"a bad cell", BadCell("bad value: the cell holds the error #N/A"), 0, "bad value: the cell holds the error #N/A"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			got, reason := r.Quantity(&tc.cell)
			if got != tc.want || reason != tc.reason {
				t.Errorf("Quantity = %v, %q; want %v, %q", got, reason, tc.want, tc.reason)
			}
		})
	}
}

func TestActivityAndAccount(t *testing.T) {
	r := rules()
	r.Source = "ops"
	header := []string{"period", "driver", "cost_center", "value", "unit"}
	tests := []struct {
		cells  []string
		want   costdrift.ActivityValue
		reason string
	}{
		{[]string{"2025-01", "machine_hours", "WELD", "410.5", "machine hour"},
			costdrift.ActivityValue{Source: "ops", Period: "2025-01", Driver: "machine_hours", CostCenter: "WELD", Value: 410.5, Unit: "machine hour"}, ""},
		{[]string{"2025-02-15", "machine_hours", "", "395", ""},
			costdrift.ActivityValue{Source: "ops", Period: "2025-02", Driver: "machine_hours", Value: 395}, ""},
		{[]string{"", "machine_hours", "", "1", ""}, costdrift.ActivityValue{}, "missing period"},
		{[]string{"2025-13", "machine_hours", "", "1", ""}, costdrift.ActivityValue{}, `bad period "2025-13": want YYYY-MM or a date`},
		{[]string{"2025-01", " ", "", "1", ""}, costdrift.ActivityValue{}, "missing driver"},
		{[]string{"2025-01", "machine_hours", "", "", ""}, costdrift.ActivityValue{}, "missing value"},
	}
	for _, tc := range tests {
		_, row := textRow(t, header, tc.cells, LongActivityColumns)
		a, reason := r.Activity(row)
		if reason != tc.reason || (reason == "" && a != tc.want) {
			t.Errorf("%q: got %+v, %q; want %+v, %q", tc.cells, a, reason, tc.want, tc.reason)
		}
	}

	// Wide: the row whole or nothing; an empty cell is no value.
	h, err := BindActivity([]string{"period", "machine_hours", "orders"}, nil, "")
	if err != nil {
		t.Fatal(err)
	}
	var row Row
	row[Period] = TextCell("2025-03")
	out, reason := r.WideActivity(&row, h.Drivers, []Cell{TextCell("12.5"), TextCell("")}, nil)
	want := []costdrift.ActivityValue{{Source: "ops", Period: "2025-03", Driver: "machine_hours", Value: 12.5}}
	if reason != "" || !reflect.DeepEqual(out, want) {
		t.Errorf("wide: %+v, %q; want %+v", out, reason, want)
	}
	out, reason = r.WideActivity(&row, h.Drivers, []Cell{TextCell("12.5"), TextCell("-1")}, out)
	if len(out) != 0 || reason != `orders: bad value "-1": activity cannot be negative` {
		t.Errorf("wide with a bad value: %+v, %q", out, reason)
	}

	_, arow := textRow(t, []string{"account", "name", "type", "group"}, []string{"6100", "Energy", "expense", "Overhead"}, AccountColumns)
	a, reason := r.Account(arow)
	if reason != "" || a != (costdrift.Account{Source: "ops", Account: "6100", Name: "Energy", Type: "expense", Group: "Overhead"}) {
		t.Errorf("account: %+v, %q", a, reason)
	}
	arow[Account] = TextCell("  ")
	if _, reason := r.Account(arow); reason != "missing account" {
		t.Errorf("account without a number: %q", reason)
	}
}

func TestLedgerLineAddsNoAllocation(t *testing.T) {
	// Reading a row allocates what parsing its amount and naming its period
	// allocate (money.Currency.Parse, the calendar's Period), and nothing
	// more: a ledger of a million lines must not make a million maps or
	// slices on top.
	b, row := textRow(t, strings.Split("entry_id,line,date,account,cost_center,amount,description", ","),
		strings.Split("AP-00000001,1,2025-03-15,6200,WELD,1234.56,invoice 1", ","), LedgerColumns)
	r := rules()
	ledger := NewLedger(r, b, true)
	parts := testing.AllocsPerRun(1000, func() {
		r.Currency.Parse("1234.56", r.Notation)
		r.Period(time.Date(2025, 3, 15, 0, 0, 0, 0, time.UTC))
	})
	line := testing.AllocsPerRun(1000, func() {
		if _, reason := ledger.Line(row); reason != "" {
			t.Fatal(reason)
		}
	})
	if line > parts {
		t.Errorf("a line allocates %v times, parsing its amount and naming its period %v", line, parts)
	}
}
