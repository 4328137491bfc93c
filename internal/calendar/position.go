package calendar

// PositionInYear returns where a period stands in its year of twelve
// periods: the month number of a calendar month ("2025-03" is 3) or the
// period number of a 4-4-5, 4-5-4 or 5-4-4 period ("FY2025-P03" is 3). A
// cost posted every quarter, half-year or year lands on the positions that
// leave the same remainder by 3, 6 or 12, year after year. A week
// ("2025-W07") has no such position, since a year holds 52 or 53 of them,
// and neither has a name that is not a period of these kinds: ok is false.
func PositionInYear(period string) (position int, ok bool) {
	if _, err := parseMonth(period); err == nil {
		m, _ := digits(period[5:])
		return m, true
	}
	if len(period) == 10 && period[:2] == "FY" && period[6:8] == "-P" {
		_, okY := digits(period[2:6])
		p, okP := digits(period[8:])
		if okY && okP && p >= 1 && p <= 12 {
			return p, true
		}
	}
	return 0, false
}
