package report

import (
	"encoding/csv"
	"fmt"
	"io"
	"math"
	"slices"
	"strings"
	"text/tabwriter"

	"github.com/costdrift/costdrift/internal/costdrift"
	"github.com/costdrift/costdrift/internal/present"
)

// BudgetRow is one budget line as the JSON, CSV and XLSX outputs write it.
// The first ten fields are the documented contract; totals have an empty
// object and account, and the overall total an empty cost centre too.
type BudgetRow struct {
	Object     string   `json:"object"`
	Account    string   `json:"account"`
	CostCenter string   `json:"cost_center"`
	Period     string   `json:"period"`
	Budget     *float64 `json:"budget"`
	Low80      *float64 `json:"low80"`
	High80     *float64 `json:"high80"`
	Low95      *float64 `json:"low95"`
	High95     *float64 `json:"high95"`
	Warning    string   `json:"warning"`

	Line        costdrift.LineKind `json:"line"` // object, cost_center or total
	AccountName string             `json:"account_name"`
	Class       string             `json:"class,omitempty"`
	Driver      string             `json:"driver,omitempty"`
	Activity    *float64           `json:"activity"`
	Driver2     string             `json:"driver2,omitempty"`
	Activity2   *float64           `json:"activity2"`
	Objects     int                `json:"objects"`
	SE          *float64           `json:"se"`
	DF          *float64           `json:"df"`
	// Lag and Lag2: the activities are of this many periods before the
	// line's period; null without a driver.
	Lag  *int `json:"lag"`
	Lag2 *int `json:"lag2"`
}

// BudgetRows turns budget lines (objects and totals) into rows, rounding
// money to cents.
func BudgetRows(lines []costdrift.BudgetLine, names map[string]string) []BudgetRow {
	rows := make([]BudgetRow, 0, len(lines))
	for _, l := range lines {
		r := BudgetRow{Period: l.Period, CostCenter: l.Object.CostCenter, Line: l.Kind, Warning: l.Warning,
			Budget: money(l.Value), Low80: money(l.Low80), High80: money(l.High80), Low95: money(l.Low95), High95: money(l.High95),
			Driver: l.Driver, Activity: ptr(l.Activity), Driver2: l.Driver2, Activity2: ptr(l.Activity2), Objects: l.Objects,
			SE: money(l.SE), DF: ptr(l.DF)}
		if l.Kind == costdrift.LineObject {
			r.Object, r.Account, r.AccountName, r.Class = l.Object.String(), l.Object.Account, names[l.Object.Account], string(l.Class)
		}
		if l.Driver != "" {
			r.Lag = new(l.Lag)
		}
		if l.Driver2 != "" {
			r.Lag2 = new(l.Lag2)
		}
		rows = append(rows, r)
	}
	return rows
}

// money rounds to cents; NaN and infinities are absent (nil).
func money(v float64) *float64 {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return nil
	}
	r := math.Round(v*100) / 100
	return &r
}

// BudgetJSON writes the rows as a JSON array.
func BudgetJSON(w io.Writer, rows []BudgetRow) error { return EncodeJSON(w, rows) }

// budgetHeader names the columns of the CSV and XLSX outputs.
var budgetHeader = []string{"line", "period", "object", "account", "account_name", "cost_center", "class", "driver", "activity",
	"driver2", "activity2", "budget", "low80", "high80", "low95", "high95", "warning", "lag", "lag2"}

// BudgetCells is the rows as a table of cells for a spreadsheet: text as
// string, numbers as float64, absent numbers as nil; the header first.
func BudgetCells(rows []BudgetRow) [][]any {
	out := [][]any{toAny(budgetHeader)}
	for _, r := range rows {
		out = append(out, []any{string(r.Line), r.Period, r.Object, r.Account, r.AccountName, r.CostCenter, r.Class, r.Driver, cell(r.Activity),
			r.Driver2, cell(r.Activity2), cell(r.Budget), cell(r.Low80), cell(r.High80), cell(r.Low95), cell(r.High95), r.Warning,
			count(r.Lag), count(r.Lag2)})
	}
	return out
}

// BudgetCSV writes the rows as CSV, text cells made safe to open in a
// spreadsheet.
func BudgetCSV(w io.Writer, rows []BudgetRow) error { return writeCSV(w, BudgetCells(rows)) }

// BudgetTable writes the budget per period: the objects, then each cost
// centre's total, then the overall total; the warnings as numbered notes;
// the assumption behind the totals and the cautions. Text from the store
// and the plan's name are shown through TerminalText.
func BudgetTable(w io.Writer, rows []BudgetRow, currency, plan string) error {
	fmt.Fprintf(w, "Flexible budget from plan %s (%s per period)\n", TerminalText(plan), currency)
	objectWarnings := make([]string, 0, len(rows))
	for _, r := range rows {
		if r.Line == costdrift.LineObject {
			objectWarnings = append(objectWarnings, r.Warning)
		}
	}
	notes := &noteList{shared: sharedParts(objectWarnings)}
	period := ""
	var tw *tabwriter.Writer
	flush := func() error {
		if tw == nil {
			return nil
		}
		return tw.Flush()
	}
	for _, r := range rows {
		if r.Period != period {
			if err := flush(); err != nil {
				return err
			}
			period = r.Period
			fmt.Fprintf(w, "\n%s\n", TerminalText(period))
			tw = tabwriter.NewWriter(w, 0, 0, 2, ' ', 0)
			fmt.Fprintln(tw, "OBJECT\tACCOUNT\tCLASS\tACTIVITY\tBUDGET\t80 % INTERVAL\t95 % INTERVAL\tNOTE\t")
		}
		name, what, act := lineNames(r.Line, r.Object, r.AccountName, r.CostCenter, r.Objects)
		if r.Activity != nil {
			act = Activity(*r.Activity) + " " + TerminalText(words(r.Driver)) + before(r.Lag)
			if r.Activity2 != nil {
				act += " + " + Activity(*r.Activity2) + " " + TerminalText(words(r.Driver2)) + before(r.Lag2)
			}
		}
		fmt.Fprintf(tw, "%s\t%s\t%s\t%s\t%s\t%s\t%s\t%s\t\n", name, what, TerminalText(r.Class), act, moneyText(r.Budget),
			interval(r.Low80, r.High80), interval(r.Low95, r.High95), notes.add(withoutIndependence(r.Warning)))
	}
	if err := flush(); err != nil {
		return err
	}
	notes.write(w)
	fmt.Fprintf(w, "\nTotals add the objects' budgets and their variances. %s.\n", sentence(costdrift.Independence))
	fmt.Fprintln(w, "An interval is where a period's cost should fall at the planned activity if the formula holds (prediction interval).")
	fmt.Fprintln(w)
	_, err := fmt.Fprintln(w, Caution)
	return err
}

// VarianceRow is one variance line as the outputs write it.
type VarianceRow struct {
	Object           string             `json:"object"`
	Account          string             `json:"account"`
	CostCenter       string             `json:"cost_center"`
	Period           string             `json:"period"`
	Line             costdrift.LineKind `json:"line"`
	AccountName      string             `json:"account_name"`
	Class            string             `json:"class,omitempty"`
	Driver           string             `json:"driver,omitempty"`
	ActualActivity   *float64           `json:"actual_activity"`
	PlannedActivity  *float64           `json:"planned_activity"`
	Actual           *float64           `json:"actual"`
	FlexibleBudget   *float64           `json:"flexible_budget"`
	Low95            *float64           `json:"low95"`
	High95           *float64           `json:"high95"`
	SpendingVariance *float64           `json:"spending_variance"`
	SpendingMark     string             `json:"spending_mark"`
	StaticBudget     *float64           `json:"static_budget"`
	ActivityVariance *float64           `json:"activity_variance"`
	ActivityMark     string             `json:"activity_mark"`
	Outside95        bool               `json:"outside95"`
	Objects          int                `json:"objects"`
	Warning          string             `json:"warning"`
	Lag              *int               `json:"lag"` // the activities are of this many periods before; null without a driver
}

// VarianceRows turns variance lines into rows, rounding money to cents.
func VarianceRows(lines []costdrift.VarianceLine, names map[string]string) []VarianceRow {
	rows := make([]VarianceRow, 0, len(lines))
	for _, l := range lines {
		r := VarianceRow{Period: l.Period, CostCenter: l.Object.CostCenter, Line: l.Kind, Driver: l.Driver,
			ActualActivity: ptr(l.ActualActivity), PlannedActivity: ptr(l.PlanActivity), Actual: money(l.Actual),
			FlexibleBudget: money(l.Flexible.Value), Low95: money(l.Flexible.Low95), High95: money(l.Flexible.High95),
			SpendingVariance: money(l.SpendingVariance), SpendingMark: l.SpendingMark(), StaticBudget: money(l.Static),
			ActivityVariance: money(l.ActivityVariance), ActivityMark: l.ActivityMark(), Outside95: l.Outside95,
			Objects: l.Objects, Warning: l.Warning}
		if math.IsNaN(l.SpendingVariance) {
			r.SpendingMark = ""
		}
		if math.IsNaN(l.ActivityVariance) {
			r.ActivityMark = ""
		}
		if l.Kind == costdrift.LineObject {
			r.Object, r.Account, r.AccountName, r.Class = l.Object.String(), l.Object.Account, names[l.Object.Account], string(l.Class)
		}
		if l.Driver != "" {
			r.Lag = new(l.Lag)
		}
		rows = append(rows, r)
	}
	return rows
}

// VarianceJSON writes the rows as a JSON array.
func VarianceJSON(w io.Writer, rows []VarianceRow) error { return EncodeJSON(w, rows) }

var varianceHeader = []string{"line", "period", "object", "account", "account_name", "cost_center", "class", "driver",
	"actual_activity", "planned_activity", "actual", "flexible_budget", "low95", "high95", "spending_variance", "spending_mark",
	"static_budget", "activity_variance", "activity_mark", "outside95", "warning"}

// VarianceCells is the rows as spreadsheet cells, the header first.
func VarianceCells(rows []VarianceRow) [][]any {
	out := [][]any{toAny(varianceHeader)}
	for _, r := range rows {
		outside := ""
		if r.Outside95 {
			outside = "yes"
		}
		out = append(out, []any{string(r.Line), r.Period, r.Object, r.Account, r.AccountName, r.CostCenter, r.Class, r.Driver,
			cell(r.ActualActivity), cell(r.PlannedActivity), cell(r.Actual), cell(r.FlexibleBudget), cell(r.Low95), cell(r.High95),
			cell(r.SpendingVariance), r.SpendingMark, cell(r.StaticBudget), cell(r.ActivityVariance), r.ActivityMark, outside, r.Warning,
			count(r.Lag)})
	}
	return out
}

// VarianceCSV writes the rows as CSV, text cells made safe.
func VarianceCSV(w io.Writer, rows []VarianceRow) error { return writeCSV(w, VarianceCells(rows)) }

// VarianceTable writes the period's variances: actual against the flexible
// budget (spending variance) and, with a plan, the flexible against the
// static budget (activity variance), F or U; an actual outside the 95 %
// interval is starred. Text from the store and the plan's name are shown
// through TerminalText.
func VarianceTable(w io.Writer, rows []VarianceRow, currency, period, plan string) error {
	title := fmt.Sprintf("Variances for %s (%s)", TerminalText(period), currency)
	if plan != "" {
		title += ", static budget from plan " + TerminalText(plan)
	}
	fmt.Fprintln(w, title)
	fmt.Fprintln(w)
	objectWarnings := make([]string, 0, len(rows))
	for _, r := range rows {
		if r.Line == costdrift.LineObject {
			objectWarnings = append(objectWarnings, r.Warning)
		}
	}
	notes := &noteList{shared: sharedParts(objectWarnings)}
	tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', 0)
	head := "OBJECT\tACCOUNT\tACTIVITY\tACTUAL\tFLEXIBLE BUDGET\tSPENDING VAR.\t"
	if plan != "" {
		head += "STATIC BUDGET\tACTIVITY VAR.\t"
	}
	fmt.Fprintln(tw, head+"NOTE\t")
	starred := 0
	for _, r := range rows {
		name, what, act := lineNames(r.Line, r.Object, r.AccountName, r.CostCenter, r.Objects)
		if r.ActualActivity != nil {
			act = Activity(*r.ActualActivity) + " " + TerminalText(words(r.Driver)) + before(r.Lag)
		}
		actual := moneyText(r.Actual)
		if r.Outside95 {
			actual += " *"
			starred++
		}
		line := fmt.Sprintf("%s\t%s\t%s\t%s\t%s\t%s\t", name, what, act, actual, moneyText(r.FlexibleBudget), marked(r.SpendingVariance, r.SpendingMark))
		if plan != "" {
			line += fmt.Sprintf("%s\t%s\t", moneyText(r.StaticBudget), marked(r.ActivityVariance, r.ActivityMark))
		}
		fmt.Fprintln(tw, line+notes.add(withoutIndependence(r.Warning))+"\t")
	}
	if err := tw.Flush(); err != nil {
		return err
	}
	notes.write(w)
	fmt.Fprintln(w)
	fmt.Fprintln(w, "Spending variance = actual − flexible budget (the formula at actual activity).")
	if plan != "" {
		fmt.Fprintln(w, "Activity variance = flexible budget − static budget (the formula at planned activity); the two add up to actual − static budget.")
	}
	fmt.Fprintln(w, "F: favourable (less cost than budgeted); U: unfavourable.")
	if starred > 0 {
		fmt.Fprintf(w, "*: %d actual(s) outside the flexible budget's 95 %% prediction interval.\n", starred)
	}
	fmt.Fprintf(w, "%s.\n", sentence(costdrift.Independence))
	fmt.Fprintln(w)
	_, err := fmt.Fprintln(w, Caution)
	return err
}

// lineNames is a budget or variance line's first two cells and an empty
// activity: the object and its account name, or the total and how many
// objects it adds.
func lineNames(kind costdrift.LineKind, object, accountName, costCenter string, objects int) (name, what, activity string) {
	switch kind {
	case costdrift.LineCostCenter:
		return "total " + TerminalText(costCenter), fmt.Sprintf("%d objects", objects), "-"
	case costdrift.LineTotal:
		return "TOTAL", fmt.Sprintf("%d objects", objects), "-"
	}
	return TerminalText(object), clip(TerminalText(accountName), 22), "-"
}

// sentence starts s with a capital letter.
func sentence(s string) string {
	if s == "" {
		return s
	}
	return strings.ToUpper(s[:1]) + s[1:]
}

// withoutIndependence drops the totals' independence assumption from a
// warning: a table states it once, below.
func withoutIndependence(warning string) string {
	parts := strings.Split(warning, "; ")
	keep := parts[:0]
	for _, p := range parts {
		if !strings.HasPrefix(p, costdrift.Independence) {
			keep = append(keep, p)
		}
	}
	return strings.Join(keep, "; ")
}

func marked(v *float64, mark string) string {
	if v == nil {
		return "-"
	}
	if mark == "" {
		return moneyText(v)
	}
	return present.Amount(math.Abs(*v)) + " " + mark
}

func moneyText(v *float64) string {
	if v == nil {
		return "-"
	}
	return present.Amount(*v)
}

func interval(lo, hi *float64) string {
	if lo == nil || hi == nil {
		return "-"
	}
	return present.Number(*lo, 0) + " – " + present.Number(*hi, 0)
}

// before labels an activity taken from a period before the line's: a
// lagged driver's figure is not the period's own.
func before(lag *int) string {
	switch {
	case lag == nil || *lag == 0:
		return ""
	case *lag == 1:
		return " (period before)"
	}
	return fmt.Sprintf(" (%d periods before)", *lag)
}

// noteList numbers distinct warnings for a table's NOTE column. A part of
// a warning that every object line carries (shared) is no note: a mark on
// every line tells the reader nothing, so it is said once, below.
type noteList struct {
	texts  []string
	index  map[string]int
	shared []string
}

func (n *noteList) add(text string) string {
	if len(n.shared) > 0 {
		parts := strings.Split(text, "; ")
		parts = slices.DeleteFunc(parts, func(p string) bool { return slices.Contains(n.shared, p) })
		text = strings.Join(parts, "; ")
	}
	if text == "" {
		return ""
	}
	if n.index == nil {
		n.index = map[string]int{}
	}
	i, ok := n.index[text]
	if !ok {
		n.texts = append(n.texts, text)
		i = len(n.texts)
		n.index[text] = i
	}
	return fmt.Sprintf("[%d]", i)
}

func (n *noteList) write(w io.Writer) {
	if len(n.texts) > 0 {
		fmt.Fprintln(w, "\nNotes:")
		for i, t := range n.texts {
			fmt.Fprintf(w, "  [%d] %s\n", i+1, TerminalText(t))
		}
	}
	if len(n.shared) > 0 {
		fmt.Fprintf(w, "\nEvery object line: %s.\n", TerminalText(strings.Join(n.shared, "; ")))
	}
}

// sharedParts are the parts ("; "-separated) every one of two or more
// warnings has; none when any warning is empty.
func sharedParts(warnings []string) []string {
	if len(warnings) < 2 {
		return nil
	}
	shared := strings.Split(warnings[0], "; ")
	for _, w := range warnings[1:] {
		parts := strings.Split(w, "; ")
		shared = slices.DeleteFunc(shared, func(p string) bool { return !slices.Contains(parts, p) })
	}
	return slices.DeleteFunc(shared, func(p string) bool { return p == "" })
}

func toAny(s []string) []any {
	out := make([]any, len(s))
	for i, v := range s {
		out[i] = v
	}
	return out
}

func cell(v *float64) any {
	if v == nil {
		return nil
	}
	return *v
}

// writeCSV writes cells: numbers in full precision, absent ones empty, text
// made safe to open in a spreadsheet (SafeCell).
func writeCSV(w io.Writer, cells [][]any) error {
	cw := csv.NewWriter(w)
	rec := make([]string, 0, 24)
	for _, row := range cells {
		rec = rec[:0]
		for _, c := range row {
			switch v := c.(type) {
			case nil:
				rec = append(rec, "")
			case float64:
				rec = append(rec, fmt.Sprint(v))
			case string:
				rec = append(rec, SafeCell(v))
			default:
				rec = append(rec, SafeCell(fmt.Sprint(v)))
			}
		}
		if err := cw.Write(rec); err != nil {
			return err
		}
	}
	cw.Flush()
	return cw.Error()
}

// SafeCell neutralises a text cell a spreadsheet would read as a formula:
// one that begins with =, +, -, @, a tab or a carriage return gets a
// leading apostrophe (common practice against formula injection). Numbers
// are written as numbers and not passed through it.
func SafeCell(s string) string {
	if s != "" && strings.ContainsRune("=+-@\t\r", rune(s[0])) {
		return "'" + s
	}
	return s
}
