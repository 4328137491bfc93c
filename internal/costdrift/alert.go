package costdrift

import (
	"crypto/sha256"
	"encoding/hex"
	"fmt"
	"time"
)

// AlertKind names the condition an alert reports. The eleven kinds are
// fixed by the product: each is a rule that reads what sync and analysis
// stored.
type AlertKind string

const (
	AlertReclassified    AlertKind = "reclassified"     // the object's class changed, e.g. fixed to mixed
	AlertDriverChanged   AlertKind = "driver_changed"   // another activity drives the cost now
	AlertFixedShift      AlertKind = "fixed_shift"      // the fixed part per period moved
	AlertRateShift       AlertKind = "rate_shift"       // the rate per unit of driver moved
	AlertSpendingOutlier AlertKind = "spending_outlier" // the newest closed period is outside the prediction interval
	AlertOutOfRange      AlertKind = "out_of_range"     // the newest activity is outside the relevant range
	AlertDataGap         AlertKind = "data_gap"         // an account that always posts has no postings in a closed period
	AlertStaleSource     AlertKind = "stale_source"     // a source has delivered nothing new for too long
	AlertSourceFailure   AlertKind = "source_failure"   // a source could not be read
	AlertDataQuality     AlertKind = "data_quality"     // too many of a source's rows in a period were rejected
	AlertPinReview       AlertKind = "pin_review"       // the data contradict a pinned formula, or its pin expired
)

// AlertKinds returns the eleven kinds in the order the product lists them.
func AlertKinds() []AlertKind {
	return []AlertKind{AlertReclassified, AlertDriverChanged, AlertFixedShift, AlertRateShift,
		AlertSpendingOutlier, AlertOutOfRange, AlertDataGap, AlertStaleSource, AlertSourceFailure, AlertDataQuality,
		AlertPinReview}
}

// Valid reports whether k is one of AlertKinds.
func (k AlertKind) Valid() bool {
	for _, known := range AlertKinds() {
		if k == known {
			return true
		}
	}
	return false
}

// Severity says how urgently an alert needs the accountant.
type Severity string

const (
	SeverityInfo     Severity = "info"
	SeverityWarning  Severity = "warning"
	SeverityCritical Severity = "critical"
)

// Severities returns the three severities, least urgent first.
func Severities() []Severity {
	return []Severity{SeverityInfo, SeverityWarning, SeverityCritical}
}

// Rank orders severities: info 1 < warning 2 < critical 3. An unknown
// severity ranks 0, below all of them.
func (s Severity) Rank() int {
	switch s {
	case SeverityInfo:
		return 1
	case SeverityWarning:
		return 2
	case SeverityCritical:
		return 3
	}
	return 0
}

// Valid reports whether s is one of Severities.
func (s Severity) Valid() bool { return s.Rank() > 0 }

// Alert statuses. An alert is open when raised, acknowledged when the
// accountant has seen it (for a while, or until its condition changes), and
// resolved when a later evaluation of its kind no longer raises it.
const (
	AlertOpen         = "open"
	AlertAcknowledged = "acknowledged"
	AlertResolved     = "resolved"
)

// Alert is one condition worth an accountant's attention on one cost object
// (or source). The same condition raised again is the same alert, found by
// its Fingerprint, updated rather than repeated.
type Alert struct {
	ID          int64
	Kind        AlertKind
	Object      string // "6200/WELD", "6200", or the source's name for source kinds
	Severity    Severity
	Status      string // AlertOpen, AlertAcknowledged or AlertResolved
	Period      string // the period the condition concerns, e.g. the break or the outlying period; "" = the evaluation's newest period
	Message     string // one line for the accountant
	Fingerprint string // Fingerprint(Kind, Object, discriminator)
	// Evidence is what the rule decided on: the test, its statistic and
	// p-value, R², n, the old and new formula.
	Evidence    AlertEvidence
	CreatedAt   time.Time // first raised
	UpdatedAt   time.Time // last raised, acknowledged or resolved
	ResolvedAt  time.Time // zero unless resolved
	AckUntil    string    // acknowledged until this period; "" = until the condition changes
	Occurrences int       // evaluations that raised it, counting the first
}

// Validate checks what a rule must fill in before the store takes an alert.
func (a Alert) Validate() error {
	switch {
	case !a.Kind.Valid():
		return fmt.Errorf("alert kind %q is not one of the eleven kinds", a.Kind)
	case !a.Severity.Valid():
		return fmt.Errorf("alert %s on %s: severity %q is not info, warning or critical", a.Kind, a.Object, a.Severity)
	case a.Object == "":
		return fmt.Errorf("alert %s has no object", a.Kind)
	case a.Message == "":
		return fmt.Errorf("alert %s on %s has no message", a.Kind, a.Object)
	case a.Fingerprint == "":
		return fmt.Errorf("alert %s on %s has no fingerprint", a.Kind, a.Object)
	}
	return nil
}

// Fingerprint identifies a condition across runs: the hex SHA-256 of
// kind, object and discriminator joined by NUL bytes,
//
//	sha256(kind + "\x00" + object + "\x00" + discriminator)
//
// The NUL separator keeps ("6200", "WELD/x") and ("6200/WELD", "x") apart,
// since NUL cannot occur in a ledger field. The discriminator tells apart
// conditions of one kind on one object that are different alerts (the
// missing period of a data gap, say); it must not hold anything that
// changes from run to run while the condition lasts, such as a p-value or
// the newest period, or the same condition would become a new alert on
// every run. Most kinds pass "".
func Fingerprint(kind AlertKind, object, discriminator string) string {
	sum := sha256.Sum256([]byte(string(kind) + "\x00" + object + "\x00" + discriminator))
	return hex.EncodeToString(sum[:])
}
