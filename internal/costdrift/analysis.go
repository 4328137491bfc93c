package costdrift

import "time"

// CostTotal is the net posted amount of one account and cost centre in one
// period, in minor units.
type CostTotal struct {
	Period      string
	Account     string
	CostCenter  string
	AmountMinor int64
	// Overflow marks a total beyond what int64 minor units hold, from lines
	// stored before sync bounded amounts; AmountMinor is then 0 and means
	// nothing.
	Overflow bool
}

// AnalysisRun is the record of one analysis.
type AnalysisRun struct {
	ID         int64
	StartedAt  time.Time
	FinishedAt time.Time
	WindowFrom string
	WindowTo   string
	Grain      Grain
	Objects    int
	Settings   string // JSON of the settings used
	// Inputs maps each analysed object to a hash of what it was fitted on,
	// so that the next analysis can skip objects whose data did not change.
	Inputs map[string]string
	// Skipped counts objects left as they were because their inputs did
	// not change.
	Skipped int
}
