package alerts

import (
	"fmt"
	"math"
	"strings"

	"github.com/costdrift/costdrift/internal/costdrift"
	"github.com/costdrift/costdrift/internal/present"
)

// ConfirmPeriods: a shift found with fewer periods than this after its
// break is a watch (info) until the next period confirms it. Two periods
// off the formula at 2–5 % noise happen by chance in a large portfolio
// every month; three in a row that still test significant rarely do, and a
// real change stays significant as its periods add up (README, Drift).
const ConfirmPeriods = 3

// MinShift is the smallest change worth an alert, as a share of the cost
// per period at the activity before the change (README, Alerts: a change of at
// least 10 % and significant).
const MinShift = 0.10

// BehaviourKinds are the kinds Behaviour evaluates: the store resolves open
// alerts of these kinds that an evaluation no longer raises.
var BehaviourKinds = []costdrift.AlertKind{costdrift.AlertReclassified, costdrift.AlertDriverChanged,
	costdrift.AlertFixedShift, costdrift.AlertRateShift}

// Behaviour raises the alerts of changes in behaviour, from each object's
// current behaviour and the one it replaced (previous; absent when the
// object has had only one):
//
//   - reclassified: the class differs from the previous behaviour's;
//   - driver_changed: the same class, another driver (or lag);
//   - fixed_shift, rate_shift: the current behaviour starts at a significant
//     break, and its fixed part moved by at least MinShift of itself (and
//     half that of the cost per period before the break), or its rate times
//     the activity before the break by at least MinShift of the cost per
//     period before it; for a cost with a driver, the cost at the activity
//     before the break moved by at least half of MinShift too.
//
// Each is a warning, at least (a behaviour change; README, Alerts); a shift of
// more than half the cost is critical, and one seen in fewer than
// ConfirmPeriods periods is a watch (info) until confirmed. A change of class
// or driver is fingerprinted by the behaviour it replaced (its start), not
// by the new one's, whose first period moves with the window: it stays one
// alert from one analysis to the next. An alert holds while the current
// behaviour is the changed one, and resolves when it is replaced. Amounts
// in the messages are of currency ("" leaves it unsaid).
func Behaviour(current []costdrift.Behaviour, previous map[string]costdrift.Behaviour, names map[string]string, currency string) []costdrift.Alert {
	var out []costdrift.Alert
	for _, b := range current {
		object := b.Object.String()
		label := object
		if n := names[b.Object.Account]; n != "" {
			label += " " + n
		}
		if prev, ok := previous[object]; ok && prev.Class != "" {
			switch {
			case prev.Class != b.Class:
				out = append(out, costdrift.Alert{
					Kind: costdrift.AlertReclassified, Object: object, Severity: costdrift.SeverityWarning, Period: b.Since,
					Message:     fmt.Sprintf("%s is now %s (was %s) since %s", label, describe(b), describe(prev), b.Since),
					Fingerprint: costdrift.Fingerprint(costdrift.AlertReclassified, object, string(prev.Class)+">"+string(b.Class)+"@"+prev.Since),
					Evidence:    evidence(b, prev),
				})
			case prev.Driver != b.Driver || prev.Lag != b.Lag:
				out = append(out, costdrift.Alert{
					Kind: costdrift.AlertDriverChanged, Object: object, Severity: costdrift.SeverityWarning, Period: b.Since,
					Message:     fmt.Sprintf("%s follows %s now (was %s) since %s", label, driverText(b), driverText(prev), b.Since),
					Fingerprint: costdrift.Fingerprint(costdrift.AlertDriverChanged, object, prev.Driver+">"+b.Driver+"@"+prev.Since),
					Evidence:    evidence(b, prev),
				})
			}
		}
		if k := b.Break; k != nil && k.LevelBefore != 0 {
			level := math.Abs(k.LevelBefore)
			fixed := (k.FixedAfter - k.FixedBefore) / level
			rate := (k.RateAfter - k.RateBefore) * k.ActivityBefore / level
			ev := costdrift.AlertEvidence{Test: new(k.Test), Statistic: new(k.Statistic), P: new(k.P), Break: new(k.Period),
				FixedBefore: new(k.FixedBefore), FixedAfter: new(k.FixedAfter), RateBefore: new(k.RateBefore),
				RateAfter: new(k.RateAfter), PeriodsAfter: new(k.Periods), Provisional: new(k.Provisional), R2: new(b.R2), N: new(b.N)}
			watch := k.Periods < ConfirmPeriods
			// The cost at the activity before the break must move too: a
			// fixed part and a rate that offset each other there are the two
			// estimates trading off within their noise, not a change the
			// cost shows.
			moved := true
			if k.Driver != "" {
				before := k.FixedBefore + k.RateBefore*k.ActivityBefore
				after := k.FixedAfter + k.RateAfter*k.ActivityBefore
				moved = math.Abs(after-before) >= MinShift/2*level
			}
			// Amounts fitted on restated costs are at the prices of the
			// formula's base period, as its formula says.
			prices := ""
			if b.PriceBase != "" {
				prices = ", at prices of " + b.PriceBase
			}
			if moved && fixedMoved(k, level) {
				out = append(out, costdrift.Alert{
					Kind: costdrift.AlertFixedShift, Object: object, Severity: shiftSeverity(fixed, watch), Period: k.Period,
					Message: fmt.Sprintf("%s: fixed cost per period %s %.0f %% from %s, %s to %s%s", label, direction(fixed), 100*math.Abs(fixedChange(k, level)),
						k.Period, money(k.FixedBefore), present.Money(k.FixedAfter, currency), prices),
					Fingerprint: costdrift.Fingerprint(costdrift.AlertFixedShift, object, k.Period),
					Evidence:    ev,
				})
			}
			if k.Driver != "" && moved && math.Abs(rate) >= MinShift {
				out = append(out, costdrift.Alert{
					Kind: costdrift.AlertRateShift, Object: object, Severity: shiftSeverity(rate, watch), Period: k.Period,
					Message: fmt.Sprintf("%s: rate per %s %s from %s, %s to %s (%.0f %% of the cost at the activity before)%s", label,
						unit(b, k.Driver), direction(rate), k.Period, rateText(k.RateBefore), perCurrency(rateText(k.RateAfter), currency), 100*math.Abs(rate), prices),
					Fingerprint: costdrift.Fingerprint(costdrift.AlertRateShift, object, k.Period),
					Evidence:    ev,
				})
			}
		}
	}
	return out
}

// fixedChange is the change of the fixed part as a share of itself before
// the break; of the cost per period when the fixed part was not positive.
func fixedChange(k *costdrift.Break, level float64) float64 {
	if k.FixedBefore > 0 {
		return (k.FixedAfter - k.FixedBefore) / k.FixedBefore
	}
	return (k.FixedAfter - k.FixedBefore) / level
}

// fixedMoved reports whether a break moved the fixed part enough for an
// alert: by at least MinShift of itself, and at least half that of the cost
// per period, so that a small fixed part under a large variable one, whose
// estimate is uncertain, does not raise alerts on changes that barely touch
// the cost. For a fixed cost both are MinShift of its cost per period.
func fixedMoved(k *costdrift.Break, level float64) bool {
	change := k.FixedAfter - k.FixedBefore
	return math.Abs(fixedChange(k, level)) >= MinShift && math.Abs(change) >= MinShift/2*level
}

// shiftSeverity is a shift's severity: info while it waits for
// confirmation (a watch), else by its size.
func shiftSeverity(share float64, watch bool) costdrift.Severity {
	if watch {
		return costdrift.SeverityInfo
	}
	return severity(share)
}

func severity(share float64) costdrift.Severity {
	if math.Abs(share) > 0.5 {
		return costdrift.SeverityCritical
	}
	return costdrift.SeverityWarning
}

func direction(v float64) string {
	if v > 0 {
		return "rose"
	}
	return "fell"
}

func describe(b costdrift.Behaviour) string {
	if b.Driver == "" {
		return string(b.Class)
	}
	return string(b.Class) + " on " + driverText(b)
}

func driverText(b costdrift.Behaviour) string {
	if b.Driver == "" {
		return "no driver"
	}
	d := strings.ReplaceAll(b.Driver, "_", " ")
	if b.Lag == 1 {
		d += " of the period before"
	} else if b.Lag > 1 {
		d += fmt.Sprintf(" of %d periods before", b.Lag)
	}
	return d
}

func unit(b costdrift.Behaviour, driver string) string {
	if b.Unit != "" && b.Driver == driver {
		return b.Unit
	}
	return "unit of " + strings.ReplaceAll(driver, "_", " ")
}

func money(v float64) string { return present.Amount(v) }

func rateText(v float64) string { return present.Rate(v) }

// perCurrency adds the currency to a figure; "" leaves it as it is.
func perCurrency(figure, currency string) string {
	if currency == "" {
		return figure
	}
	return figure + " " + currency
}

// evidence of a change of class or driver: both behaviours' formulas, and
// the fit of the new one. A number that is not finite is stored as null.
func evidence(b, prev costdrift.Behaviour) costdrift.AlertEvidence {
	return costdrift.AlertEvidence{
		ClassBefore: new(string(prev.Class)), ClassAfter: new(string(b.Class)),
		DriverBefore: new(prev.Driver), DriverAfter: new(b.Driver),
		FixedBefore: new(prev.FixedPerPeriod), RateBefore: new(prev.VariableRate),
		FixedAfter: new(b.FixedPerPeriod), RateAfter: new(b.VariableRate),
		Since: new(b.Since), Reason: new(b.Reason), R2: new(b.R2), N: new(b.N),
	}
}
