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

// AnalysisSettings are the settings an analysis ran with. They are stored
// as JSON with the run (AnalysisRun.Settings) and hashed into every
// object's inputs, so that a change of settings refits every object.
//
// The fields are in the order of their JSON keys, sorted: settings were
// stored as a map before they had a type, and a map's keys marshal sorted,
// so this order keeps the JSON, and the input hashes, of the same settings
// as they were.
type AnalysisSettings struct {
	Accounts            []string `json:"accounts"`
	Alpha               float64  `json:"alpha"`
	BootstrapReplicates int      `json:"bootstrap_replicates"`
	BreakAlpha          float64  `json:"break_alpha"`
	Currency            string   `json:"currency"`
	// Deflator is the price index series costs were restated with, and
	// DeflatorExempt the objects and accounts left as posted; both absent
	// without one, so that the settings of an analysis without a deflator
	// keep their JSON and input hashes.
	Deflator       string   `json:"deflator,omitempty"`
	DeflatorExempt []string `json:"deflator_exempt,omitempty"`
	Grain          Grain    `json:"grain"`
	Lags           []int    `json:"lags"`
	MinPeriods     int      `json:"min_periods"`
	Seed           uint64   `json:"seed"` // of the bootstrap behind break p-values
	Window         int      `json:"window"`
}
