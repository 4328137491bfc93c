package sqlsource

import (
	"fmt"
	"math"
	"math/big"
	"strconv"
	"strings"
	"time"

	"github.com/costdrift/costdrift/internal/canon"
	"github.com/costdrift/costdrift/internal/money"
)

// Values arrive as the drivers give them to database/sql: nil for NULL,
// int64, float64, bool, string, []byte or time.Time. PostgreSQL NUMERIC comes
// as a string from pgx, MySQL and SQL Server DECIMAL as []byte, SQLite REAL
// and every double precision column as float64.

// text renders a value as a field: NULL is empty, numbers in plain decimal.
func text(v any) string {
	switch x := v.(type) {
	case nil:
		return ""
	case string:
		return strings.TrimSpace(x)
	case []byte:
		return strings.TrimSpace(string(x))
	case int64:
		return strconv.FormatInt(x, 10)
	case float64:
		return strconv.FormatFloat(x, 'f', -1, 64)
	case bool:
		return strconv.FormatBool(x)
	case time.Time:
		return x.Format(time.RFC3339Nano)
	default:
		return strings.TrimSpace(fmt.Sprint(x))
	}
}

// cell turns a value, as the driver gives it, into the canonical cell of
// the column it stands under. Text stays text, for the rules to read by
// the source's notation and date format; numbers, dates and NULL are
// turned here.
func cell(col canon.Column, v any, cur money.Currency) canon.Cell {
	switch col.Kind() {
	case canon.MoneyKind:
		return moneyCell(col, v, cur)
	case canon.DateKind, canon.PeriodKind:
		return dateCell(col, v)
	case canon.QuantityKind:
		return quantityCell(v)
	}
	return canon.TextCell(text(v))
}

// moneyCell reads an amount exactly into minor units, or says why not.
//
// Text (NUMERIC, DECIMAL, a character column) goes to the rules, so 0.30 is
// 30 cents whatever the column's scale. A float64 is first written as the
// shortest decimal that reads back as the same double
// (strconv.FormatFloat(v, 'f', -1, 64)): an amount that was stored as a
// short decimal comes back as exactly that decimal (0.3 -> "0.3" -> 30),
// while a double that is not such a decimal, such as the sum 0.1 + 0.2 =
// 0.30000000000000004, keeps its stray digits and is rejected as too
// precise instead of being rounded silently. Formatting with a fixed number
// of decimals would round, and %v would switch to exponent notation.
func moneyCell(col canon.Column, v any, cur money.Currency) canon.Cell {
	var s string
	switch x := v.(type) {
	case nil:
		return canon.Cell{}
	case string, []byte:
		return canon.TextCell(text(x))
	case int64:
		s = strconv.FormatInt(x, 10)
	case float64:
		if math.IsNaN(x) || math.IsInf(x, 0) {
			return canon.BadCell(fmt.Sprintf("bad %s: %v is not a number", col, x))
		}
		s = strconv.FormatFloat(x, 'f', -1, 64)
	default:
		return canon.BadCell(fmt.Sprintf("bad %s: a %T value, not a number", col, v))
	}
	minor, err := cur.Parse(s, money.Notation{})
	if err != nil {
		reason := fmt.Sprintf("bad %s: %v", col, err)
		if _, isFloat := v.(float64); isFloat {
			reason += " (a floating-point column: store or sum amounts as NUMERIC or DECIMAL)"
		}
		return canon.BadCell(reason)
	}
	return canon.MoneyCell(minor, s)
}

// dateCell reads a date or a period: a date or timestamp is its calendar
// day in the location the driver gave it; text goes to the rules, which
// also take ISO 8601 with a time after the date ("2025-01-31 00:00:00").
func dateCell(col canon.Column, v any) canon.Cell {
	switch x := v.(type) {
	case nil:
		return canon.Cell{}
	case time.Time:
		if x.IsZero() {
			// The SQLite driver gives the zero time for a value of a DATE
			// column it cannot read as a date (go-sqlite3, rows.Next); no
			// ledger has a posting in the year 1.
			return canon.BadCell(fmt.Sprintf("bad %s: 0001-01-01, which the driver returns for a value it cannot read as a date", col))
		}
		return canon.DayCell(x, "")
	case string, []byte:
		return canon.TextCell(text(x))
	}
	if col == canon.Period {
		return canon.BadCell(fmt.Sprintf("bad period: a %T value (%s), want YYYY-MM or a date", v, text(v)))
	}
	return canon.BadCell(fmt.Sprintf("bad date: a %T value (%s), not a date", v, text(v)))
}

// quantityCell reads an activity value: a number as it is, text by the
// rules.
func quantityCell(v any) canon.Cell {
	switch x := v.(type) {
	case nil:
		return canon.Cell{}
	case int64:
		return canon.NumberCell(float64(x), strconv.FormatInt(x, 10))
	case float64:
		return canon.NumberCell(x, text(x))
	case string, []byte:
		return canon.TextCell(text(x))
	}
	return canon.BadCell(fmt.Sprintf("bad value: a %T value, not a number", v))
}

// maxRaw caps the stored text of a rejected row.
const maxRaw = 4096

// raw renders a row for the rejects table as name=value pairs: text
// quoted, numbers and dates bare, NULL as NULL.
func raw(cols []string, vals []any) string {
	var b strings.Builder
	for i, c := range cols {
		if i > 0 {
			b.WriteString(", ")
		}
		b.WriteString(c)
		b.WriteByte('=')
		switch x := vals[i].(type) {
		case nil:
			b.WriteString("NULL")
		case string:
			b.WriteString(strconv.Quote(x))
		case []byte:
			b.WriteString(strconv.Quote(string(x)))
		case time.Time:
			if x.Hour() == 0 && x.Minute() == 0 && x.Second() == 0 && x.Nanosecond() == 0 {
				b.WriteString(x.Format("2006-01-02"))
			} else {
				b.WriteString(x.Format(time.RFC3339Nano))
			}
		default:
			b.WriteString(text(x))
		}
		if b.Len() > maxRaw {
			break
		}
	}
	s := b.String()
	if len(s) > maxRaw {
		s = strings.ToValidUTF8(s[:maxRaw], "") // do not end inside a character
	}
	return s
}

// greater orders two watermark values of one column: times by time,
// numbers (including DECIMAL text) by value, anything else as text.
func greater(a, b any) bool {
	ta, aTime := a.(time.Time)
	tb, bTime := b.(time.Time)
	if aTime && bTime {
		return ta.After(tb)
	}
	if ra, ok := rat(a); ok {
		if rb, ok := rat(b); ok {
			return ra.Cmp(rb) > 0
		}
	}
	return text(a) > text(b)
}

func rat(v any) (*big.Rat, bool) {
	r := new(big.Rat)
	switch x := v.(type) {
	case int64:
		return r.SetInt64(x), true
	case float64:
		if math.IsNaN(x) || math.IsInf(x, 0) {
			return nil, false
		}
		return r.SetFloat64(x), true
	case string, []byte:
		s := text(x)
		if s == "" || strings.ContainsAny(s, "/eE") { // Rat would read 1/2 and 1e3
			return nil, false
		}
		_, ok := r.SetString(s)
		return r, ok
	}
	return nil, false
}

// watermarkText writes a watermark value the way the database reads it back
// when it is bound to :watermark next time. PostgreSQL reads RFC 3339 for
// both timestamp kinds (ignoring the zone for timestamp without time zone).
// The others get "YYYY-MM-DD hh:mm:ss[.fraction]", which MySQL DATETIME,
// SQL Server datetime2 and SQLite's text timestamps compare correctly, with
// the offset only when the driver gave a time outside UTC.
func watermarkText(driver string, v any) string {
	t, ok := v.(time.Time)
	if !ok {
		return text(v)
	}
	if driver == "postgres" {
		return t.Format(time.RFC3339Nano)
	}
	if t.Location() == time.UTC {
		return t.Format("2006-01-02 15:04:05.999999999")
	}
	return t.Format("2006-01-02 15:04:05.999999999-07:00")
}
