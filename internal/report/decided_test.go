package report

import (
	"testing"
	"time"

	"github.com/costdrift/costdrift/internal/costdrift"
)

// The decided fields of a row (README, The accountant's decisions): a
// pinned step cost's effective formula is its one level, not the data's
// steps; approval is null without approval state, and its status follows
// the state.
func TestDecidedRows(t *testing.T) {
	step := costdrift.Behaviour{Object: costdrift.CostObject{Account: "6300", CostCenter: "ASSY"}, Class: costdrift.Step, Driver: "frames_built",
		Steps: []costdrift.StepLevel{{From: 600, To: 999, Level: 6000}, {From: 1000, To: 1700, Level: 9000}}, N: 36}
	pin := costdrift.Pin{Object: "6300/ASSY", Class: costdrift.Step, Driver: "frames_built", Fixed: 9000, By: "ana",
		At: time.Date(2026, 12, 1, 9, 0, 0, 0, time.UTC), Reason: "two supervisors from now on"}
	eff := step
	eff.Steps, eff.FixedPerPeriod = nil, 9000
	rows := DecidedRows([]costdrift.Behaviour{step}, nil, map[string]Decided{"6300/ASSY": {Pin: &pin, Effective: eff, EffectiveSource: SourcePinned}})
	r := rows[0]
	if r.Pinned == nil || r.Pinned.Formula != "cost = 9,000.00 (the level in force)" || r.Effective.Formula != "cost = 9,000.00 (the level in force)" ||
		r.Effective.Source != SourcePinned || r.Approval != nil || r.ExcludedPeriods == nil {
		t.Errorf("pinned step row: pinned %+v, effective %+v, approval %v, excluded %v", r.Pinned, r.Effective, r.Approval, r.ExcludedPeriods)
	}
	if r.Formula == r.Effective.Formula {
		t.Errorf("the row's formula %q is the pin's; it must stay the data's", r.Formula)
	}

	fixed := costdrift.Behaviour{Object: costdrift.CostObject{Account: "6100", CostCenter: "WELD"}, Class: costdrift.Fixed, FixedPerPeriod: 4830}
	old := fixed
	old.FixedPerPeriod = 4200
	for _, tc := range []struct {
		name  string
		state costdrift.ApprovalState
		want  string
	}{
		{"never approved", costdrift.ApprovalState{CurrentID: 5}, StatusWaiting},
		{"approved", costdrift.ApprovalState{CurrentID: 5, ApprovedID: 5}, StatusApproved},
		{"drifted", costdrift.ApprovalState{CurrentID: 7, ApprovedID: 5, LastKind: costdrift.DecisionApprove, LastID: 5}, StatusWaiting},
		{"declined", costdrift.ApprovalState{CurrentID: 7, ApprovedID: 5, LastKind: costdrift.DecisionDecline, LastID: 7, LastBy: "ben"}, StatusDeclined},
	} {
		in := &ApprovalInput{State: tc.state}
		if tc.state.ApprovedID != 0 {
			in.Approved = &old
		}
		r := DecidedRows([]costdrift.Behaviour{fixed}, nil, map[string]Decided{"6100/WELD": {Approval: in}})[0]
		if r.Approval == nil || r.Approval.Status != tc.want {
			t.Errorf("%s: approval %+v, want status %q", tc.name, r.Approval, tc.want)
			continue
		}
		if (r.Approval.Proposed == nil) != (tc.want == StatusApproved) {
			t.Errorf("%s: proposed %+v", tc.name, r.Approval.Proposed)
		}
		if tc.name == "declined" && (r.Approval.Proposed.By != "ben" || r.Approval.Approved.Formula != "cost = 4,200.00") {
			t.Errorf("declined: %+v %+v", r.Approval.Proposed, r.Approval.Approved)
		}
	}
}
