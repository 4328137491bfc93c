package mail

import (
	"strings"
	"time"

	"github.com/costdrift/costdrift/internal/costdrift"
)

// Recipient is one address and the alerts it wants: cost centres and
// accounts as glob patterns over the whole code (costdrift.Glob: "*" takes
// any run of characters, "/" among them, "?" one, "[a-z]" one of a class;
// an empty list means every one) and the least severity worth a message
// ("" = info). A pattern that is not a valid glob matches nothing; the
// config refuses one before it gets here.
type Recipient struct {
	Email       string
	CostCenters []string
	Accounts    []string
	MinSeverity costdrift.Severity
}

// SourceKind reports whether alerts of kind k concern a source rather than
// a cost object: their Object is the source's name.
func SourceKind(k costdrift.AlertKind) bool {
	return k == costdrift.AlertStaleSource || k == costdrift.AlertSourceFailure
}

// Routes reports whether r receives alert a, reading an object alert's
// Object "ACCOUNT/COSTCENTRE" as split at its first "/" (SplitObject).
// Where account codes may hold a "/", that split can be wrong: the caller
// that knows the object's codes calls RoutesObject.
func Routes(r Recipient, a costdrift.Alert) bool {
	return RoutesObject(r, a, SplitObject(a.Object))
}

// RoutesObject reports whether r receives alert a, on the cost object o
// for an object alert. The severity must reach r.MinSeverity. A source
// alert has no account or cost centre, so it goes to the recipients who
// asked for everything: a "*" among their cost centres or accounts, or both
// lists empty. An object alert needs its account to match one of
// r.Accounts and its cost centre one of r.CostCenters, each code as a whole
// (an object without a cost centre matches only an empty list or "*").
func RoutesObject(r Recipient, a costdrift.Alert, o costdrift.CostObject) bool {
	if a.Severity.Rank() < minSeverity(r).Rank() {
		return false
	}
	if SourceKind(a.Kind) {
		return (len(r.CostCenters) == 0 && len(r.Accounts) == 0) || hasStar(r.CostCenters) || hasStar(r.Accounts)
	}
	return matchAny(r.Accounts, o.Account, false) && matchAny(r.CostCenters, o.CostCenter, o.CostCenter == "")
}

// SplitObject reads an object alert's Object as "ACCOUNT/COSTCENTRE" split
// at its first "/", or "ACCOUNT" alone: right unless the account code holds
// a "/" itself, when only the store's behaviours know the split.
func SplitObject(object string) costdrift.CostObject {
	account, center, _ := strings.Cut(object, "/")
	return costdrift.CostObject{Account: account, CostCenter: center}
}

func minSeverity(r Recipient) costdrift.Severity {
	if r.MinSeverity == "" {
		return costdrift.SeverityInfo
	}
	return r.MinSeverity
}

func hasStar(patterns []string) bool {
	for _, p := range patterns {
		if p == "*" {
			return true
		}
	}
	return false
}

// matchAny: an empty list matches everything; an empty value (no cost
// centre) only "*" when starOnly.
func matchAny(patterns []string, value string, starOnly bool) bool {
	if len(patterns) == 0 {
		return true
	}
	if starOnly {
		return hasStar(patterns)
	}
	for _, p := range patterns {
		if g, err := costdrift.ParseGlob(p); err == nil && g.Match(value) {
			return true
		}
	}
	return false
}

// State is what was delivered of one alert to one recipient so far.
type State struct {
	SeveritySent costdrift.Severity // severity of the last message the server took; "" = none yet
	Failed       bool               // the latest attempt failed
	Attempts     int                // failed attempts in a row
	NextAttempt  time.Time          // after a failure, not before this
}

// Due reports whether alert a should go into this cycle's digest for a
// recipient whose past deliveries of it are prev (nil: never tried): never
// tried; tried and failed, once NextAttempt has come; or sent, but at a
// lower severity than it has now (it escalated).
func Due(a costdrift.Alert, prev *State, now time.Time) bool {
	switch {
	case prev == nil:
		return true
	case prev.Failed:
		return !now.Before(prev.NextAttempt)
	default:
		return a.Severity.Rank() > prev.SeveritySent.Rank()
	}
}

// Backoff is the wait after the attempts-th failure in a row before the
// next try: 5 minutes × 2^(attempts−1), at most 6 hours, so a server that is
// down for a day is tried about a dozen times, and nothing is dropped.
func Backoff(attempts int) time.Duration {
	const first, most = 5 * time.Minute, 6 * time.Hour
	if attempts < 1 {
		return first
	}
	d := first
	for i := 1; i < attempts; i++ {
		d *= 2
		if d >= most {
			return most
		}
	}
	return d
}
