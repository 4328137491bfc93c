package costdrift

// Accrual is a ledger line booked in one period and reversed, by a line of
// the same amount and opposite sign on the same account and cost centre,
// in the next (README, "Costs posted quarterly or yearly, and accruals"):
// a cost recognised in the month it belongs to before its invoice comes.
// The pair moves cost from the period after into the period it was booked
// in; it changes no total over both.
type Accrual struct {
	Period      string // the period the accrual was booked in
	ReversedIn  string // the next period, where it was reversed
	CostCenter  string
	AmountMinor int64 // the accrual's amount, signed as booked; the reversal is its negative
	Accrued     LedgerLine
	Reversal    LedgerLine
}
