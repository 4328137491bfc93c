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
	FilesSkipped  int            // files unchanged since the last sync, not read again
	RowsReplaced  int            // rows removed because the file they came from changed
	Reasons       map[string]int // reject reasons by kind
	Warnings      []string       // problems that are not rejects, e.g. unbalanced entries
	Error         string
}

// SourceFile is what the store remembers of a file it loaded: the
// fingerprint that tells whether the file changed since, and the settings
// it was read with, which tell whether it would be read otherwise now.
type SourceFile struct {
	ID     int64
	Source string
	Path   string // absolute
	Size   int64
	SHA256 string
	Rows   int
	// Settings are the source's reading settings as canonical JSON; ""
	// when unknown (a file loaded before the store kept them).
	Settings string
}
