package present

import (
	"math"
	"strings"
)

// Activity writes a driver value: whole and decimal values as they were
// measured, up to two decimals (681, 1,533.1, 12.25), and values below one
// in three significant digits (0.0512, 0.19), so a driver measured in
// fractions never shows as 0.
func Activity(v float64) string {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return Missing
	}
	if v != 0 && math.Abs(v) < 1 {
		return Significant(v, 3)
	}
	for d := 0; d < 2; d++ {
		if p := math.Pow10(d); math.Abs(math.Round(v*p)-v*p) < 1e-6*p {
			return Number(v, d)
		}
	}
	return Number(v, 2)
}

// ActivityRange writes a relevant range "low – high". Where the two ends
// would read the same, both get more significant digits until they differ
// (up to eight), so a narrow range of a fractional driver never reads
// "0.1 – 0.1".
func ActivityRange(low, high float64) string {
	lo, hi := Activity(low), Activity(high)
	for digits := 3; lo == hi && low != high && digits <= 8; digits++ {
		lo, hi = Significant(low, digits), Significant(high, digits)
	}
	return lo + " – " + hi
}

// Quantity writes an amount of a unit, the unit in the plural unless the
// amount is exactly one: "1,557 frames", "1 frame", "931.8 machine hours".
func Quantity(v float64, unit string) string {
	if unit == "" {
		return Activity(v)
	}
	if v == 1 {
		return "1 " + unit
	}
	return Activity(v) + " " + Plural(unit)
}

// Plural is the plural of a unit written in the singular: "frame" →
// "frames", "machine hour" → "machine hours", "unit of output index" →
// "units of output index", "delivery" → "deliveries", "box" → "boxes".
// A unit that is already plural or has no plural form (one ending in s,
// or an abbreviation such as "kWh" or "m³") is left as it is.
func Plural(unit string) string {
	head, tail, found := strings.Cut(unit, " of ")
	if found {
		return Plural(head) + " of " + tail
	}
	i := strings.LastIndexByte(unit, ' ') + 1
	return unit[:i] + pluralWord(unit[i:])
}

func pluralWord(w string) string {
	lower := strings.ToLower(w)
	switch {
	case !isLetters(w) || len(w) <= 2 || lower[1:] != w[1:]:
		return w // symbols and abbreviations have no plural: m³, kg, kWh, FTE
	case strings.HasSuffix(lower, "s"):
		return w
	case strings.HasSuffix(lower, "x"), strings.HasSuffix(lower, "ch"), strings.HasSuffix(lower, "sh"), strings.HasSuffix(lower, "z"):
		return w + "es"
	case strings.HasSuffix(lower, "y") && !strings.ContainsRune("aeiou", rune(lower[len(lower)-2])):
		return w[:len(w)-1] + "ies"
	}
	return w + "s"
}

func isLetters(w string) bool {
	for _, r := range w {
		if (r < 'a' || r > 'z') && (r < 'A' || r > 'Z') {
			return false
		}
	}
	return true
}
