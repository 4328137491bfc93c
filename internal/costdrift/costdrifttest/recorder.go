package costdrifttest

import (
	"errors"

	"github.com/costdrift/costdrift/internal/costdrift"
)

// Recorder is a costdrift.SourceWriter that keeps what it is given, in
// order, and can fail on a chosen call to test that readers stop.
//
// The activity values are kept in Values because Activity is the name of the
// method that receives them.
type Recorder struct {
	Lines    []costdrift.LedgerLine
	Values   []costdrift.ActivityValue
	Accounts []costdrift.Account
	Rejects  []costdrift.Reject
	Calls    int // calls of any of the four methods, the failing one included
	FailOn   int // the 1-based call that returns ErrWriter; 0 never
}

// ErrWriter is the error a Recorder returns on call FailOn, standing in for a
// store that cannot take another row.
var ErrWriter = errors.New("store is full")

var _ costdrift.SourceWriter = (*Recorder)(nil)

// call counts one call and says whether it is the one to fail, so that a
// failing call is counted but not recorded.
func (r *Recorder) call() error {
	r.Calls++
	if r.FailOn > 0 && r.Calls == r.FailOn {
		return ErrWriter
	}
	return nil
}

// LedgerLine records l, or returns ErrWriter if this is call FailOn.
func (r *Recorder) LedgerLine(l costdrift.LedgerLine) error {
	if err := r.call(); err != nil {
		return err
	}
	r.Lines = append(r.Lines, l)
	return nil
}

// Activity records a in Values, or returns ErrWriter if this is call FailOn.
func (r *Recorder) Activity(a costdrift.ActivityValue) error {
	if err := r.call(); err != nil {
		return err
	}
	r.Values = append(r.Values, a)
	return nil
}

// Account records a, or returns ErrWriter if this is call FailOn.
func (r *Recorder) Account(a costdrift.Account) error {
	if err := r.call(); err != nil {
		return err
	}
	r.Accounts = append(r.Accounts, a)
	return nil
}

// Reject records x, or returns ErrWriter if this is call FailOn.
func (r *Recorder) Reject(x costdrift.Reject) error {
	if err := r.call(); err != nil {
		return err
	}
	r.Rejects = append(r.Rejects, x)
	return nil
}

// Empty reports whether nothing at all was recorded: no line, activity
// value, account or reject. A call that failed records nothing.
func (r *Recorder) Empty() bool {
	return len(r.Lines)+len(r.Values)+len(r.Accounts)+len(r.Rejects) == 0
}
