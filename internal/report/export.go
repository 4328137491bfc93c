package report

import (
	"io"
	"strings"
)

// reportHeader names the columns of the report's CSV and XLSX outputs, in
// the order of the JSON contract's first fields, then the formula in words
// and the reason.
var reportHeader = []string{"object", "account", "account_name", "cost_center", "class", "driver", "lag", "fixed_per_period",
	"variable_rate", "driver2", "lag2", "variable_rate2", "r2", "n", "range_min", "range_max", "since", "until", "formula", "reason"}

// ReportCells is the rows as a table of cells for a spreadsheet: text as
// string, numbers as float64, absent numbers as nil; the header first.
func ReportCells(rows []Row) [][]any {
	out := [][]any{toAny(reportHeader)}
	for _, r := range rows {
		out = append(out, []any{r.Object, r.Account, r.AccountName, r.CostCenter, string(r.Class), text(r.Driver), count(r.Lag),
			cell(r.FixedPerPeriod), cell(r.VariableRate), text(r.Driver2), count(r.Lag2), cell(r.VariableRate2), cell(r.R2), float64(r.N),
			cell(r.RangeMin), cell(r.RangeMax), r.Since, r.Until, r.Formula, r.Reason})
	}
	return out
}

// ReportCSV writes the rows as CSV, text cells made safe to open in a
// spreadsheet (SafeCell).
func ReportCSV(w io.Writer, rows []Row) error { return writeCSV(w, ReportCells(rows)) }

func text(s *string) string {
	if s == nil {
		return ""
	}
	return *s
}

func count(n *int) any {
	if n == nil {
		return nil
	}
	return float64(*n)
}

// ColumnKind is how a spreadsheet shows a column's numbers.
type ColumnKind int

// The kinds of column the exports have.
const (
	TextColumn     ColumnKind = iota
	MoneyColumn               // amounts: two decimals, thousands separators
	RateColumn                // cost per unit of a driver: two to six decimals
	ActivityColumn            // driver values, as measured
	RatioColumn               // R²: three decimals
	CountColumn               // periods, lags, objects: whole numbers
)

// KindOf is the kind of an export column by its header name.
func KindOf(header string) ColumnKind {
	switch header {
	case "fixed_per_period", "budget", "low80", "high80", "low95", "high95", "actual", "flexible_budget", "spending_variance",
		"static_budget", "activity_variance", "se":
		return MoneyColumn
	case "variable_rate", "variable_rate2":
		return RateColumn
	case "activity", "activity2", "actual_activity", "planned_activity", "range_min", "range_max", "df":
		return ActivityColumn
	case "r2":
		return RatioColumn
	case "lag", "lag2", "n", "objects":
		return CountColumn
	}
	return TextColumn
}

// Filter selects report rows: each non-empty field must match.
type Filter struct {
	CostCenter string
	Account    string
	Class      string
	// ChangedSince keeps the objects whose behaviour starts in this period
	// or later; Later says whether one period is this one or later.
	ChangedSince string
	Later        func(period, since string) bool
}

// Keep reports whether r passes the filter.
func (f Filter) Keep(r Row) bool {
	switch {
	case f.CostCenter != "" && !strings.EqualFold(r.CostCenter, f.CostCenter):
		return false
	case f.Account != "" && r.Account != f.Account:
		return false
	case f.Class != "" && string(r.Class) != f.Class:
		return false
	case f.ChangedSince != "" && f.Later != nil && !f.Later(r.Since, f.ChangedSince):
		return false
	}
	return true
}

// Apply returns the rows that pass the filter.
func (f Filter) Apply(rows []Row) []Row {
	out := rows[:0:0]
	for _, r := range rows {
		if f.Keep(r) {
			out = append(out, r)
		}
	}
	return out
}
