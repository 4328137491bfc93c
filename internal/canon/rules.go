package canon

import (
	"fmt"
	"math"
	"strconv"
	"strings"
	"time"

	"github.com/costdrift/costdrift/internal/costdrift"
	"github.com/costdrift/costdrift/internal/money"
)

// isoDate is the layout of YYYY-MM-DD.
const isoDate = "2006-01-02"

// Rules are what the row rules need to know of a source.
type Rules struct {
	Source   string // the source's configured name, stored with every row
	Currency money.Currency
	// Notation applies to amounts and quantities written as text.
	Notation money.Notation
	// DateLayout is the Go layout of dates written as text; "" for
	// 2006-01-02.
	DateLayout string
	// DatabaseDates says text dates may also be ISO 8601 (2006-01-02, alone
	// or before a time such as "2025-01-31 00:00:00"), which is how a
	// database gives a date as text.
	DatabaseDates bool
	// Period maps a day to its period.
	Period func(time.Time) string
	// Fixed says the reading of the source has no settings (a plan, a
	// SAF-T file): a reason says how to write a value, not which setting
	// would read it.
	Fixed bool
}

func (r *Rules) layout() string {
	if r.DateLayout == "" {
		return isoDate
	}
	return r.DateLayout
}

// Money reads the cell of a money column (amount, debit, credit,
// functional_amount) in minor units, or says why it cannot. Text goes
// through money.Currency.Parse with the source's notation, which quotes it
// as written and holds it within money.MaxMinor; an empty cell is an empty
// amount.
func (r *Rules) Money(c *Cell, col Column) (int64, string) {
	switch c.form {
	case moneyForm:
		if !money.InRange(c.minor) {
			return 0, "bad " + col.String() + ": " + r.Currency.OutOfRange("number "+c.text, money.Notation{}).Error()
		}
		return c.minor, ""
	case badForm:
		return 0, c.text
	case numberForm, dayForm:
		return 0, fmt.Sprintf("bad %s: %s is not an amount", col, c.text)
	}
	v, err := r.Currency.Parse(c.text, r.Notation)
	if err != nil {
		return 0, "bad " + col.String() + ": " + err.Error() + r.moneyHint(strings.TrimSpace(c.text), err)
	}
	return v, ""
}

// ParseDate reads a date written as text in the source's layout (and, with
// DatabaseDates, in ISO 8601).
func (r *Rules) ParseDate(s string) (time.Time, bool) {
	if d, err := time.Parse(r.layout(), s); err == nil {
		return d, true
	}
	if !r.DatabaseDates {
		return time.Time{}, false
	}
	if d, err := time.Parse(isoDate, s); err == nil {
		return d, true
	}
	if len(s) > 10 && (s[10] == ' ' || s[10] == 'T') {
		if d, err := time.Parse(isoDate, s[:10]); err == nil {
			return d, true
		}
	}
	return time.Time{}, false
}

// Date reads the cell of a date column as the day it names: text in the
// source's layout, or a day the source read itself.
func (r *Rules) Date(c *Cell) (time.Time, string) {
	switch c.form {
	case dayForm:
		return c.day, ""
	case badForm:
		return time.Time{}, c.text
	case moneyForm, numberForm:
		return time.Time{}, fmt.Sprintf("bad date %s: a number, not a date", c.text)
	}
	if c.text == "" {
		return time.Time{}, "missing date"
	}
	if d, ok := r.ParseDate(c.text); ok {
		return d, ""
	}
	return time.Time{}, fmt.Sprintf("bad date %q: want %s%s", c.text, HumanLayout(r.layout()), r.dateHint(c.text))
}

// Posting sets a line's posting date and its period from the day it was
// posted.
func (r *Rules) Posting(l *costdrift.LedgerLine, day time.Time) {
	l.PostedOn = day.Format(isoDate)
	l.Period = r.Period(day)
}

// PeriodDay reads the cell of a period column as the day it stands for:
// the first day of a YYYY-MM month, or a date (in the source's layout or
// ISO) whose period the calendar gives.
func (r *Rules) PeriodDay(c *Cell) (time.Time, string) {
	switch c.form {
	case dayForm:
		return c.day, ""
	case badForm:
		return time.Time{}, c.text
	}
	s := c.text
	if s == "" {
		return time.Time{}, "missing period"
	}
	if len(s) == 7 {
		if d, err := time.Parse("2006-01", s); err == nil {
			return d, ""
		}
	}
	if d, ok := r.ParseDate(s); ok {
		return d, ""
	}
	if d, err := time.Parse(isoDate, s); err == nil {
		return d, ""
	}
	return time.Time{}, fmt.Sprintf("bad period %q: want YYYY-MM or a date%s", s, r.dateHint(s))
}

// period reads a period column as the calendar's period.
func (r *Rules) period(c *Cell) (string, string) {
	d, why := r.PeriodDay(c)
	if why != "" {
		return "", why
	}
	return r.Period(d), ""
}

// Quantity reads an activity value: text in the source's notation, or a
// number the source holds as one. It must be a finite number and not
// negative: activity is never below zero.
func (r *Rules) Quantity(c *Cell) (float64, string) {
	var v float64
	switch c.form {
	case numberForm:
		v = c.number
	case badForm:
		return 0, c.text
	case moneyForm, dayForm:
		return 0, fmt.Sprintf("bad value %q: not a number", c.text)
	default:
		if c.text == "" {
			return 0, "missing value"
		}
		s, err := r.Notation.Plain(c.text)
		if err != nil {
			return 0, fmt.Sprintf("bad value %q: %v%s", c.text, err, r.quantityHint(c.text))
		}
		if v, err = strconv.ParseFloat(s, 64); err != nil {
			return 0, fmt.Sprintf("bad value %q: not a number%s", c.text, r.quantityHint(c.text))
		}
	}
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return 0, fmt.Sprintf("bad value %q: not a number", c.text)
	}
	if v < 0 {
		return 0, fmt.Sprintf("bad value %q: activity cannot be negative", c.text)
	}
	return v, ""
}

// HumanLayout spells a Go date layout the way date_format does:
// 02.01.2006 is DD.MM.YYYY.
func HumanLayout(layout string) string {
	out := make([]byte, 0, len(layout))
	for i := 0; i < len(layout); {
		switch {
		case len(layout)-i >= 4 && layout[i:i+4] == "2006":
			out, i = append(out, "YYYY"...), i+4
		case len(layout)-i >= 2 && layout[i:i+2] == "01":
			out, i = append(out, "MM"...), i+2
		case len(layout)-i >= 2 && layout[i:i+2] == "02":
			out, i = append(out, "DD"...), i+2
		default:
			out, i = append(out, layout[i]), i+1
		}
	}
	return string(out)
}
