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
//
//   - best driver (lowest leave-one-out error) with cost = a + b·x: at mean
//     activity x̄ the fixed share is a/(a + b·x̄) and the variable share
//     b·x̄/(a + b·x̄). The intercept not significant, or a fixed share below
//     MinorShare: variable, with the rate of the proportional fit
//     cost = b·x; a variable share below MinorShare: fixed; otherwise
//     mixed, cost = a + b·x.
//
//   - step: on the best-ranked drivers, a step model (2–4 levels rising in
//     the driver, each at least 3 periods) that beats the line on the same
//     data by ΔAICc >= StepMinDeltaAICc, and inside whose levels cost does
//     not keep rising with the driver (no significant common slope within
//     the levels); the formula is its levels;
//
//   - a second driver, by forward selection (forwardSelect), joins the
//     formula and the shares are taken over both drivers.
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
	diag := &costdrift.Diagnostics{Candidates: len(cands)}

	if len(ranked) == 0 {
		constantFit := res.Fits[0]
		diag.Models = append(diag.Models, costdrift.ModelSummary{Model: costdrift.ModelConstant, N: constantFit.N,
			AICc: constantFit.AICc, PRESS: constantFit.PRESS, R2: 0})
		b.R2 = math.NaN()
		b.FixedPerPeriod = b.MeanCost
		b.Prediction = constantTerms(y)
		res.Fits[0].Chosen = true
		b.Diagnostics = diag
		diag.DurbinWatson, diag.RobustIntercept, diag.RobustSlope = math.NaN(), math.NaN(), math.NaN()
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

	// Step models on the best-ranked drivers: a step beats the line on the
	// same data by ΔAICc >= StepMinDeltaAICc, with levels rising in the driver.
	var stepCand *candidate
	var stepBest *stepFit
	steps := map[*candidate]*stepFit{}
	for i, c := range ranked {
		if i == StepCandidates {
			break
		}
		sf := fitStep(c)
		if sf == nil {
			continue
		}
		steps[c] = sf
		res.Fits = append(res.Fits, stepRecord(b.Object, c, sf))
		flatLevel := s.Alpha
		if prior, ok := s.Prior[b.Object.String()]; ok && prior.Class == costdrift.Step {
			flatLevel = s.Alpha / StickySignificance // a step stays flat unless clearly rising inside
		}
		flat := !(sf.withinP < flatLevel && sf.withinSlope > 0)
		// The step must also beat the best line of any driver, not only
		// its own driver's: a step on a driver that merely correlates with
		// the real one can beat that driver's poor line. AICc compares fits
		// of the same costs; at another lag (one period fewer) the
		// leave-one-out error per period decides instead.
		top := ranked[0].linear
		beatsBest := top.AICc-sf.model.AICc >= StepMinDeltaAICc
		if top.N != len(c.y) {
			beatsBest = sf.press/float64(len(c.y)) < top.PRESS/float64(top.N)
		}
		need := StepMinDeltaAICc
		if prior, ok := s.Prior[b.Object.String()]; ok {
			if prior.Class == costdrift.Step {
				need = StepKeepDeltaAICc // a step cost stays a step on weaker evidence
				beatsBest = beatsBest || top.AICc-sf.model.AICc >= need
			} else {
				need = StepEnterDeltaAICc
				beatsBest = beatsBest && top.AICc-sf.model.AICc >= need
			}
		}
		if sf.rising && flat && beatsBest && c.linear.AICc-sf.model.AICc >= need && (stepBest == nil || sf.model.AICc < stepBest.model.AICc) {
			stepCand, stepBest = c, sf
			c.stepIdx = len(res.Fits) - 1
		}
	}

	best := ranked[0]
	if stepCand != nil {
		best = stepCand
	}
	best.full()
	lin := best.linear
	res.x, res.y, res.index = best.x, best.y, best.index
	// The model comparison is on the chosen driver's periods, so that every
	// AICc in it is of the same costs.
	if constant, err := fit.Constant(best.y); err == nil {
		diag.Models = append(diag.Models, costdrift.ModelSummary{Model: costdrift.ModelConstant, N: constant.N,
			AICc: constant.AICc, PRESS: constant.PRESS, R2: 0})
	}
	if sf, ok := steps[best]; ok {
		diag.Models = append(diag.Models, costdrift.ModelSummary{Model: costdrift.ModelStep, Driver: best.driver.Name, Lag: best.lag,
			N: len(best.x), AICc: sf.model.AICc, PRESS: sf.press, R2: sf.r2})
	}
	diag.Models = append(diag.Models,
		costdrift.ModelSummary{Model: costdrift.ModelLinear, Driver: best.driver.Name, Lag: best.lag, N: lin.N, AICc: lin.AICc, PRESS: lin.PRESS, R2: lin.R2})
	if best.origin != nil {
		diag.Models = append(diag.Models, costdrift.ModelSummary{Model: costdrift.ModelProportional, Driver: best.driver.Name, Lag: best.lag,
			N: best.origin.N, AICc: best.origin.AICc, PRESS: best.origin.PRESS, R2: best.origin.R2})
	}
	b.Driver = best.driver.Name
	b.Unit = best.driver.Unit
	b.Lag = best.lag
	b.R2 = lin.R2
	b.N = lin.N
	b.RangeMin, b.RangeMax = best.rangeMin, best.rangeMax
	b.Since, b.Until = best.periods[0], best.periods[len(best.periods)-1]
	b.HighLow = highLow(best)
	b.Diagnostics = diag
	label := driverLabel(best)

	if stepCand != nil {
		m := stepBest.model
		b.Class = costdrift.Step
		b.R2 = stepBest.r2
		for _, l := range m.Levels {
			b.Steps = append(b.Steps, costdrift.StepLevel{From: l.From, To: l.To, Level: l.Mean, N: l.N})
		}
		b.FixedPerPeriod = m.Levels[0].Mean
		if terms, err := fit.StepTerms(m); err == nil {
			b.Prediction = stored(terms)
		}
		chosen := &res.Fits[best.stepIdx]
		chosen.Chosen = true
		diagnose(chosen, lin, [][]float64{best.x}, best.y, best.periods, diag)
		chosen.DurbinWatson = fit.DurbinWatson(m.Residuals)
		diag.DurbinWatson = chosen.DurbinWatson
		b.Outliers = chosen.Outliers
		b.Reason = fmt.Sprintf("cost steps up with %s: %d levels (AICc %.1f below the straight line's, R² %.2f, n %d)%s",
			label, len(m.Levels), lin.AICc-m.AICc, stepBest.r2, len(best.x), note)
		return
	}

	// A second driver, by forward selection.
	pair, secondTried := forwardSelect(best, cands, s)
	if secondTried > 0 && pair != nil {
		diag.Models = append(diag.Models, costdrift.ModelSummary{Model: costdrift.ModelTwoDriver, Driver: best.driver.Name + " + " + pair.c.driver.Name,
			Lag: best.lag, N: pair.full.N, AICc: pair.full.AICc, PRESS: pair.full.PRESS, R2: pair.full.R2})
	}

	var a, slope, slope2, level, fixedShare, variableShare, interceptP float64
	var chosenReg *fit.Regression
	var columns [][]float64
	var ys []float64
	var obsPeriods []string
	evidence := fmt.Sprintf("R² %.2f, slope %s after correction, n %d", lin.R2, pText(best.adjustedP), lin.N)
	if pair != nil {
		r := pair.full
		a, slope, slope2 = r.Coef[0], r.Coef[1], r.Coef[2]
		m1, m2 := meanOf(pair.x1), meanOf(pair.x2)
		level = a + slope*m1 + slope2*m2
		fixedShare, variableShare = a/level, (slope*m1+slope2*m2)/level
		interceptP = r.P[0]
		chosenReg, columns, ys, obsPeriods = r, [][]float64{pair.x1, pair.x2}, pair.y, pair.periods
		b.Driver2, b.Unit2, b.Lag2 = pair.c.driver.Name, pair.c.driver.Unit, pair.c.lag
		b.R2, b.N = r.R2, r.N
		label += " and " + driverLabel(pair.c)
		evidence = fmt.Sprintf("R² %.2f with both, second driver partial F %s after correction, VIF %.1f, n %d", r.R2, pText(pair.partialP*float64(secondTried)), pair.vif, r.N)
		res.Fits = append(res.Fits, twoDriverRecord(b.Object, best, pair))
	} else {
		a, slope = lin.Coef[0], lin.Coef[1]
		level = a + slope*best.meanX
		fixedShare, variableShare = a/level, slope*best.meanX/level
		interceptP = lin.P[0]
		chosenReg, columns, ys, obsPeriods = lin, [][]float64{best.x}, best.y, best.periods
	}
	chosenIdx := best.linearIdx
	if pair != nil {
		chosenIdx = len(res.Fits) - 1
	}

	variableRule := interceptP >= s.Alpha || fixedShare < MinorShare
	if prior, ok := s.Prior[b.Object.String()]; ok {
		variableRule = keepVariableOrMixed(prior.Class, variableRule, interceptP, fixedShare, s.Alpha)
	}
	switch {
	case variableRule:
		b.Class = costdrift.Variable
		b.VariableRate = slope
		b.VariableRate2 = slope2
		b.Prediction = termsOf(chosenReg) // replaced by the proportional fit's below
		if pair != nil {
			if r, err := fit.OLS(columns, ys, false); err == nil {
				b.VariableRate, b.VariableRate2 = r.Coef[0], r.Coef[1]
				b.Prediction = termsOf(r)
			}
		} else if best.origin != nil {
			b.VariableRate = best.origin.Coef[0]
			b.Prediction = termsOf(best.origin)
			chosenIdx = best.linearIdx + 1
		}
		why := fmt.Sprintf("fixed part not significant (%s)", pText(interceptP))
		if interceptP < s.Alpha {
			why = fmt.Sprintf("fixed part is %.1f %% of cost at mean activity (below %.0f %%)", 100*fixedShare, 100*MinorShare)
		}
		b.Reason = fmt.Sprintf("cost moves with %s (%s); %s%s", label, evidence, why, note)
	case variableShare < minorShareFor(s.Prior, b.Object):
		b.Class = costdrift.Fixed
		b.Driver, b.Unit, b.Lag = "", "", 0
		b.Driver2, b.Unit2, b.Lag2 = "", "", 0
		b.R2 = math.NaN()
		b.FixedPerPeriod = b.MeanCost
		b.Prediction = constantTerms(y)
		b.RangeMin, b.RangeMax = 0, 0
		b.HighLow = nil
		res.Fits[0].Chosen = true
		res.x = nil // a fixed cost's break is a break in its level
		diag.DurbinWatson, diag.RobustIntercept, diag.RobustSlope = math.NaN(), math.NaN(), math.NaN()
		b.Reason = fmt.Sprintf("%s is significant (%s) but drives only %.1f %% of cost at mean activity (below %.0f %%); treated as fixed%s",
			label, evidence, 100*variableShare, 100*MinorShare, note)
		return
	default:
		b.Class = costdrift.Mixed
		b.FixedPerPeriod, b.VariableRate, b.VariableRate2 = a, slope, slope2
		b.Prediction = termsOf(chosenReg)
		b.Reason = fmt.Sprintf("cost moves with %s (%s) above a significant fixed part (%s), %.0f %% fixed at mean activity%s",
			label, evidence, pText(interceptP), 100*fixedShare, note)
	}
	chosen := &res.Fits[chosenIdx]
	chosen.Chosen = true
	diagnose(chosen, chosenReg, columns, ys, obsPeriods, diag)
	b.Outliers = chosen.Outliers
	if diag.RobustNote != "" {
		b.Reason += "; robust fit disagrees (see explain)"
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

// termsOf is r's prediction terms as a behaviour stores them.
func termsOf(r *fit.Regression) *costdrift.PredictionTerms {
	return stored(r.Terms())
}

// stored is t in the domain's type, the form a behaviour carries to the
// store and the budget.
func stored(t fit.Terms) *costdrift.PredictionTerms {
	p := costdrift.PredictionTerms(t)
	return &p
}

// constantTerms is the prediction terms of the mean of y, nil when there is
// no residual degree of freedom.
func constantTerms(y []float64) *costdrift.PredictionTerms {
	r, err := fit.Constant(y)
	if err != nil || r.DF < 1 {
		return nil
	}
	return termsOf(r)
}
