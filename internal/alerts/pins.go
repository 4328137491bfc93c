package alerts

import (
	"fmt"
	"maps"
	"slices"
	"strconv"

	"github.com/costdrift/costdrift/internal/costdrift"
)

// PinTestName names the test of a pinned formula in an alert's evidence.
const PinTestName = "F test of the pinned coefficients (Benjamini–Hochberg over the portfolio's pins)"

// PinReview raises, for each pin in force, an alert when the data
// contradict it (tests: the pins tested, after ControlPins) and, for each
// pin whose last period lies before period, an alert that it expired. A
// pin made again is a new decision and so a new condition: the
// fingerprint carries the decision's id.
//
// Amounts in the messages are of currency ("" leaves it unsaid).
func PinReview(pins map[string]costdrift.Pin, tests []costdrift.PinTest, period string, names map[string]string, currency string) []costdrift.Alert {
	var out []costdrift.Alert
	for _, t := range tests {
		if !t.Contradicted {
			continue
		}
		p := t.Pin
		object := p.Object
		data := fmt.Sprintf("the data say %s", perCurrency(money(t.DataFixed), currency))
		pinned := money(p.Fixed)
		switch p.Class {
		case costdrift.Variable:
			data = fmt.Sprintf("the data say %s per unit", perCurrency(rateText(t.DataRate), currency))
			pinned = rateText(p.Rate) + " per unit"
		case costdrift.Mixed:
			data = fmt.Sprintf("the data say %s + %s per unit", money(t.DataFixed), perCurrency(rateText(t.DataRate), currency))
			pinned = fmt.Sprintf("%s + %s per unit", money(p.Fixed), rateText(p.Rate))
		}
		ev := costdrift.AlertEvidence{Test: new(PinTestName), Statistic: new(t.F), P: new(t.P), N: new(t.N),
			PinnedFixed: new(p.Fixed), PinnedRate: new(p.Rate), DataFixed: new(t.DataFixed), DataRate: new(t.DataRate)}
		if p.Until != "" {
			ev.PinnedUntil = new(p.Until)
		}
		out = append(out, costdrift.Alert{
			Kind: costdrift.AlertPinReview, Object: object, Severity: costdrift.SeverityWarning,
			Message: fmt.Sprintf("%s%s: the data contradict the pinned formula (pinned %s, %s over %d periods); review the pin",
				object, prefix(" ", names[accountOf(object)]), pinned, data, t.N),
			Fingerprint: costdrift.Fingerprint(costdrift.AlertPinReview, object, "contradicted "+strconv.FormatInt(p.DecisionID, 10)),
			Evidence:    ev,
		})
	}
	for _, object := range slices.Sorted(maps.Keys(pins)) {
		p := pins[object]
		if !p.Expired(period) {
			continue
		}
		out = append(out, costdrift.Alert{
			Kind: costdrift.AlertPinReview, Object: object, Severity: costdrift.SeverityWarning, Period: p.Until,
			Message: fmt.Sprintf("%s%s: the pin of its formula expired after %s; budgets and variances use the data's formula again (pin again or unpin)",
				object, prefix(" ", names[accountOf(object)]), p.Until),
			Fingerprint: costdrift.Fingerprint(costdrift.AlertPinReview, object, "expired "+strconv.FormatInt(p.DecisionID, 10)),
			Evidence:    costdrift.AlertEvidence{PinnedFixed: new(p.Fixed), PinnedRate: new(p.Rate), PinnedUntil: new(p.Until)},
		})
	}
	return out
}

// accountOf is the account of an object named as the report names it.
func accountOf(object string) string {
	for i := range len(object) {
		if object[i] == '/' {
			return object[:i]
		}
	}
	return object
}
