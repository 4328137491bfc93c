package sqlsource

import (
	"fmt"
	"math"
	"math/big"
	"strconv"
	"strings"
	"time"

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

// amount converts a money value exactly into minor units, or says why not.
//
// Text (NUMERIC, DECIMAL, a character column) goes straight to money
// parsing, so 0.30 is 30 cents whatever the column's scale. A float64 is
// first written as the shortest decimal that reads back as the same double
// (strconv.FormatFloat(v, 'f', -1, 64)): an amount that was stored as a
// short decimal comes back as exactly that decimal (0.3 -> "0.3" -> 30),
// while a double that is not such a decimal, such as the sum 0.1 + 0.2 =
// 0.30000000000000004, keeps its stray digits and is rejected as too
// precise instead of being rounded silently. Formatting with a fixed number
// of decimals would round, and %v would switch to exponent notation.
func amount(v any, cur money.Currency, n money.Notation) (int64, string) {
	var s string
	switch x := v.(type) {
	case nil:
		return 0, "missing amount"
	case string, []byte:
		s = text(x)
		if s == "" {
			return 0, "missing amount"
		}
		minor, err := cur.Parse(s, n)
		if err != nil {
			return 0, "bad amount: " + err.Error()
		}
		return minor, ""
	case int64:
		s = strconv.FormatInt(x, 10)
	case float64:
		if math.IsNaN(x) || math.IsInf(x, 0) {
			return 0, fmt.Sprintf("bad amount: %v is not a number", x)
		}
		s = strconv.FormatFloat(x, 'f', -1, 64)
	default:
		return 0, fmt.Sprintf("bad amount: a %T value, not a number", v)
	}
	minor, err := cur.Parse(s, money.Notation{})
	if err != nil {
		reason := "bad amount: " + err.Error()
		if _, isFloat := v.(float64); isFloat {
			reason += " (a floating-point column: store or sum amounts as NUMERIC or DECIMAL)"
		}
		return 0, reason
	}
	return minor, ""
}

// date reads a posting date from a date or timestamp (its calendar day in
// the location the driver gave it) or from text in layout or ISO form, with
// an optional time after the date ("2025-01-31 00:00:00", "2025-01-31T...").
func date(v any, layout string) (time.Time, string) {
	switch x := v.(type) {
	case nil:
		return time.Time{}, "missing date"
	case time.Time:
		if x.IsZero() {
			// The SQLite driver gives the zero time for a value of a DATE
			// column it cannot read as a date (go-sqlite3, rows.Next); no
			// ledger has a posting in the year 1.
			return time.Time{}, "bad date: 0001-01-01, which the driver returns for a value it cannot read as a date"
		}
		y, m, d := x.Date()
		return time.Date(y, m, d, 0, 0, 0, 0, time.UTC), ""
	case string, []byte:
		s := text(x)
		if s == "" {
			return time.Time{}, "missing date"
		}
		if t, ok := parseDate(s, layout); ok {
			return t, ""
		}
		return time.Time{}, fmt.Sprintf("bad date %q: want %s", s, humanLayout(layout))
	default:
		return time.Time{}, fmt.Sprintf("bad date: a %T value (%s), not a date", v, text(v))
	}
}

func parseDate(s, layout string) (time.Time, bool) {
	for _, l := range []string{layout, "2006-01-02"} {
		if l == "" {
			continue
		}
		if t, err := time.Parse(l, s); err == nil {
			return t, true
		}
	}
	if len(s) > 10 && (s[10] == ' ' || s[10] == 'T') {
		if t, err := time.Parse("2006-01-02", s[:10]); err == nil {
			return t, true
		}
	}
	return time.Time{}, false
}

// month reads a period given as YYYY-MM text or as a date or timestamp
// (e.g. date_trunc('month', posted_on)), and returns its first day.
func month(v any, layout string) (time.Time, string) {
	switch x := v.(type) {
	case nil:
		return time.Time{}, "missing period"
	case time.Time:
		return time.Date(x.Year(), x.Month(), 1, 0, 0, 0, 0, time.UTC), ""
	case string, []byte:
		s := text(x)
		if s == "" {
			return time.Time{}, "missing period"
		}
		if len(s) == 7 {
			if t, err := time.Parse("2006-01", s); err == nil {
				return t, ""
			}
		}
		if t, ok := parseDate(s, layout); ok {
			return time.Date(t.Year(), t.Month(), 1, 0, 0, 0, 0, time.UTC), ""
		}
		return time.Time{}, fmt.Sprintf("bad period %q: want YYYY-MM or a date", s)
	default:
		return time.Time{}, fmt.Sprintf("bad period: a %T value (%s), want YYYY-MM or a date", v, text(v))
	}
}

// period reads an activity period: YYYY-MM text is read as the month's
// first day (as in csvsource), a date as itself, and the calendar names the
// period.
func period(v any, opt Options) (string, string) {
	switch x := v.(type) {
	case nil:
		return "", "missing period"
	case time.Time:
		return opt.Period(x), ""
	case string, []byte:
		s := text(x)
		if s == "" {
			return "", "missing period"
		}
		if len(s) == 7 {
			if t, err := time.Parse("2006-01", s); err == nil {
				return opt.Period(t), ""
			}
		}
		if t, ok := parseDate(s, opt.DateLayout); ok {
			return opt.Period(t), ""
		}
		return "", fmt.Sprintf("bad period %q: want YYYY-MM or a date", s)
	default:
		return "", fmt.Sprintf("bad period: a %T value (%s), want YYYY-MM or a date", v, text(v))
	}
}

// quantity reads an activity value: a number that is finite and not negative.
func quantity(v any, n money.Notation) (float64, string) {
	var f float64
	switch x := v.(type) {
	case nil:
		return 0, "missing value"
	case int64:
		f = float64(x)
	case float64:
		f = x
	case string, []byte:
		s := text(x)
		if s == "" {
			return 0, "missing value"
		}
		t, err := n.Plain(s)
		if err != nil {
			return 0, fmt.Sprintf("bad value %q: %v", s, err)
		}
		if f, err = strconv.ParseFloat(t, 64); err != nil {
			return 0, fmt.Sprintf("bad value %q: not a number", s)
		}
	default:
		return 0, fmt.Sprintf("bad value: a %T value, not a number", v)
	}
	if math.IsNaN(f) || math.IsInf(f, 0) {
		return 0, fmt.Sprintf("bad value %q: not a number", text(v))
	}
	if f < 0 {
		return 0, fmt.Sprintf("bad value %q: activity cannot be negative", text(v))
	}
	return f, ""
}

// lineNumber reads a ledger line number: a whole number from 1.
func lineNumber(v any) (int, string) {
	switch x := v.(type) {
	case nil:
		return 0, "missing line"
	case int64:
		if x >= 1 && x <= math.MaxInt32 {
			return int(x), ""
		}
	case float64:
		if x >= 1 && x <= math.MaxInt32 && x == math.Trunc(x) {
			return int(x), ""
		}
	case string, []byte:
		if n, err := strconv.Atoi(text(x)); err == nil && n >= 1 {
			return n, ""
		}
	}
	return 0, fmt.Sprintf("bad line %q: want a whole number from 1", text(v))
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

// humanLayout spells a Go date layout the way the config does.
func humanLayout(layout string) string {
	if layout == "" {
		layout = "2006-01-02"
	}
	r := strings.NewReplacer("2006", "YYYY", "01", "MM", "02", "DD")
	return r.Replace(layout)
}
