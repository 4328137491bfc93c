package costdrift

// SourcePeriod is what one loaded file delivered for one period: the rows
// it stored and the rows it rejected. A rejected row's own period is not
// known, so a file's rejects count against the newest period it stored rows
// for, or against Period "" when it stored none.
type SourcePeriod struct {
	Source       string
	Path         string // the file, absolute
	Period       string // "" = unknown: the file stored no row
	RowsStored   int
	RowsRejected int
	Reason       string // the file's most frequent reject reason, one example of it
	SyncRunID    int64
}

// Read is how many rows the file read for the period.
func (p SourcePeriod) Read() int { return p.RowsStored + p.RowsRejected }
