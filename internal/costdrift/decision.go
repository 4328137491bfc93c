package costdrift

import "time"

// DecisionKind says what an accountant decided about a cost object.
type DecisionKind string

const (
	DecisionPin     DecisionKind = "pin"     // the object's formula is the one given, whatever the data say
	DecisionUnpin   DecisionKind = "unpin"   // the data's formula again
	DecisionExclude DecisionKind = "exclude" // a period left out of the object's fit
	DecisionInclude DecisionKind = "include" // an excluded period fitted again
	DecisionApprove DecisionKind = "approve" // the analysis's formula accepted for the budgets
	DecisionDecline DecisionKind = "decline" // the analysis's formula refused; the approved one stays
	DecisionNote    DecisionKind = "note"    // a note on an alert
)

// Decision is one row of the audit trail: who decided what about which
// object, when and why, and which decision in force it replaced (0 for
// none). Decisions are never changed or deleted.
type Decision struct {
	ID       int64
	At       time.Time
	By       string
	Object   string
	Kind     DecisionKind
	Period   string // exclude, include
	AlertID  int64  // note
	Payload  string // JSON: a pin's or an approval's formula
	Reason   string
	Replaces int64
}

// Pin is a formula an accountant set for a cost object: reports show it
// beside the data's estimate, and budgets and variances use it until it is
// unpinned or its last period (Until, "" for no end) has passed.
type Pin struct {
	Object string  `json:"-"`
	Class  Class   `json:"class"`
	Driver string  `json:"driver,omitempty"`
	Lag    int     `json:"lag"`
	Fixed  float64 `json:"fixed"` // per period, in currency units
	Rate   float64 `json:"rate"`  // per unit of driver
	Until  string  `json:"until,omitempty"`

	By         string    `json:"-"`
	At         time.Time `json:"-"`
	Reason     string    `json:"-"`
	DecisionID int64     `json:"-"`
}

// Expired reports whether the pin's last period lies before period.
func (p Pin) Expired(period string) bool { return p.Until != "" && period > p.Until }

// Exclusion is a period an accountant left out of a cost object's fit.
type Exclusion struct {
	Object     string
	Period     string
	By         string
	At         time.Time
	Reason     string
	DecisionID int64
}

// PinTest is the data tested against a pinned formula: the F test that the
// pinned coefficients are the true ones, on the periods of the object's
// current behaviour less those excluded, with the data's own estimate of
// the same model beside it. Contradicted is set once the test stands the
// portfolio's error control.
type PinTest struct {
	Pin          Pin
	N            int
	F, P         float64
	DataFixed    float64
	DataRate     float64
	Contradicted bool
}

// ApprovalState is where an object stands with approval (analysis.approval:
// required): its current behaviour row, the row last approved (0 for
// none) and the latest approve or decline. A behaviour row is one class,
// driver and lag, refitted as periods close; the analysis opens a new row
// at a change of any of them or at a break.
type ApprovalState struct {
	Object       string
	CurrentID    int64
	CurrentSince string    // first period of the current row
	ProposedAt   time.Time // when the analysis opened the current row

	ApprovedID     int64 // the behaviour row last approved; 0 for none
	ApprovedBy     string
	ApprovedAt     time.Time
	ApprovedReason string

	LastKind DecisionKind // DecisionApprove, DecisionDecline or "" for neither
	LastID   int64        // the behaviour row the latest approve or decline was about
	LastBy   string
	LastAt   time.Time
	LastWhy  string
}

// Waiting reports whether the current row waits for approval: it is
// neither the row last approved nor one declined.
func (s ApprovalState) Waiting() bool {
	return s.CurrentID != s.ApprovedID && !(s.LastKind == DecisionDecline && s.LastID == s.CurrentID)
}

// KeepsApproved reports whether budgets keep the approved row rather than
// the current one: an approved row exists and the current row is another.
func (s ApprovalState) KeepsApproved() bool { return s.ApprovedID != 0 && s.ApprovedID != s.CurrentID }
