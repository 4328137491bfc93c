package present

import (
	"math"
	"strconv"
	"strings"
)

// Missing is shown for a figure that is undefined or not finite.
const Missing = "-"

// Number writes v with the given decimals and comma thousands separators:
// Number(4210.5, 2) is "4,210.50". A value that rounds to zero has no minus
// sign; a value that is not finite is Missing.
func Number(v float64, decimals int) string {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return Missing
	}
	abs := math.Abs(v)
	if p := math.Pow10(decimals); abs*p < 1e15 {
		// Halves round away from zero, as on an invoice (common
		// practice), not to even as strconv does for exact binary halves.
		abs = math.Round(abs*p) / p
	}
	s := strconv.FormatFloat(abs, 'f', decimals, 64)
	intPart, frac, _ := strings.Cut(s, ".")
	var b strings.Builder
	if v < 0 && strings.Trim(s, "0.") != "" {
		b.WriteByte('-')
	}
	for i, c := range intPart {
		if i > 0 && (len(intPart)-i)%3 == 0 {
			b.WriteByte(',')
		}
		b.WriteRune(c)
	}
	if decimals > 0 {
		b.WriteByte('.')
		b.WriteString(frac)
	}
	return b.String()
}

// Amount writes an amount of money with two decimals and thousands
// separators, without its currency, for a table whose header names it:
// 2800 is "2,800.00".
func Amount(v float64) string { return Number(v, 2) }

// Money writes an amount of money with its currency code after it:
// Money(2800, "EUR") is "2,800.00 EUR". Without a currency it is Amount.
func Money(v float64, currency string) string {
	if currency == "" || math.IsNaN(v) || math.IsInf(v, 0) {
		return Amount(v)
	}
	return Amount(v) + " " + currency
}

// Percent writes a share as a whole percentage with a space before the
// sign, as the reasons write it: 0.184 is "18 %".
func Percent(share float64) string {
	if math.IsNaN(share) || math.IsInf(share, 0) {
		return Missing
	}
	return Number(100*share, 0) + " %"
}

// Significant writes v with at least digits significant digits and at
// most 6 decimals, trailing zeros after the point dropped, with thousands
// separators: Significant(0.0512, 2) is "0.051", Significant(1533.14, 2)
// is "1,533". Whole-number parts are never rounded away.
func Significant(v float64, digits int) string {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return Missing
	}
	if v == 0 {
		return "0"
	}
	decimals := max(0, min(6, digits-1-int(math.Floor(math.Log10(math.Abs(v))))))
	return trimZeros(Number(v, decimals))
}

// trimZeros drops trailing zeros after a decimal point, and the point.
func trimZeros(s string) string {
	if !strings.Contains(s, ".") {
		return s
	}
	s = strings.TrimRight(s, "0")
	s = strings.TrimSuffix(s, ".")
	if s == "-0" {
		return "0"
	}
	return s
}

// Finite is v for JSON: nil when v is NaN, infinite or beyond ±1e300 (the
// store's stand-in for an infinite statistic is the largest float), so
// JSON never holds Inf, NaN or 1.8e308.
func Finite(v float64) *float64 {
	if math.IsNaN(v) || math.IsInf(v, 0) || math.Abs(v) > 1e300 {
		return nil
	}
	return &v
}
