package money

import (
	"errors"
	"fmt"
	"math"
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
	ThousandsSeparator string // removed before parsing, e.g. "." with a decimal comma
}

// ErrTooPrecise is returned for an amount with more decimals than the
// currency's minor unit: rounding it silently would change the books.
var ErrTooPrecise = errors.New("more decimals than the currency's minor unit")

// Parse reads an amount such as "-1234.50" (or "1.234,50" with a decimal
// comma and "." thousands) exactly into minor units.
func (c Currency) Parse(s string, n Notation) (int64, error) {
	s = strings.TrimSpace(s)
	if s == "" {
		return 0, errors.New("empty amount")
	}
	if n.ThousandsSeparator != "" {
		s = strings.ReplaceAll(s, n.ThousandsSeparator, "")
	}
	if n.DecimalComma {
		if strings.Contains(s, ".") {
			return 0, fmt.Errorf("amount %q has a '.' but the source declares a decimal comma", s)
		}
		s = strings.Replace(s, ",", ".", 1)
	} else if strings.Contains(s, ",") {
		return 0, fmt.Errorf("amount %q has a ','; declare decimal_comma or thousands_separator for this source", s)
	}
	// Accounting exports write negatives as (123.45) or 123.45-.
	neg := false
	if strings.HasPrefix(s, "(") && strings.HasSuffix(s, ")") {
		neg, s = true, s[1:len(s)-1]
	} else if strings.HasSuffix(s, "-") {
		neg, s = true, s[:len(s)-1]
	}
	d, err := decimal.NewFromString(s)
	if err != nil {
		return 0, fmt.Errorf("amount %q is not a number", s)
	}
	if strings.ContainsAny(s, "eE") {
		return 0, fmt.Errorf("amount %q is in exponent notation", s)
	}
	if neg {
		d = d.Neg()
	}
	minor := d.Shift(c.Exponent)
	if !minor.Equal(minor.Truncate(0)) {
		return 0, fmt.Errorf("amount %q: %w (%s has %d)", s, ErrTooPrecise, c.Code, c.Exponent)
	}
	if minor.GreaterThan(decimal.NewFromInt(math.MaxInt64/4)) || minor.LessThan(decimal.NewFromInt(-math.MaxInt64/4)) {
		return 0, fmt.Errorf("amount %q is out of range", s)
	}
	return minor.IntPart(), nil
}

// Units converts minor units to currency units for arithmetic in the
// analysis, where a float is fine.
func (c Currency) Units(minor int64) float64 {
	return float64(minor) / math.Pow10(int(c.Exponent))
}
