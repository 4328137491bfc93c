package canon

import (
	"strings"
	"time"
)

// form is what a cell holds.
type form uint8

const (
	textForm   form = iota // text as written; "" is an empty cell
	moneyForm              // minor units a source read from a typed value
	numberForm             // a number a source read from a typed value
	dayForm                // a calendar day a source read from a typed value
	badForm                // a typed value that cannot be what its column holds
)

// Cell is one value of a row under its canonical column. The zero Cell is
// empty.
type Cell struct {
	form   form
	text   string // as written, trimmed; the reason of a bad cell
	minor  int64
	number float64
	day    time.Time
}

// TextCell is a value written as text, which the rules read by the
// source's notation and date format. Space around it is dropped; a cell of
// spaces is empty.
func TextCell(s string) Cell { return Cell{text: strings.TrimSpace(s)} }

// MoneyCell is an amount a source read exactly from a typed value, such as
// a number cell or a NUMERIC column; text is the value as the source holds
// it, for messages.
func MoneyCell(minor int64, text string) Cell {
	return Cell{form: moneyForm, minor: minor, text: text}
}

// NumberCell is a quantity a source holds as a number.
func NumberCell(v float64, text string) Cell {
	return Cell{form: numberForm, number: v, text: text}
}

// DayCell is a date a source holds as a date: the calendar day d shows
// where it is, whatever its time of day.
func DayCell(d time.Time, text string) Cell {
	y, m, dd := d.Date()
	return Cell{form: dayForm, day: time.Date(y, m, dd, 0, 0, 0, 0, time.UTC), text: text}
}

// BadCell is a typed value that cannot be what its column holds (a date
// cell under amount, a formula error); reason is the whole reject reason,
// given when the rules reach the cell.
func BadCell(reason string) Cell { return Cell{form: badForm, text: reason} }

func (c *Cell) empty() bool { return c.form == textForm && c.text == "" }

// Row holds one row's cells by canonical column. A source sets the cell of
// every column its Binding holds, on every row; the other cells stay empty.
type Row [numColumns]Cell

// text reads a text column: a bad cell gives its reason.
func (r *Row) text(c Column) (string, string) {
	if r[c].form == badForm {
		return "", r[c].text
	}
	return r[c].text, ""
}
