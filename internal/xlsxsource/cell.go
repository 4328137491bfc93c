package xlsxsource

import (
	"errors"
	"fmt"
	"math"
	"math/big"
	"strconv"
	"strings"
	"time"

	"github.com/costdrift/costdrift/internal/canon"
	"github.com/costdrift/costdrift/internal/money"
)

// kind is what a cell holds, from its XML type and number format.
type kind int

const (
	blankCell   kind = iota
	textCell         // shared, inline or formula string: read like CSV text
	numberCell       // the decimal text of an IEEE double
	dateCell         // a number under a date or time format: a serial day number
	isoDateCell      // t="d": an ISO 8601 date written as text
	boolCell
	errorCell // a formula error such as #DIV/0!, saved as the cell's result
)

// cell is one value of a row. text is what the file stores: the string of
// a text cell, the decimal of a number, the serial of a date cell.
type cell struct {
	text string
	kind kind
}

// isDateFormat reports whether a cell format shows a number as a date or
// time. The built-in ids are those ECMA-376 Part 1, 18.8.30 (numFmt)
// reserves for dates and times, including the language-dependent ones
// (recalled from memory of the standard). A custom format is a date if it
// uses y, m, d, h or s outside quoted text, escapes, fills and [brackets],
// which hold colours, conditions and locales.
func isDateFormat(id int, custom *string) bool {
	if custom == nil {
		return (14 <= id && id <= 22) || (27 <= id && id <= 36) || (45 <= id && id <= 47) ||
			(50 <= id && id <= 58) || (71 <= id && id <= 81)
	}
	code := *custom
	for i := 0; i < len(code); i++ {
		switch c := code[i]; c {
		case '"':
			if j := strings.IndexByte(code[i+1:], '"'); j >= 0 {
				i += j + 1
			} else {
				i = len(code)
			}
		case '\\', '_', '*':
			i++ // an escaped character, or the character a space or fill copies
		case '[':
			if j := strings.IndexByte(code[i:], ']'); j >= 0 {
				i += j
			}
		case 'y', 'Y', 'm', 'M', 'd', 'D', 'h', 'H', 's', 'S':
			return true
		}
	}
	return false
}

// serialDay turns the serial number of a date cell into its day. Day
// numbers are common practice of spreadsheets: in the 1900 date system
// serial 1 is 1900-01-01 and serial 60 is a 29 February 1900 that never
// was (kept for compatibility with older spreadsheet programs), so from
// serial 61 (1900-03-01) on, day = 1899-12-30 + serial; in the 1904 system
// day = 1904-01-01 + serial. The fraction is the time of day and is
// dropped: a posting at 23:59 belongs to its day.
func serialDay(text string, date1904 bool) (time.Time, string) {
	x, err := strconv.ParseFloat(text, 64)
	if err != nil || math.IsNaN(x) || math.IsInf(x, 0) {
		return time.Time{}, fmt.Sprintf("bad date: the date cell holds %q, not a serial day number", text)
	}
	day := int(math.Floor(x))
	const last = 2958465 // 9999-12-31, the last day a spreadsheet shows
	switch {
	case date1904 && day >= 0 && day <= last-1462:
		return time.Date(1904, 1, 1+day, 0, 0, 0, 0, time.UTC), ""
	case date1904:
	case day == 60:
		return time.Time{}, "bad date: serial 60 is 1900-02-29, a day that does not exist"
	case day >= 1 && day < 60:
		return time.Date(1899, 12, 31+day, 0, 0, 0, 0, time.UTC), ""
	case day > 60 && day <= last:
		return time.Date(1899, 12, 30+day, 0, 0, 0, 0, time.UTC), ""
	}
	if day < 1 {
		return time.Time{}, fmt.Sprintf("bad date: the date cell holds %s, a time of day without a date", text)
	}
	return time.Time{}, fmt.Sprintf("bad date: serial %s is after 9999-12-31", text)
}

// canonical turns a cell into the canonical cell of the column it stands
// under. Text cells stay text, for the rules to read by the source's
// notation and date format, as in a CSV file; what is particular to a
// workbook is decided here: a number cell is an exact amount
// (numberMinor) or a quantity, a date cell the day it shows, and a cell
// that cannot be what its column holds (a formula error, a date under an
// amount) says why.
func (t *table) canonical(col canon.Column, c cell, opt Options) canon.Cell {
	switch col.Kind() {
	case canon.MoneyKind:
		return moneyCell(col, c, opt.Currency)
	case canon.DateKind:
		return t.dateCell(c, opt)
	case canon.PeriodKind:
		return t.periodCell(c)
	case canon.QuantityKind:
		return quantityCell(c)
	}
	switch c.kind {
	case errorCell:
		return canon.BadCell(fmt.Sprintf("%s: the cell holds the error %s", col, c.text))
	case dateCell:
		if d, why := serialDay(c.text, t.date1904); why == "" {
			return canon.TextCell(d.Format("2006-01-02"))
		}
	}
	return canon.TextCell(c.text)
}

// moneyCell reads an amount: a number cell exactly in minor units
// (numberMinor), text by the rules.
func moneyCell(col canon.Column, c cell, cur money.Currency) canon.Cell {
	switch c.kind {
	case numberCell:
		minor, err := numberMinor(c.text, cur)
		if err != nil {
			return canon.BadCell(fmt.Sprintf("bad %s: %v", col, err))
		}
		return canon.MoneyCell(minor, c.text)
	case dateCell, isoDateCell:
		return canon.BadCell(fmt.Sprintf("bad %s: the cell is a date (%s), not an amount", col, c.text))
	case boolCell:
		return canon.BadCell(fmt.Sprintf("bad %s: the cell is %s, not an amount", col, c.text))
	case errorCell:
		return canon.BadCell(fmt.Sprintf("bad %s: the cell holds the error %s", col, c.text))
	}
	return canon.TextCell(c.text)
}

// dateCell reads a posting date: a date cell by its serial, an ISO date
// cell as written, text by the rules.
func (t *table) dateCell(c cell, opt Options) canon.Cell {
	layout := opt.DateLayout
	if layout == "" {
		layout = "2006-01-02"
	}
	switch c.kind {
	case dateCell:
		d, why := serialDay(c.text, t.date1904)
		if why != "" {
			return canon.BadCell(why)
		}
		return canon.DayCell(d, c.text)
	case isoDateCell:
		if d, err := time.Parse("2006-01-02", prefix(c.text, 10)); err == nil {
			return canon.DayCell(d, c.text)
		}
		return canon.BadCell(fmt.Sprintf("bad date %q: not an ISO 8601 date", c.text))
	case boolCell, errorCell:
		return canon.BadCell(fmt.Sprintf("bad date %q: want a date cell or text %s", c.text, canon.HumanLayout(layout)))
	case numberCell:
		// A number such as 20250131 can be a date in the layout YYYYMMDD.
		if _, err := time.Parse(layout, c.text); err != nil {
			return canon.BadCell(fmt.Sprintf("bad date %s: a number without a date format; format the column as a date or write %s", c.text, canon.HumanLayout(layout)))
		}
	}
	return canon.TextCell(c.text)
}

// periodCell reads an activity period: a date cell, or an ISO date cell,
// is the day it shows; anything else is read by the rules as text (YYYY-MM
// or a date).
func (t *table) periodCell(c cell) canon.Cell {
	switch c.kind {
	case dateCell:
		d, why := serialDay(c.text, t.date1904)
		if why != "" {
			return canon.BadCell(why)
		}
		return canon.DayCell(d, c.text)
	case isoDateCell:
		if d, err := time.Parse("2006-01-02", prefix(c.text, 10)); err == nil {
			return canon.DayCell(d, c.text)
		}
	}
	return canon.TextCell(c.text)
}

// quantityCell reads an activity value: a number cell as the double it is,
// text by the rules.
func quantityCell(c cell) canon.Cell {
	switch c.kind {
	case blankCell, textCell:
		return canon.TextCell(c.text)
	case numberCell:
		v, err := strconv.ParseFloat(c.text, 64)
		if err != nil {
			return canon.BadCell(fmt.Sprintf("bad value %q: not a number", c.text))
		}
		return canon.NumberCell(v, c.text)
	case errorCell:
		return canon.BadCell("bad value: the cell holds the error " + c.text)
	}
	return canon.BadCell(fmt.Sprintf("bad value %q: not a number", c.text))
}

func prefix(s string, n int) string {
	if len(s) < n {
		return s
	}
	return s[:n]
}

// tolerance is how far, in currency units, the number a cell stores may lie
// from a whole number of minor units and still be taken as that amount.
//
// Spreadsheets store numbers as IEEE-754 doubles and write the double's
// shortest decimal (up to 17 significant digits) into the file, so the text
// of a number cell is not always the amount that was typed or meant: 0.1+0.2
// is stored as 0.30000000000000004. A double carries about 15.9 significant
// digits, so for amounts below a million units such artefacts are below
// 1e-10 (one part in 2^53, common practice of binary floating point). Within
// 1e-9 the value is rounded to the minor unit; further off, it really has
// more decimals than the currency (0.301 EUR) and is rejected, as the CSV
// source rejects it.
var tolerance = big.NewRat(1, 1_000_000_000)

// errNotDecimal is a number cell whose text is not a decimal number.
var errNotDecimal = errors.New("not a decimal number")

// numberMinor converts the decimal text of a number cell exactly, in
// rational arithmetic, to minor units: minor = round(x·10^e) when
// |x − round(x·10^e)/10^e| <= 1e-9, e being the currency's exponent.
func numberMinor(text string, cur money.Currency) (int64, error) {
	if !decimalLiteral(text) {
		return 0, fmt.Errorf("number %q: %w", text, errNotDecimal)
	}
	x, _ := new(big.Rat).SetString(text)
	scale := new(big.Rat).SetInt(new(big.Int).Exp(big.NewInt(10), big.NewInt(int64(cur.Exponent)), nil))
	scaled := new(big.Rat).Mul(x, scale)
	// Round half away from zero: q = trunc(num/den), then step by one if
	// the remainder is at least half the denominator.
	q, r := new(big.Int).QuoRem(scaled.Num(), scaled.Denom(), new(big.Int))
	if new(big.Int).Mul(new(big.Int).Abs(r), big.NewInt(2)).Cmp(scaled.Denom()) >= 0 {
		q.Add(q, big.NewInt(int64(scaled.Num().Sign())))
	}
	off := new(big.Rat).Sub(x, new(big.Rat).Quo(new(big.Rat).SetInt(q), scale))
	if off.Abs(off).Cmp(tolerance) > 0 {
		return 0, fmt.Errorf("number %s: %w (%s has %d)", text, money.ErrTooPrecise, cur.Code, cur.Exponent)
	}
	if !q.IsInt64() || !money.InRange(q.Int64()) {
		return 0, cur.OutOfRange("number "+text, money.Notation{})
	}
	return q.Int64(), nil
}

// decimalLiteral accepts [+-]digits[.digits][(e|E)[+-]digits], the forms a
// spreadsheet writes, and nothing else that big.Rat would parse (fractions,
// hexadecimal, underscores).
func decimalLiteral(s string) bool {
	i := 0
	if i < len(s) && (s[i] == '+' || s[i] == '-') {
		i++
	}
	digits := 0
	for ; i < len(s) && s[i] >= '0' && s[i] <= '9'; i++ {
		digits++
	}
	if i < len(s) && s[i] == '.' {
		for i++; i < len(s) && s[i] >= '0' && s[i] <= '9'; i++ {
			digits++
		}
	}
	if digits == 0 {
		return false
	}
	if i < len(s) && (s[i] == 'e' || s[i] == 'E') {
		i++
		if i < len(s) && (s[i] == '+' || s[i] == '-') {
			i++
		}
		exp := 0
		for ; i < len(s) && s[i] >= '0' && s[i] <= '9'; i++ {
			exp++
		}
		if exp == 0 || exp > 4 {
			return false
		}
	}
	return i == len(s)
}
