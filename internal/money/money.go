package money

import (
	"errors"
	"fmt"
	"math"
	"strconv"
	"strings"

	"github.com/shopspring/decimal"
)

// exponents lists the ISO 4217 currencies whose minor unit is not 1/100
// (recalled from memory of the ISO 4217 table; every other code has two
// decimals).
var exponents = map[string]int32{
	"BHD": 3, "BIF": 0, "CLF": 4, "CLP": 0, "DJF": 0, "GNF": 0, "IQD": 3,
	"ISK": 0, "JOD": 3, "JPY": 0, "KMF": 0, "KRW": 0, "KWD": 3, "LYD": 3,
	"OMR": 3, "PYG": 0, "RWF": 0, "TND": 3, "UGX": 0, "UYI": 0, "UYW": 4,
	"VND": 0, "VUV": 0, "XAF": 0, "XOF": 0, "XPF": 0,
}

// Currency is a functional currency and its minor-unit exponent.
type Currency struct {
	Code     string
	Exponent int32 // decimals of the minor unit: 2 for EUR, 0 for JPY
}

// ParseCurrency checks an ISO 4217 code (three capital letters) and returns
// it with its exponent.
func ParseCurrency(code string) (Currency, error) {
	if len(code) != 3 || strings.ToUpper(code) != code || strings.ContainsFunc(code, func(r rune) bool { return r < 'A' || r > 'Z' }) {
		return Currency{}, fmt.Errorf("%q is not an ISO 4217 code (three capital letters, such as EUR)", code)
	}
	exp, ok := exponents[code]
	if !ok {
		exp = 2
	}
	return Currency{Code: code, Exponent: exp}, nil
}

// Notation says how a source writes amounts.
type Notation struct {
	DecimalComma       bool   // "1234,50"
	ThousandsSeparator string // between groups of three digits, e.g. "." with a decimal comma
}

// mark is the decimal mark of the notation.
func (n Notation) mark() string {
	if n.DecimalComma {
		return ","
	}
	return "."
}

// Validate checks that the thousands separator can be told apart from
// everything else an amount may hold: digits, signs, brackets, an exponent
// letter and the decimal mark. A separator "0" or "-" would make "1-234"
// or "100" mean two different numbers.
func (n Notation) Validate() error {
	t := n.ThousandsSeparator
	if t == "" {
		return nil
	}
	if strings.ContainsAny(t, "0123456789+-()eE") || strings.Contains(t, n.mark()) {
		return fmt.Errorf("thousands separator %q cannot be told apart from the digits, signs, brackets, exponent or decimal mark %q of an amount",
			t, n.mark())
	}
	return nil
}

// Plain checks how s groups its digits and returns it with the thousands
// separators taken out and a decimal comma made a point, ready for a parser
// of plain decimals; signs, brackets and exponents are left in place. With
// a separator, the digits before the decimal mark are either not grouped at
// all or grouped in threes after a first group of one to three digits
// ("1,234,567"), and the separator appears nowhere else: "1,23" and
// "12,3456" are errors, never 123 and 123456, which a separator removed
// wherever it stands would make of them.
func (n Notation) Plain(s string) (string, error) {
	if err := n.Validate(); err != nil {
		return "", err
	}
	if t := n.ThousandsSeparator; t != "" && strings.Contains(s, t) {
		var err error
		if s, err = ungroup(s, t); err != nil {
			return "", err
		}
	}
	if n.DecimalComma {
		s = strings.Replace(s, ",", ".", 1)
	}
	return s, nil
}

// ungroup removes the separator t from the whole-number digits of s after
// checking their groups. t holds no digit (Validate), so the whole number
// is the run of digits and separators from the first digit on.
func ungroup(s, t string) (string, error) {
	bad := fmt.Errorf("digits are not grouped in threes by the thousands separator %q (as in 1%s234%s567)", t, t, t)
	start := strings.IndexAny(s, "0123456789")
	if start < 0 {
		return "", bad
	}
	end := start
scan:
	for end < len(s) {
		switch {
		case s[end] >= '0' && s[end] <= '9':
			end++
		case strings.HasPrefix(s[end:], t):
			end += len(t)
		default:
			break scan
		}
	}
	groups := strings.Split(s[start:end], t)
	for i, g := range groups {
		if g == "" || len(g) > 3 || (i > 0 && len(g) != 3) {
			return "", bad
		}
	}
	// A separator outside the whole number: before it, or in the decimals.
	if strings.Count(s, t) != len(groups)-1 {
		return "", bad
	}
	return s[:start] + strings.Join(groups, "") + s[end:], nil
}

// MaxMinor is the largest amount costdrift stores, in minor units either
// side of zero: 10^16 - 1, sixteen digits, which is 99,999,999,999,999.99
// in a two-decimal currency and 9,999,999,999,999,999 yen.
//
// The store adds amounts up per cost object and period in int64 minor
// units, which hold 2^63 - 1 = 9,223,372,036,854,775,807. At the bound, 922
// lines of one object in one period still add up exactly; amounts of a
// thousandth of it (10^13 minor units, a hundred billion in a two-decimal
// currency, beyond any single posting) take 922,337 lines to overflow. The
// bound lies far above any real amount (a hundred trillion euros is about a
// year of the whole world's output, from memory). A lower one, such as
// 10^15, would allow ten times as many lines at the bound but leave less
// room in currencies of small unit value, whose amounts have four to six
// digits more than the same amount in euros (the Iranian rial, the
// Vietnamese dong; from memory). It need only make an overflowing total
// absurd, not impossible: a total that leaves int64 all the same (from
// lines stored before amounts were bounded) is found where it is added up,
// and only its cost object is skipped.
const MaxMinor int64 = 9_999_999_999_999_999

// ErrOutOfRange is returned for an amount beyond MaxMinor.
var ErrOutOfRange = errors.New("out of range")

// InRange reports whether minor units are within the bound MaxMinor.
func InRange(minor int64) bool {
	return minor >= -MaxMinor && minor <= MaxMinor
}

// OutOfRange is the error for an amount beyond MaxMinor. what names the
// amount as the source wrote it (`amount "1e20"`); the bound is written in
// the notation n.
func (c Currency) OutOfRange(what string, n Notation) error {
	return fmt.Errorf("%s is %w: costdrift stores at most %s %s either side of zero", what, ErrOutOfRange, c.Format(MaxMinor, n), c.Code)
}

// Format writes minor units as an amount in the notation n, with the
// currency's decimals, as Parse reads it back: 123456 EUR is "1234.56",
// "1,234.56" with "," thousands and "1.234,56" with a decimal comma and "."
// thousands.
func (c Currency) Format(minor int64, n Notation) string {
	magnitude := uint64(minor)
	if minor < 0 {
		magnitude = -magnitude // two's complement: right for math.MinInt64 too
	}
	digits := strconv.FormatUint(magnitude, 10)
	exp := int(c.Exponent)
	if len(digits) <= exp {
		digits = strings.Repeat("0", exp-len(digits)+1) + digits
	}
	whole, decimals := digits[:len(digits)-exp], digits[len(digits)-exp:]
	var b strings.Builder
	if minor < 0 {
		b.WriteByte('-')
	}
	for i := range len(whole) {
		if i > 0 && (len(whole)-i)%3 == 0 {
			b.WriteString(n.ThousandsSeparator)
		}
		b.WriteByte(whole[i])
	}
	if exp > 0 {
		b.WriteString(n.mark())
		b.WriteString(decimals)
	}
	return b.String()
}

// ErrTooPrecise is returned for an amount with more decimals than the
// currency's minor unit: rounding it silently would change the books.
var ErrTooPrecise = errors.New("more decimals than the currency's minor unit")

// Parse reads an amount such as "-1234.50" (or "1.234,50" with a decimal
// comma and "." thousands) exactly into minor units. Thousands separators
// must group the digits in threes (Notation.Plain), and the amount must lie
// within MaxMinor. Errors quote the amount as the source wrote it.
func (c Currency) Parse(s string, n Notation) (int64, error) {
	text := strings.TrimSpace(s)
	if text == "" {
		return 0, errors.New("empty amount")
	}
	if minor, ok := c.parsePlain(text, n); ok {
		return minor, nil
	}
	return c.parse(text, n)
}

// parse is Parse's general path, for a trimmed, non-empty text.
func (c Currency) parse(text string, n Notation) (int64, error) {
	marks := text
	if n.ThousandsSeparator != "" {
		marks = strings.ReplaceAll(marks, n.ThousandsSeparator, "")
	}
	if n.DecimalComma {
		if strings.Contains(marks, ".") {
			return 0, fmt.Errorf("amount %q has a '.' but the source declares a decimal comma", text)
		}
	} else if strings.Contains(marks, ",") {
		return 0, fmt.Errorf("amount %q has a ','; declare decimal_comma or thousands_separator for this source", text)
	}
	plain, err := n.Plain(text)
	if err != nil {
		return 0, fmt.Errorf("amount %q: %w", text, err)
	}
	// Accounting exports write negatives as (123.45) or 123.45-.
	neg := false
	if strings.HasPrefix(plain, "(") && strings.HasSuffix(plain, ")") {
		neg, plain = true, plain[1:len(plain)-1]
	} else if strings.HasSuffix(plain, "-") {
		neg, plain = true, plain[:len(plain)-1]
	}
	d, err := decimal.NewFromString(plain)
	if err != nil {
		return 0, fmt.Errorf("amount %q is not a number", text)
	}
	if strings.ContainsAny(plain, "eE") {
		return 0, fmt.Errorf("amount %q is in exponent notation", text)
	}
	if neg {
		d = d.Neg()
	}
	minor := d.Shift(c.Exponent)
	if !minor.Equal(minor.Truncate(0)) {
		return 0, fmt.Errorf("amount %q: %w (%s has %d)", text, ErrTooPrecise, c.Code, c.Exponent)
	}
	if minor.Abs().GreaterThan(decimal.NewFromInt(MaxMinor)) {
		return 0, c.OutOfRange(fmt.Sprintf("amount %q", text), n)
	}
	return minor.IntPart(), nil
}

// parsePlain reads the common form of an amount without the general
// parser's allocations: an optional minus, digits, and a decimal point
// followed by at most the currency's decimals, in a notation without a
// thousands separator or a decimal comma. Anything else, and any amount
// that is not fine, is left to the general path (ok false), which gives
// the same value for every text this accepts.
func (c Currency) parsePlain(text string, n Notation) (minor int64, ok bool) {
	if n.DecimalComma || n.ThousandsSeparator != "" {
		return 0, false
	}
	s := text
	neg := len(s) > 0 && s[0] == '-'
	if neg {
		s = s[1:]
	}
	whole, frac, point := strings.Cut(s, ".")
	if whole == "" || (point && frac == "") || len(frac) > int(c.Exponent) || len(whole)+int(c.Exponent) > 16 {
		return 0, false
	}
	for _, part := range []string{whole, frac} {
		for i := 0; i < len(part); i++ {
			if part[i] < '0' || part[i] > '9' {
				return 0, false
			}
			minor = minor*10 + int64(part[i]-'0')
		}
	}
	for range int(c.Exponent) - len(frac) {
		minor *= 10
	}
	if minor > MaxMinor {
		return 0, false
	}
	if neg {
		minor = -minor
	}
	return minor, true
}

// Units converts minor units to currency units for arithmetic in the
// analysis, where a float is fine.
func (c Currency) Units(minor int64) float64 {
	return float64(minor) / math.Pow10(int(c.Exponent))
}
