package analyze

import (
	"fmt"
	"math"

	"github.com/costdrift/costdrift/internal/costdrift"
	"github.com/costdrift/costdrift/internal/fit"
)

// classify sets the behaviour from the ranked candidates. The rules, in
// order (PRODUCT §5):
//
//   - no driver with a positive slope significant after correction: fixed
//     when the coefficient of variation is at most FixedMaxCV, else
//     unexplained;
//   - best driver (lowest leave-one-out error) with cost = a + b·x: at mean
//     activity x̄ the fixed share is a/(a + b·x̄) and the variable share
//     b·x̄/(a + b·x̄). The intercept not significant, or a fixed share below
//     MinorShare: variable, with the rate of the proportional fit
//     cost = b·x; a variable share below MinorShare: fixed; otherwise
//     mixed, cost = a + b·x.
//
// A significant negative slope is reported in the reason and never used.
func classify(res *Result, cands, ranked []*candidate, y []float64, periods []string, s Settings) {
	b := &res.Behaviour
	implausible := 0
	for _, c := range cands {
		if c.negative {
			implausible++
		}
	}
	tried := fmt.Sprintf("%d driver-lag candidates tried", len(cands))
	note := ""
	if implausible > 0 {
		note = fmt.Sprintf("; %d significant negative slope(s) ignored as implausible", implausible)
	}

	if len(ranked) == 0 {
		b.R2 = math.NaN()
		b.FixedPerPeriod = b.MeanCost
		res.Fits[0].Chosen = true
		if b.CV <= FixedMaxCV {
			b.Class = costdrift.Fixed
			b.Reason = fmt.Sprintf("no driver explains it (%s, Holm-corrected at %g) and it varies %.1f %% around its mean (at most %.0f %%)%s",
				tried, s.Alpha, 100*b.CV, 100*FixedMaxCV, note)
		} else {
			b.Class = costdrift.Unexplained
			b.Reason = fmt.Sprintf("no driver explains it (%s, Holm-corrected at %g) and it varies %.1f %% around its mean (more than %.0f %%); the fixed amount shown is the mean%s",
				tried, s.Alpha, 100*b.CV, 100*FixedMaxCV, note)
		}
		return
	}

	best := ranked[0]
	lin := best.linear
	a, slope := lin.Coef[0], lin.Coef[1]
	level := a + slope*best.meanX
	fixedShare, variableShare := a/level, slope*best.meanX/level
	interceptP := lin.P[0]
	label := driverLabel(best)
	evidence := fmt.Sprintf("R² %.2f, slope %s after correction, n %d", lin.R2, pText(best.adjustedP), lin.N)

	b.Driver = best.driver.Name
	b.Unit = best.driver.Unit
	b.Lag = best.lag
	b.R2 = lin.R2
	b.N = lin.N
	b.RangeMin, b.RangeMax = best.rangeMin, best.rangeMax
	b.Since, b.Until = best.periods[0], best.periods[len(best.periods)-1]
	b.HighLow = highLow(best)

	switch {
	case interceptP >= s.Alpha || fixedShare < MinorShare:
		b.Class = costdrift.Variable
		if best.origin != nil {
			b.VariableRate = best.origin.Coef[0]
			res.Fits[best.linearIdx+1].Chosen = true
		} else {
			b.VariableRate = slope
			res.Fits[best.linearIdx].Chosen = true
		}
		why := fmt.Sprintf("fixed part not significant (%s)", pText(interceptP))
		if interceptP < s.Alpha {
			why = fmt.Sprintf("fixed part is %.1f %% of cost at mean activity (below %.0f %%)", 100*fixedShare, 100*MinorShare)
		}
		b.Reason = fmt.Sprintf("cost moves with %s (%s); %s%s", label, evidence, why, note)
	case variableShare < MinorShare:
		b.Class = costdrift.Fixed
		b.Driver, b.Unit, b.Lag = "", "", 0
		b.R2 = math.NaN()
		b.FixedPerPeriod = b.MeanCost
		b.RangeMin, b.RangeMax = 0, 0
		res.Fits[0].Chosen = true
		b.Reason = fmt.Sprintf("%s is significant (%s) but drives only %.1f %% of cost at mean activity (below %.0f %%); treated as fixed%s",
			label, evidence, 100*variableShare, 100*MinorShare, note)
	default:
		b.Class = costdrift.Mixed
		b.FixedPerPeriod, b.VariableRate = a, slope
		res.Fits[best.linearIdx].Chosen = true
		b.Reason = fmt.Sprintf("cost moves with %s (%s) above a significant fixed part (%s), %.0f %% fixed at mean activity%s",
			label, evidence, pText(interceptP), 100*fixedShare, note)
	}
}

// highLow computes the high-low estimate on the best candidate's data and
// warns when either end is an outlier of the regression: a studentised
// residual above OutlierStdResid or a Cook's distance above 4/n.
func highLow(c *candidate) *costdrift.HighLow {
	hl, err := fit.HighLowEstimate(c.x, c.y)
	if err != nil {
		return nil
	}
	out := &costdrift.HighLow{
		HighPeriod: c.periods[hl.HighIndex], LowPeriod: c.periods[hl.LowIndex],
		HighActivity: c.x[hl.HighIndex], LowActivity: c.x[hl.LowIndex],
		HighCost: c.y[hl.HighIndex], LowCost: c.y[hl.LowIndex],
		Fixed: hl.Fixed, Rate: hl.Rate,
	}
	lin := c.linear
	outlier := func(i int) bool {
		h := lin.Leverage[i]
		student := lin.Residuals[i] / (lin.ResidualSE * math.Sqrt(1-h))
		return math.Abs(student) > OutlierStdResid || lin.CooksD[i] > outlierCookScale/float64(lin.N)
	}
	var ends []string
	if outlier(hl.HighIndex) {
		ends = append(ends, "high ("+out.HighPeriod+")")
	}
	if outlier(hl.LowIndex) {
		ends = append(ends, "low ("+out.LowPeriod+")")
	}
	switch len(ends) {
	case 1:
		out.Warning = "the " + ends[0] + " point is an outlier of the regression; the high-low estimate is unreliable"
	case 2:
		out.Warning = "the " + ends[0] + " and " + ends[1] + " points are outliers of the regression; the high-low estimate is unreliable"
	}
	return out
}
