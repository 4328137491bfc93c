package pipeline

import (
	"context"
	"errors"
	"fmt"
	"sort"
	"strings"

	"github.com/costdrift/costdrift/internal/alerts"
	"github.com/costdrift/costdrift/internal/costdrift"
	"github.com/costdrift/costdrift/internal/sqlite"
)

// Approve records that object's current formula is approved: budgets and
// variances use it from now on (with analysis.approval: required).
func Approve(ctx context.Context, e *Env, db *sqlite.DB, object, by, reason string) error {
	reason = strings.TrimSpace(reason)
	if reason == "" {
		reason = "approved"
	}
	return approval(ctx, e, db, object, costdrift.DecisionApprove, by, reason)
}

// Decline records that object's current formula is refused: budgets and
// variances keep the approved one until the analysis finds another.
func Decline(ctx context.Context, e *Env, db *sqlite.DB, object, by, reason string) error {
	reason = strings.TrimSpace(reason)
	if reason == "" {
		return errors.New("--reason is required: say why the formula is declined")
	}
	return approval(ctx, e, db, object, costdrift.DecisionDecline, by, reason)
}

func approval(ctx context.Context, e *Env, db *sqlite.DB, object string, kind costdrift.DecisionKind, by, reason string) error {
	err := db.Approve(ctx, object, kind, by, reason, e.Now().UTC())
	switch {
	case errors.Is(err, sqlite.ErrNotAnalysed):
		if err := knownObject(ctx, e, db, object); err != nil {
			return err
		}
		return fmt.Errorf("%s has no formula yet: run `costdrift analyze` first", object)
	case errors.Is(err, sqlite.ErrNothingWaiting):
		return fmt.Errorf("nothing of %s waits for approval: `costdrift proposals` lists what does", object)
	case err != nil:
		return fmt.Errorf("%s %s: %w", kind, object, err)
	}
	return nil
}

// Proposal is an object whose current formula waits for approval, with
// the formula last approved (nil for none).
type Proposal struct {
	State    costdrift.ApprovalState
	Current  costdrift.Behaviour
	Approved *costdrift.Behaviour
}

// Proposals lists what waits for approval, oldest first.
func Proposals(ctx context.Context, db *sqlite.DB) ([]Proposal, error) {
	states, err := db.ApprovalStates(ctx)
	if err != nil {
		return nil, err
	}
	approved, err := db.ApprovedBehaviours(ctx)
	if err != nil {
		return nil, err
	}
	bs, err := db.CurrentBehaviour(ctx)
	if err != nil {
		return nil, err
	}
	var out []Proposal
	for _, b := range bs {
		st := states[b.Object.String()]
		if !st.Waiting() || b.Class == costdrift.InsufficientData {
			continue
		}
		p := Proposal{State: st, Current: b}
		if a, ok := approved[b.Object.String()]; ok {
			p.Approved = &a
		}
		out = append(out, p)
	}
	sort.SliceStable(out, func(i, j int) bool {
		if !out[i].State.ProposedAt.Equal(out[j].State.ProposedAt) {
			return out[i].State.ProposedAt.Before(out[j].State.ProposedAt)
		}
		return out[i].State.Object < out[j].State.Object
	})
	return out, nil
}

// AwaitingApproval is what a behaviour alert on an object whose formula
// waits for approval adds to its message.
const AwaitingApproval = "; awaiting approval: budgets keep the approved formula until `costdrift approve %s`"

// markAwaiting adds AwaitingApproval to the behaviour alerts of objects
// whose formula waits for approval (with analysis.approval: required).
func markAwaiting(ctx context.Context, e *Env, db *sqlite.DB, raised []costdrift.Alert) error {
	if !approvalRequired(e) {
		return nil
	}
	states, err := db.ApprovalStates(ctx)
	if err != nil {
		return err
	}
	behaviourKind := map[costdrift.AlertKind]bool{}
	for _, k := range alerts.BehaviourKinds {
		behaviourKind[k] = true
	}
	for i, a := range raised {
		if behaviourKind[a.Kind] && states[a.Object].Waiting() {
			raised[i].Message += fmt.Sprintf(AwaitingApproval, a.Object)
		}
	}
	return nil
}
