package canon

import (
	"errors"
	"fmt"
	"regexp"
	"strconv"
	"strings"

	"github.com/costdrift/costdrift/internal/money"
)

// A reject whose cause is how the source is read, not the row, names the
// setting that would read it: a day-first date names date_format, an
// amount in the other notation names decimal_comma and thousands_separator.
// Only a source that leaves the setting out gets the advice: one that sets
// it has said how its rows are written, and a row written otherwise is the
// row's fault, which other settings would not mend for the rest. A source
// without settings (Rules.Fixed) is told how to write an amount instead.
// The advice follows the reason's first colon, so sync_runs counts these
// rejects under the same reason as before (sqlite.ReasonKind).

// numericDate is a date of three numbers, days and months of two digits
// as the date_format layouts read them, between one separator.
var numericDate = regexp.MustCompile(`^(\d{2}|\d{4})([./-])(\d{2})([./-])(\d{2}|\d{4})$`)

// dateHint names date_format with the layout a date written as s seems to
// have, or is "" when the source sets date_format or s is not a date of
// three numbers in another layout than YYYY-MM-DD (a day that does not
// exist, such as 2026-02-30, is not a matter of settings).
func (r *Rules) dateHint(s string) string {
	m := numericDate.FindStringSubmatch(s)
	if r.Fixed || r.DateLayout != "" || m == nil || m[2] != m[4] {
		return ""
	}
	sep := m[2]
	var format string
	switch {
	case len(m[1]) == 4 && len(m[5]) <= 2:
		format = "YYYY" + sep + "MM" + sep + "DD"
	case len(m[1]) <= 2 && len(m[5]) == 4:
		// The first number above 12 is a day; otherwise either order
		// reads, and the example puts the day first.
		format = "DD" + sep + "MM" + sep + "YYYY"
		if atoi(m[1]) <= 12 && atoi(m[3]) > 12 {
			format = "MM" + sep + "DD" + sep + "YYYY"
		}
	default:
		return ""
	}
	if format == HumanLayout(isoDate) {
		return ""
	}
	return fmt.Sprintf("; set date_format (e.g. %s)", format)
}

func atoi(s string) int {
	n := 0
	for _, c := range s {
		n = n*10 + int(c-'0')
	}
	return n
}

// guessNotation is the notation an amount or quantity written as s plainly
// has, when it has one: with both a point and a comma, the last is the
// decimal mark and the other groups thousands; with one comma not followed
// by three digits, a decimal comma; with one point not followed by three
// digits, a decimal point; with marks repeated, each followed by three
// digits, thousands. One mark before three digits ("1,500") could be
// either, and s gives no notation.
func guessNotation(s string) (money.Notation, bool) {
	comma, point := strings.LastIndex(s, ","), strings.LastIndex(s, ".")
	switch {
	case comma >= 0 && point >= 0:
		if comma > point {
			return money.Notation{DecimalComma: true, ThousandsSeparator: "."}, true
		}
		return money.Notation{ThousandsSeparator: ","}, true
	case comma >= 0:
		return guessOneMark(s, ",", money.Notation{DecimalComma: true}, money.Notation{ThousandsSeparator: ","})
	case point >= 0:
		return guessOneMark(s, ".", money.Notation{}, money.Notation{DecimalComma: true, ThousandsSeparator: "."})
	}
	return money.Notation{}, false
}

// guessOneMark tells whether the only mark in s, mark, is a decimal mark
// (notation decimal) or groups thousands (notation grouped).
func guessOneMark(s, mark string, decimal, grouped money.Notation) (money.Notation, bool) {
	parts := strings.Split(s, mark)
	digitsAfter := func(p string) int {
		n := 0
		for n < len(p) && p[n] >= '0' && p[n] <= '9' {
			n++
		}
		return n
	}
	if len(parts) == 2 {
		if digitsAfter(parts[1]) == 3 {
			return money.Notation{}, false
		}
		return decimal, true
	}
	for _, p := range parts[1:] {
		if digitsAfter(p) != 3 {
			return money.Notation{}, false
		}
	}
	return grouped, true
}

// notationHint names the settings under which text reads where the
// source's notation n did not: " (with decimal_comma: true it reads as
// 1.50)", or for a source without settings " (write it as 1.50)"; it is ""
// when text shows no other notation or does not read under it either, or
// the source declares a notation n. read reads text under a notation and
// spells what it read.
func notationHint(text string, n money.Notation, fixed bool, read func(money.Notation) (string, error)) string {
	g, ok := guessNotation(text)
	if !ok || g == n || n != (money.Notation{}) {
		return ""
	}
	v, err := read(g)
	if err != nil {
		return ""
	}
	if fixed {
		return fmt.Sprintf(" (write it as %s)", v)
	}
	var set []string
	if g.DecimalComma {
		set = append(set, "decimal_comma: true")
	}
	if g.ThousandsSeparator != "" {
		set = append(set, fmt.Sprintf("thousands_separator %q", g.ThousandsSeparator))
	}
	return fmt.Sprintf(" (with %s it reads as %s)", strings.Join(set, " and "), v)
}

// moneyHint is notationHint for an amount in the source's currency; an
// amount beyond the bound or with too many decimals is not a matter of
// notation.
func (r *Rules) moneyHint(text string, err error) string {
	if errors.Is(err, money.ErrOutOfRange) || errors.Is(err, money.ErrTooPrecise) {
		return ""
	}
	return notationHint(text, r.Notation, r.Fixed, func(g money.Notation) (string, error) {
		v, err := r.Currency.Parse(text, g)
		if err != nil {
			return "", err
		}
		return r.Currency.Format(v, money.Notation{}), nil
	})
}

// quantityHint is notationHint for an activity value.
func (r *Rules) quantityHint(text string) string {
	return notationHint(text, r.Notation, r.Fixed, func(g money.Notation) (string, error) {
		s, err := g.Plain(text)
		if err != nil {
			return "", err
		}
		if _, err := strconv.ParseFloat(s, 64); err != nil {
			return "", err
		}
		return s, nil
	})
}
