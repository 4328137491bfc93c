package sqlite

import (
	"database/sql"
	"math"

	"github.com/costdrift/costdrift/internal/costdrift"
)

// Amount totals. SQLite's SUM of integers fails the whole statement with
// "integer overflow" once a running total leaves int64, so one object's
// lines, stored before sync bounded amounts (money.MaxMinor), could stop a
// query over every object. The store therefore sums amounts in two parts:
// the whole billions of minor units (amount_minor / 10^9, at most
// ±9,223,372,036 a line) and the rest (amount_minor % 10^9, under ±10^9 a
// line). Neither part's SUM overflows below a billion lines in one group,
// and total = billions·10^9 + rest exactly (SQLite's / and % truncate
// toward zero, as Go's do).
const sumParts = `SUM(amount_minor / 1000000000), SUM(amount_minor % 1000000000)`

const billion = 1_000_000_000

// joinParts adds up the two parts of sumParts: the exact total, or ok false
// when it lies beyond int64. The running total the lines went through does
// not matter, only where they end: lines of 2^63 - 1, 2^63 - 1 and
// -(2^63 - 1) total 2^63 - 1.
func joinParts(billions, rest int64) (total int64, ok bool) {
	// Carry the rest's whole billions, so that |rest| < 10^9, then give both
	// parts one sign: billions·10^9 then lies between 0 and the total.
	billions, rest = billions+rest/billion, rest%billion
	switch {
	case billions > 0 && rest < 0:
		billions, rest = billions-1, rest+billion
	case billions < 0 && rest > 0:
		billions, rest = billions+1, rest-billion
	}
	switch {
	case billions > math.MaxInt64/billion || billions == math.MaxInt64/billion && rest > math.MaxInt64%billion:
		return 0, false
	case billions < math.MinInt64/billion || billions == math.MinInt64/billion && rest < math.MinInt64%billion:
		return 0, false
	}
	return billions*billion + rest, true
}

// scanCostTotal reads one row of period, account, cost centre and the two
// parts of sumParts into a total, marked Overflow beyond int64.
func scanCostTotal(rows *sql.Rows) (costdrift.CostTotal, error) {
	var c costdrift.CostTotal
	var billions, rest int64
	if err := rows.Scan(&c.Period, &c.Account, &c.CostCenter, &billions, &rest); err != nil {
		return c, err
	}
	return costTotal(c.Period, c.Account, c.CostCenter, billions, rest), nil
}

// costTotal is the total of the two parts of sumParts, marked Overflow
// beyond int64.
func costTotal(period, account, centre string, billions, rest int64) costdrift.CostTotal {
	c := costdrift.CostTotal{Period: period, Account: account, CostCenter: centre}
	var whole bool
	c.AmountMinor, whole = joinParts(billions, rest)
	c.Overflow = !whole
	return c
}
