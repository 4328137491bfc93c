package drift

import (
	_ "embed"
	"encoding/csv"
	"fmt"
	"math"
	"strconv"
	"strings"
	"sync"
)

// andrewsCSV is Andrews (2003, "Tests for parameter instability and
// structural change with unknown change point: a corrigendum",
// Econometrica 71(1), 395–397), Table 1: asymptotic sup-Wald critical
// values for p = 1..20 restrictions and trimming π0 = 0.05..0.50, on the
// Wald (χ²) scale. The file is a byte-for-byte copy of the project's
// reference file, decoded from data/ACValues.rda of the R package
// tseriesTARMA (github.com/cran/tseriesTARMA, commit
// f2299190b443830a7ce191b01f08a0cf07d19fa9); its comment lines say so.
//
//go:embed andrews2003_supwald_cv.csv
var andrewsCSV string

type andrewsRow struct {
	pi0 float64
	cv  [][3]float64 // cv[p−1] = {10 %, 5 %, 1 %}
}

var andrewsTable = sync.OnceValue(func() []andrewsRow {
	var lines []string
	for _, l := range strings.Split(andrewsCSV, "\n") {
		if l = strings.TrimSpace(l); l != "" && !strings.HasPrefix(l, "#") {
			lines = append(lines, l)
		}
	}
	recs, err := csv.NewReader(strings.NewReader(strings.Join(lines, "\n"))).ReadAll()
	if err != nil {
		panic("drift: embedded Andrews table: " + err.Error())
	}
	var rows []andrewsRow
	for _, rec := range recs[1:] { // recs[0] is the header
		if (len(rec)-2)%3 != 0 {
			panic(fmt.Sprintf("drift: embedded Andrews table: row with %d fields", len(rec)))
		}
		v := make([]float64, len(rec))
		for i, f := range rec {
			x, err := strconv.ParseFloat(f, 64)
			if err != nil {
				panic("drift: embedded Andrews table: " + err.Error())
			}
			v[i] = x
		}
		row := andrewsRow{pi0: v[0]}
		for j := 2; j < len(v); j += 3 {
			row.cv = append(row.cv, [3]float64{v[j], v[j+1], v[j+2]})
		}
		rows = append(rows, row)
	}
	return rows
})

// AndrewsCritical returns Andrews' (1993; corrected 2003) asymptotic
// critical value of the sup-Wald statistic for p coefficients allowed to
// break, trimming π0 = trim (breaks searched in [π0, 1 − π0]) and level
// 0.10, 0.05 or 0.01, on the Wald scale of FStatsResult.SupF. At 15 %
// trimming: p = 1: 7.12, 8.68, 12.16; p = 2: 10.00, 11.72, 15.56; p = 3:
// 12.28, 14.13, 18.07 (10, 5, 1 %).
//
// These are asymptotic: in 24–36 periods ⌊0.15·n⌋/n is below 0.15 and the
// statistic is heavier-tailed than its limit, so the bootstrap p-value is
// the product's test and this value is shown for reference.
//
// It returns an error wrapping ErrNoTable when p is outside 1..20, trim is
// not one of the tabulated π0 (0.05, 0.10, 0.15, 0.20, 0.25, 0.30, 0.35,
// 0.40, 0.45, 0.47, 0.48, 0.49, 0.50), or level is not 0.10, 0.05 or 0.01.
func AndrewsCritical(p int, trim, level float64) (float64, error) {
	col := -1
	for i, l := range [3]float64{0.10, 0.05, 0.01} {
		if math.Abs(level-l) < 1e-9 {
			col = i
		}
	}
	if col < 0 {
		return 0, fmt.Errorf("andrews critical value: level %g is not 0.10, 0.05 or 0.01: %w", level, ErrNoTable)
	}
	for _, row := range andrewsTable() {
		if math.Abs(row.pi0-trim) > 1e-9 {
			continue
		}
		if p < 1 || p > len(row.cv) {
			return 0, fmt.Errorf("andrews critical value: %d restrictions, table has 1..%d: %w", p, len(row.cv), ErrNoTable)
		}
		return row.cv[p-1][col], nil
	}
	return 0, fmt.Errorf("andrews critical value: trimming %g is not tabulated: %w", trim, ErrNoTable)
}
