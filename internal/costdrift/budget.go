package costdrift

// LineKind says what a budget or variance line sums.
type LineKind string

const (
	LineObject     LineKind = "object"      // one cost object
	LineCostCenter LineKind = "cost_center" // the objects of one cost centre
	LineTotal      LineKind = "total"       // every object
)

// Independence is the assumption behind every total's interval, said in
// the output.
const Independence = "totals' intervals assume the objects' deviations from their formulas are independent"

// Estimate is a formula's cost at some activity with its prediction
// intervals. The intervals and SE are NaN when the formula has no stored
// prediction terms.
type Estimate struct {
	Value         float64
	SE            float64 // standard error of one new period's cost
	DF            float64 // degrees of freedom of SE (Welch–Satterthwaite for totals)
	Low80, High80 float64
	Low95, High95 float64
	Warnings      []string
	// OutsideRange: the activity lies outside the formula's relevant
	// range. Negative: a driven formula's budget below zero. Totals count
	// the objects with either.
	OutsideRange bool
	Negative     bool
}

// BudgetLine is one line of a budget: one object's, one cost centre's or
// the total's budget for one period.
type BudgetLine struct {
	Kind      LineKind
	Object    CostObject // totals: the cost centre only, or nothing
	Period    string
	Class     Class // objects only
	Driver    string
	Activity  float64 // planned activity of Driver; NaN without a driver
	Driver2   string
	Activity2 float64
	// Lag and Lag2 are how many periods before the line's period each
	// driver's activity is taken (the formula's lags).
	Lag, Lag2 int
	Objects   int // objects in the sum (1 for an object's line)
	Estimate
	Warning string // every warning, joined with "; "
}

// VarianceLine is one object's (or a total's) actual cost in a closed
// period against its budgets:
//
//	flexible budget  = the formula at the actual activity
//	spending variance = actual − flexible budget
//	static budget    = the formula at the planned activity (with a plan)
//	activity variance = flexible budget − static budget
//
// so that actual − static budget = spending variance + activity variance.
// A positive variance is unfavourable (more cost), marked U; a negative one
// favourable, F.
type VarianceLine struct {
	Kind           LineKind
	Object         CostObject
	Period         string
	Class          Class
	Driver         string
	ActualActivity float64 // NaN without a driver
	PlanActivity   float64 // NaN without a driver or a plan
	Lag            int     // the activities are of this many periods before Period
	Objects        int
	Actual         float64
	// Flexible is the formula at actual activity with its intervals; the
	// 95 % interval is what Outside95 tests.
	Flexible         Estimate
	Static           float64 // NaN without a plan
	SpendingVariance float64
	ActivityVariance float64 // NaN without a plan
	Outside95        bool    // actual outside the flexible budget's 95 % interval
	Warning          string
}

// SpendingMark and ActivityMark are the lines' F/U marks.
func (l VarianceLine) SpendingMark() string { return VarianceMark(l.SpendingVariance) }
func (l VarianceLine) ActivityMark() string { return VarianceMark(l.ActivityVariance) }

// VarianceMark says whether a cost variance is favourable (F: less cost
// than budgeted) or unfavourable (U: more), common practice for costs; ""
// for none.
func VarianceMark(variance float64) string {
	switch {
	case variance < 0:
		return "F"
	case variance > 0:
		return "U"
	}
	return ""
}
