package costdrift

// LedgerLine is one general-ledger posting line as stored: a signed amount in
// minor units of the functional currency, debit positive.
type LedgerLine struct {
	Source      string // name of the configured source that delivered it
	EntryID     string
	Line        int    // line number within the entry; 1-based
	PostedOn    string // YYYY-MM-DD
	Period      string // calendar period of PostedOn, e.g. 2025-03
	Account     string
	CostCenter  string // "" when the line carries none
	AmountMinor int64
	Description string
}

// ActivityValue is the value of one driver in one period, company-wide when
// CostCenter is empty.
type ActivityValue struct {
	Source     string
	Period     string
	Driver     string
	CostCenter string
	Value      float64
	Unit       string // e.g. "machine hour"; "" when unknown
	Location   string // file:line (or file:sheet!row) it was read from, for messages; not stored
}

// Account is one entry of the chart of accounts.
type Account struct {
	Source  string
	Account string
	Name    string
	Type    string
	Group   string
}

// Reject is an input row that could not be stored, with the reason.
type Reject struct {
	Source   string
	Location string // file:line or a row key
	Reason   string
	Raw      string // the row as read
}
