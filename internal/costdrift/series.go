package costdrift

// Panel is what the analysis sees: the window of periods, each cost
// object's cost per period, and each driver's values per period.
type Panel struct {
	Periods []string // the analysis window, oldest first
	MaxLag  int      // driver values reach this many periods before the window
	Objects []ObjectSeries
	Drivers []DriverSeries
	// PeriodsWithPostings counts the window periods in which the ledger as
	// a whole has postings.
	PeriodsWithPostings int
}

// ObjectSeries is one cost object's cost per window period in currency
// units; NaN where the period is unknown (the whole ledger is silent then,
// or the object's lines add up to more than the store can total).
type ObjectSeries struct {
	Object CostObject
	Cost   []float64
	// Unusable says why the object cannot be analysed, "" when it can.
	Unusable string
}

// DriverSeries is one activity series. Values[i] belongs to period
// Periods[i-MaxLag] of the panel, so the first MaxLag values lead the window;
// NaN where the period has no value.
type DriverSeries struct {
	Name       string
	CostCenter string // "" for company-wide
	Unit       string
	Values     []float64
}
