package present

import (
	"math"
	"strings"
)

// Rate writes a cost per unit of a driver: two decimals from one up
// (2.54, 18.47), and below one up to four significant digits and at least
// two decimals (0.2125, 0.04123, 0.50), so a small rate never reads 0.00.
func Rate(v float64) string {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return Missing
	}
	if v != 0 && math.Abs(v) < 1 {
		s := Significant(v, 4)
		if _, frac, _ := strings.Cut(s, "."); len(frac) < 2 {
			return Number(v, 2)
		}
		return s
	}
	return Number(v, 2)
}

// RatePer writes a rate with its unit: "2.54 per machine hour". The unit
// follows "per" in the singular, as one unit is what the rate is for.
func RatePer(v float64, unit string) string { return Rate(v) + " per " + unit }

// UnitOf is the unit of a driver that has none configured: "unit of
// machine hours" for the driver machine_hours.
func UnitOf(unit, driver string) string {
	if unit != "" {
		return unit
	}
	return "unit of " + DriverWords(driver)
}

// DriverWords writes a driver's name in words: machine_hours is "machine
// hours".
func DriverWords(driver string) string {
	out := []byte(driver)
	for i, c := range out {
		if c == '_' {
			out[i] = ' '
		}
	}
	return string(out)
}
