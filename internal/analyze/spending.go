package analyze

import (
	"github.com/costdrift/costdrift/internal/costdrift"
	"github.com/costdrift/costdrift/internal/fit"
)

// SpendingPeriods is how many of the newest periods are checked against
// the formula: the newest, and the one before, so that a repeat can be told
// from a one-off.
const SpendingPeriods = 2

// spending checks the newest periods' actual cost against the 95 %
// prediction interval of the behaviour's formula at their actual activity,
// the formula fitted without them (README, The method): through the origin for a
// variable cost, a line for mixed and step costs (a step's levels are a line
// near one level), the mean without a driver. The check of period t leaves
// out t and every later period, so it sees only what was known before.
func spending(p *costdrift.Panel, res *Result, s Settings) {
	b := &res.Behaviour
	n := len(res.y)
	for back := SpendingPeriods; back >= 1; back-- {
		m := n - back // fit on the first m observations, predict observation m
		if m < s.MinPeriods {
			continue
		}
		var r *fit.Regression
		var err error
		var x0 []float64
		switch {
		case res.x == nil:
			r, err = fit.Constant(res.y[:m])
		case b.Class == costdrift.Variable && b.Driver2 == "":
			r, err = fit.ThroughOrigin(res.x[:m], res.y[:m])
			x0 = []float64{res.x[m]}
		default:
			r, err = fit.Line(res.x[:m], res.y[:m])
			x0 = []float64{res.x[m]}
		}
		if err != nil {
			continue
		}
		low, high := r.PredictionInterval(x0, 0.95)
		expected, _ := r.Predict(x0)
		c := costdrift.SpendingCheck{Period: p.Periods[res.index[m]], Actual: res.y[m], Expected: expected, Low: low, High: high}
		if x0 != nil {
			c.Activity = x0[0]
		}
		b.Spending = append(b.Spending, c)
	}
}
