package costdrift

import "time"

// Role is what a source delivers.
type Role string

const (
	RoleLedger   Role = "ledger"
	RoleActivity Role = "activity"
	RoleAccounts Role = "accounts"
)

// SourceWriter receives the rows of one source's batch. The store implements
// it inside one transaction, so a batch lands whole or not at all; a reader
// implements nothing and only calls it.
type SourceWriter interface {
	LedgerLine(LedgerLine) error
	Activity(ActivityValue) error
	Account(Account) error
	Reject(Reject) error
}

// SyncRun is the record of syncing one source.
type SyncRun struct {
	ID            int64
	Source        string
	Role          Role
	Kind          string
	StartedAt     time.Time
	FinishedAt    time.Time
	Status        string // running | ok | failed
	Files         int
	RowsRead      int
	RowsLoaded    int // new or changed rows written
	RowsUnchanged int // rows already stored with the same values
	RowsRejected  int
	Error         string
}
