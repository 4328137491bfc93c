package canon

import (
	"fmt"
	"strings"
)

// Column is a canonical column: the name a source's header, sheet or query
// result uses for it, or maps to it under `columns:`.
type Column uint8

// The canonical columns of ledger lines, activity and the chart of accounts.
const (
	EntryID Column = iota
	Line
	Date
	Account
	CostCenter
	Amount
	Debit
	Credit
	Description
	Currency
	FunctionalAmount
	Period
	Driver
	Value
	Unit
	AccountName
	AccountType
	AccountGroup
	numColumns
)

var columnNames = [numColumns]string{
	EntryID: "entry_id", Line: "line", Date: "date", Account: "account", CostCenter: "cost_center",
	Amount: "amount", Debit: "debit", Credit: "credit", Description: "description", Currency: "currency",
	FunctionalAmount: "functional_amount", Period: "period", Driver: "driver", Value: "value", Unit: "unit",
	AccountName: "name", AccountType: "type", AccountGroup: "group",
}

// String is the column's canonical name, as headers and messages write it.
func (c Column) String() string { return columnNames[c] }

// Kind is what a column holds, which says how a source turns a typed value
// into a cell for it.
type Kind uint8

const (
	TextKind     Kind = iota // words or codes; the line number too
	MoneyKind                // an amount in minor units
	DateKind                 // a posting date
	PeriodKind               // a period: YYYY-MM or a day in it
	QuantityKind             // an activity value
)

// Kind says what the column holds.
func (c Column) Kind() Kind {
	switch c {
	case Amount, Debit, Credit, FunctionalAmount:
		return MoneyKind
	case Date:
		return DateKind
	case Period:
		return PeriodKind
	case Value:
		return QuantityKind
	}
	return TextKind
}

// Columns are the canonical columns of one kind of row: those a header must
// have, those it may have, and what to tell a user whose header lacks some.
type Columns struct {
	Required, Optional []Column
	Hint               string // "expected entry_id, date, ..."
	// Amounts says the header must also have an amount column, or debit and
	// credit columns.
	Amounts bool
}

// The columns of the file and workbook sources. A SQL source asks for the
// line column too: see sqlsource.
var (
	LedgerColumns = Columns{
		Required: []Column{EntryID, Date, Account},
		Optional: []Column{Line, CostCenter, Amount, Debit, Credit, Description, Currency, FunctionalAmount},
		Hint:     "expected entry_id, date, account and amount (or debit and credit)",
		Amounts:  true,
	}
	LongActivityColumns = Columns{
		Required: []Column{Period, Driver, Value},
		Optional: []Column{CostCenter, Unit},
		Hint:     activityHint,
	}
	WideActivityColumns = Columns{
		Required: []Column{Period},
		Optional: []Column{CostCenter},
		Hint:     activityHint,
	}
	AccountColumns = Columns{
		Required: []Column{Account},
		Optional: []Column{AccountName, AccountType, AccountGroup},
		Hint:     "expected account, name, type, group",
	}
)

const activityHint = "expected period, driver, value (long form) or period and one column per driver (wide form)"

// Bound is a canonical column and its position among the source's columns.
type Bound struct {
	Column Column
	Index  int
}

// Binding says where each canonical column stands among a source's columns.
// A source fills every bound column of every row (Row), so that nothing of
// the row before stays behind.
type Binding struct {
	at    [numColumns]int // 1 + the position; 0 when the column is absent
	bound []Bound
	twice string
}

// Has reports whether the column was found.
func (b *Binding) Has(c Column) bool { return b.at[c] > 0 }

// Index is the column's position, or -1 when it is absent.
func (b *Binding) Index(c Column) int { return b.at[c] - 1 }

// Bound lists the columns found with their positions.
func (b *Binding) Bound() []Bound { return b.bound }

// Twice is the header of the first canonical column that two of the
// source's columns answer to, or "". A file keeps the later of the two; a
// query result is refused (sqlsource).
func (b *Binding) Twice() string { return b.twice }

// Bind finds the columns cols asks for among header: by canonical name or
// by the name the mapping gives instead (mapping["entry_id"] = "Voucher"),
// ignoring case and the space around names. Of two headers that answer to
// one column, the later is bound. The error, a *ColumnsError, names the
// required columns that are missing, or says that a ledger header has
// neither an amount column nor debit and credit columns.
func Bind(header []string, mapping map[string]string, cols Columns) (Binding, error) {
	var b Binding
	first := make(map[string]int, len(header))
	last := make(map[string]int, len(header))
	count := make(map[string]int, len(header))
	for i, h := range header {
		key := strings.ToLower(strings.TrimSpace(h))
		if _, ok := first[key]; !ok {
			first[key] = i
		}
		last[key] = i
		count[key]++
	}
	var missing []Column
	for k, list := range [][]Column{cols.Required, cols.Optional} {
		for _, c := range list {
			want := c.String()
			if m := strings.TrimSpace(mapping[want]); m != "" {
				want = m
			}
			key := strings.ToLower(strings.TrimSpace(want))
			i, ok := last[key]
			if !ok {
				if k == 0 {
					missing = append(missing, c)
				}
				continue
			}
			b.at[c] = i + 1
			b.bound = append(b.bound, Bound{Column: c, Index: i})
			if count[key] > 1 && b.twice == "" {
				b.twice = header[first[key]]
			}
		}
	}
	switch {
	case len(missing) > 0:
		return b, &ColumnsError{Missing: missing, Found: names(header), Hint: cols.Hint}
	case cols.Amounts && !b.Has(Amount) && !(b.Has(Debit) && b.Has(Credit)):
		return b, &ColumnsError{NoAmount: true, Found: names(header), Hint: cols.Hint}
	}
	return b, nil
}

// names are a header's non-empty names, for messages.
func names(header []string) []string {
	var out []string
	for _, h := range header {
		if h = strings.TrimSpace(h); h != "" {
			out = append(out, h)
		}
	}
	return out
}

// ColumnsError is a header without the columns its rows need.
type ColumnsError struct {
	Missing   []Column // required columns not found
	NoAmount  bool     // a ledger header with neither amount nor debit and credit
	NoDrivers bool     // a wide activity header with no driver column
	Found     []string // the header's names
	Hint      string
}

// Error describes the problem of a file's header.
func (e *ColumnsError) Error() string { return e.Of("header") }

// Of describes the problem with subject naming what has the columns:
// "header", or "the query result".
func (e *ColumnsError) Of(subject string) string {
	found := strings.Join(e.Found, ", ")
	const mapYours = ", or map yours under `columns:` in the source's config"
	switch {
	case e.NoDrivers:
		return fmt.Sprintf("wide-form %s has a period column but no driver columns (found: %s)", subject, found)
	case e.NoAmount:
		return fmt.Sprintf("%s has neither an amount column nor debit and credit columns (found: %s); %s%s", subject, found, e.Hint, mapYours)
	}
	missing := make([]string, len(e.Missing))
	for i, c := range e.Missing {
		missing[i] = c.String()
	}
	return fmt.Sprintf("%s has no column %s (found: %s); %s%s", subject, strings.Join(missing, ", "), found, e.Hint, mapYours)
}

// ActivityHeader is an activity header bound in its layout.
type ActivityHeader struct {
	Binding
	Wide bool
	// Drivers are the wide form's driver columns, in header order: every
	// named column but period and cost_center.
	Drivers []DriverColumn
}

// DriverColumn is a column of the wide form that holds one driver's values.
type DriverColumn struct {
	Index int
	Name  string
}

// BindActivity binds an activity header in layout "long" or "wide"; ""
// detects it: long when the header has driver and value columns.
func BindActivity(header []string, mapping map[string]string, layout string) (ActivityHeader, error) {
	if layout == "" {
		layout = "wide"
		probe, _ := Bind(header, mapping, Columns{Optional: []Column{Driver, Value}})
		if probe.Has(Driver) && probe.Has(Value) {
			layout = "long"
		}
	}
	if layout == "long" {
		b, err := Bind(header, mapping, LongActivityColumns)
		return ActivityHeader{Binding: b}, err
	}
	b, err := Bind(header, mapping, WideActivityColumns)
	h := ActivityHeader{Binding: b, Wide: true}
	if err != nil {
		return h, err
	}
	for i, name := range header {
		name = strings.TrimSpace(name)
		if i == b.Index(Period) || i == b.Index(CostCenter) || name == "" {
			continue
		}
		h.Drivers = append(h.Drivers, DriverColumn{Index: i, Name: name})
	}
	if len(h.Drivers) == 0 {
		return h, &ColumnsError{NoDrivers: true, Found: names(header), Hint: activityHint}
	}
	return h, nil
}
