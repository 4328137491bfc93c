package alerts

import (
	"fmt"
	"math"

	"github.com/costdrift/costdrift/internal/costdrift"
	"github.com/costdrift/costdrift/internal/present"
)

// AnalysisKinds are the kinds evaluated after every analysis: behaviour
// changes, spending, activity range, data gaps, stale sources, data
// quality and pinned formulas.
var AnalysisKinds = append(append([]costdrift.AlertKind{}, BehaviourKinds...),
	costdrift.AlertSpendingOutlier, costdrift.AlertOutOfRange, costdrift.AlertDataGap, costdrift.AlertStaleSource, costdrift.AlertDataQuality,
	costdrift.AlertPinReview)

// OutOfRangeMargin: activity more than this share beyond the relevant range
// (of the range's end) puts a formula outside what it was fitted on.
const OutOfRangeMargin = 0.10

// Spending raises spending_outlier when the newest period's actual cost lies
// outside the 95 % prediction interval of the formula fitted without it:
// info for a one-off, warning when the period before was outside on the same
// side too (README, Alerts: a lone spending outlier is info).
// Amounts in the message are of currency ("" leaves it unsaid).
func Spending(current []costdrift.Behaviour, names map[string]string, currency string) []costdrift.Alert {
	var out []costdrift.Alert
	for _, b := range current {
		n := len(b.Spending)
		if n == 0 || !b.Spending[n-1].Outside() {
			continue
		}
		c := b.Spending[n-1]
		sev := costdrift.SeverityInfo
		if n > 1 {
			prev := b.Spending[n-2]
			if prev.Outside() && (prev.Actual > prev.High) == (c.Actual > c.High) {
				sev = costdrift.SeverityWarning
			}
		}
		side := "above"
		if c.Actual < c.Low {
			side = "below"
		}
		out = append(out, costdrift.Alert{
			Kind: costdrift.AlertSpendingOutlier, Object: b.Object.String(), Severity: sev, Period: c.Period,
			Message: fmt.Sprintf("%s: %s cost %s is %s the %s the formula fitted without that period expects (95 %% interval %s to %s)",
				label(b, names), c.Period, present.Money(c.Actual, currency), side, present.Money(c.Expected, currency), present.Amount(c.Low),
				present.Money(c.High, currency)),
			Fingerprint: costdrift.Fingerprint(costdrift.AlertSpendingOutlier, b.Object.String(), c.Period),
			Evidence: costdrift.AlertEvidence{Period: new(c.Period), Actual: new(c.Actual), Expected: new(c.Expected), Low95: new(c.Low),
				High95: new(c.High), Activity: new(c.Activity), FormulaFittedWithoutIt: new(true), Repeats: new(sev == costdrift.SeverityWarning)},
		})
	}
	return out
}

// NewestActivity is the newest value of the driver a behaviour uses.
type NewestActivity struct {
	Period string
	Value  float64
}

// OutOfRange raises out_of_range (info) when the newest activity of an
// object's driver lies outside the relevant range by more than
// OutOfRangeMargin: the formula is then extrapolated.
func OutOfRange(current []costdrift.Behaviour, newest map[string]NewestActivity, names map[string]string) []costdrift.Alert {
	var out []costdrift.Alert
	for _, b := range current {
		a, ok := newest[b.Object.String()]
		if !ok || b.Driver == "" || math.IsNaN(b.RangeMin) || math.IsNaN(b.RangeMax) {
			continue
		}
		var beyond float64
		switch {
		case a.Value > b.RangeMax*(1+OutOfRangeMargin):
			beyond = (a.Value - b.RangeMax) / b.RangeMax
		case a.Value < b.RangeMin*(1-OutOfRangeMargin):
			beyond = (b.RangeMin - a.Value) / b.RangeMin
		default:
			continue
		}
		out = append(out, costdrift.Alert{
			Kind: costdrift.AlertOutOfRange, Object: b.Object.String(), Severity: costdrift.SeverityInfo, Period: a.Period,
			Message: fmt.Sprintf("%s: %s activity %s %s is %s outside the relevant range %s; the formula does not hold there",
				label(b, names), a.Period, present.Activity(a.Value), present.DriverWords(b.Driver), present.Percent(beyond),
				present.ActivityRange(b.RangeMin, b.RangeMax)),
			Fingerprint: costdrift.Fingerprint(costdrift.AlertOutOfRange, b.Object.String(), a.Period),
			Evidence: costdrift.AlertEvidence{Period: new(a.Period), Activity: new(a.Value), RangeMin: new(b.RangeMin), RangeMax: new(b.RangeMax),
				Driver: new(b.Driver)},
		})
	}
	return out
}

// GapPeriods is how many of the newest window periods are checked for gaps.
const GapPeriods = 3

// DataGap raises data_gap (warning) for an object that posted in every
// other period of the window but has no cost in one of the newest
// GapPeriods, although the ledger as a whole has postings then: a missing
// invoice or a wrong account, more likely than a real zero.
func DataGap(p *costdrift.Panel, names map[string]string) []costdrift.Alert {
	var out []costdrift.Alert
	n := len(p.Periods)
	for _, o := range p.Objects {
		var gaps []int
		posted := 0
		for i, v := range o.Cost {
			switch {
			case math.IsNaN(v):
			case v == 0 && i >= n-GapPeriods:
				gaps = append(gaps, i)
			case v != 0:
				posted++
			}
		}
		known := 0
		for _, v := range o.Cost {
			if !math.IsNaN(v) {
				known++
			}
		}
		if len(gaps) == 0 || posted+len(gaps) != known || posted < 12 {
			continue // not an account that always posts
		}
		for _, i := range gaps {
			object := o.Object.String()
			name := names[o.Object.Account]
			out = append(out, costdrift.Alert{
				Kind: costdrift.AlertDataGap, Object: object, Severity: costdrift.SeverityWarning, Period: p.Periods[i],
				Message: fmt.Sprintf("%s%s has no postings in %s though it posted in every other period of the window", object,
					prefix(" ", name), p.Periods[i]),
				Fingerprint: costdrift.Fingerprint(costdrift.AlertDataGap, object, p.Periods[i]),
				Evidence:    costdrift.AlertEvidence{Period: new(p.Periods[i]), PeriodsPosted: new(posted)},
			})
		}
	}
	return out
}

// SourceState is what the rules on sources read of one source.
type SourceState struct {
	Name          string
	Role          costdrift.Role
	Failures      int    // failed syncs in a row, the latest first
	LastError     string // of the latest failed sync
	NewestPeriod  string // newest period with data from it ("" for none)
	PeriodsBehind int    // closed periods after NewestPeriod
}

// StaleAfter is how many closed periods a ledger source may lag the newest
// data of the other sources before it is stale.
const StaleAfter = 2

// SourceFailure raises source_failure for a source whose latest sync failed:
// a warning, critical from the third failure in a row.
func SourceFailure(states []SourceState) []costdrift.Alert {
	var out []costdrift.Alert
	for _, s := range states {
		if s.Failures == 0 {
			continue
		}
		sev := costdrift.SeverityWarning
		if s.Failures >= 3 {
			sev = costdrift.SeverityCritical
		}
		out = append(out, costdrift.Alert{
			Kind: costdrift.AlertSourceFailure, Object: s.Name, Severity: sev,
			Message:     fmt.Sprintf("source %s failed %d time(s) in a row: %s", s.Name, s.Failures, s.LastError),
			Fingerprint: costdrift.Fingerprint(costdrift.AlertSourceFailure, s.Name, ""),
			Evidence:    costdrift.AlertEvidence{FailuresInARow: new(s.Failures), Error: new(s.LastError)},
		})
	}
	return out
}

// StaleSource raises stale_source (warning) for a ledger source whose newest
// data lag the other sources' by StaleAfter or more closed periods.
func StaleSource(states []SourceState) []costdrift.Alert {
	var out []costdrift.Alert
	for _, s := range states {
		if s.Role != costdrift.RoleLedger || s.NewestPeriod == "" || s.PeriodsBehind < StaleAfter {
			continue
		}
		out = append(out, costdrift.Alert{
			Kind: costdrift.AlertStaleSource, Object: s.Name, Severity: costdrift.SeverityWarning,
			Message: fmt.Sprintf("source %s has nothing newer than %s: %d closed periods since have no data from it",
				s.Name, s.NewestPeriod, s.PeriodsBehind),
			Fingerprint: costdrift.Fingerprint(costdrift.AlertStaleSource, s.Name, ""),
			Evidence:    costdrift.AlertEvidence{NewestPeriod: new(s.NewestPeriod), ClosedPeriodsBehind: new(s.PeriodsBehind)},
		})
	}
	return out
}

func label(b costdrift.Behaviour, names map[string]string) string {
	return b.Object.String() + prefix(" ", names[b.Object.Account])
}

func prefix(p, s string) string {
	if s == "" {
		return ""
	}
	return p + s
}
