package analyze

import (
	"fmt"
	"math"

	"github.com/costdrift/costdrift/internal/costdrift"
	"github.com/costdrift/costdrift/internal/fit"
)

// classify sets the behaviour from the ranked candidates. The rules, in
// order (README, The method):
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
//     not keep rising with the driver (no common slope within the levels
//     significant at alpha/StickySignificance); the formula is its levels;
//
//   - a second driver, by forward selection (forwardSelect), joins the
//     formula and the shares are taken over both drivers.
//
// A significant negative slope is reported in the reason and never used.
func classify(res *Result, cands, ranked []*candidate, y []float64, periods []string, s Settings) {
	note := implausibleNote(cands)
	diag := &costdrift.Diagnostics{Candidates: len(cands)}
	if len(ranked) == 0 {
		classifyWithoutDriver(res, len(cands), y, note, diag, s)
		return
	}
	steps, stepCand, stepBest := chooseStep(res, ranked, s)
	if prior, ok := s.Prior[res.Behaviour.Object.String()]; ok && stepCand != nil && stepLikeLine(prior, stepCand, stepBest) {
		stepCand, stepBest = nil, nil
	}
	best := ranked[0]
	if stepCand != nil {
		best = stepCand
	}
	adoptDriver(res, best, steps, diag)
	if stepCand != nil {
		classifyStep(res, best, stepBest, diag, note)
		return
	}
	line := chooseLine(res, best, cands, diag, s)
	classifyLine(res, best, line, y, diag, note, s)
}

// implausibleNote is the part of a reason that counts the significant
// negative slopes ignored; "" when there are none.
func implausibleNote(cands []*candidate) string {
	implausible := 0
	for _, c := range cands {
		if c.negative {
			implausible++
		}
	}
	if implausible == 0 {
		return ""
	}
	return fmt.Sprintf("; %d significant negative slope(s) ignored as implausible", implausible)
}

// classifyWithoutDriver is the first rule: no driver is significant, so
// the cost is fixed at its mean when it varies little, else unexplained.
func classifyWithoutDriver(res *Result, tried int, y []float64, note string, diag *costdrift.Diagnostics, s Settings) {
	b := &res.Behaviour
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
		b.Reason = fmt.Sprintf("no driver explains it (%d driver-lag candidates tried, Holm-corrected at %g) and it varies %.1f %% around its mean (at most %.0f %%)%s",
			tried, s.Alpha, 100*b.CV, 100*FixedMaxCV, note)
	} else {
		b.Class = costdrift.Unexplained
		b.Reason = fmt.Sprintf("no driver explains it (%d driver-lag candidates tried, Holm-corrected at %g) and it varies %.1f %% around its mean (more than %.0f %%); the fixed amount shown is the mean%s",
			tried, s.Alpha, 100*b.CV, 100*FixedMaxCV, note)
	}
}

// chooseStep fits step models on the best-ranked drivers, records each fit,
// and returns them with the step that wins, if any: it beats the line on
// the same data by ΔAICc >= StepMinDeltaAICc (less to stay a step, more to
// become one), beats the best line of any driver too, has levels rising in
// the driver and is flat inside them.
func chooseStep(res *Result, ranked []*candidate, s Settings) (steps map[*candidate]*stepFit, stepCand *candidate, stepBest *stepFit) {
	b := &res.Behaviour
	steps = map[*candidate]*stepFit{}
	prior, hasPrior := s.Prior[b.Object.String()]
	var priorCand *candidate
	var priorStep *stepFit
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
		// A step is flat unless clearly rising inside its levels: a line cut
		// into levels rises inside them at p far below this, while a true
		// step's levels, each a few months of noise on a driver that swings,
		// show a slope at p < alpha one analysis in twenty, and at alpha the
		// same step cost would be called a line in one month and a step in
		// the next.
		flatLevel := s.Alpha / StickySignificance
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
		if hasPrior {
			if prior.Class == costdrift.Step {
				need = StepKeepDeltaAICc // a step cost stays a step on weaker evidence
				beatsBest = beatsBest || top.AICc-sf.model.AICc >= need
			} else {
				need = StepEnterDeltaAICc
				beatsBest = beatsBest && top.AICc-sf.model.AICc >= need
			}
		}
		isPrior := hasPrior && prior.Class == costdrift.Step && prior.Driver == c.driver.Name && prior.Lag == c.lag
		qualifies := beatsBest && c.linear.AICc-sf.model.AICc >= need
		if isPrior && !qualifies && lineLikeSteps(c, sf) {
			// A step cost whose driver's line now fits a little better
			// keeps its steps while that line predicts the same costs, as
			// a line is kept against steps that do (stepLikeLine).
			qualifies = true
		}
		if !(sf.rising && flat && qualifies) {
			continue
		}
		c.stepIdx = len(res.Fits) - 1
		if stepBest == nil || sf.model.AICc < stepBest.model.AICc {
			stepCand, stepBest = c, sf
		}
		if isPrior {
			priorCand, priorStep = c, sf
		}
	}
	// A step cost keeps its driver while that driver's steps predict the
	// same costs as the best step's (InterchangeShare): two correlated
	// drivers' steps trade places as noise moves their fits, as their lines
	// do (preferPrior).
	if priorCand != nil && priorCand != stepCand && sameSteps(priorCand, priorStep, stepCand, stepBest) {
		stepCand, stepBest = priorCand, priorStep
	}
	return steps, stepCand, stepBest
}

// adoptDriver makes best the behaviour's driver: its range, period span
// and high-low estimate, and the comparison of the models fitted on its
// periods.
func adoptDriver(res *Result, best *candidate, steps map[*candidate]*stepFit, diag *costdrift.Diagnostics) {
	b := &res.Behaviour
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
}

// classifyStep is the step rule: the formula is the winning step model's
// levels.
func classifyStep(res *Result, best *candidate, stepBest *stepFit, diag *costdrift.Diagnostics, note string) {
	b := &res.Behaviour
	lin := best.linear
	m := stepBest.model
	b.Class = costdrift.Step
	b.R2 = stepBest.r2
	for _, l := range m.Levels {
		b.Steps = append(b.Steps, costdrift.StepLevel{From: l.From, To: l.To, Level: l.Mean, N: l.N})
	}
	b.FixedPerPeriod = m.Levels[0].Mean
	res.stepResiduals = m.Residuals
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
		driverLabel(best), len(m.Levels), lin.AICc-m.AICc, stepBest.r2, len(best.x), note)
}

// lineFormula is the regression the line rules judge: the best driver's
// line, or the line on it and a second driver; its shares of cost at mean
// activity, the data it was fitted on, and the words for the reason.
type lineFormula struct {
	pair                      *second // the second driver; nil for one
	a, slope, slope2          float64
	fixedShare, variableShare float64
	interceptP                float64
	reg                       *fit.Regression
	columns                   [][]float64
	ys                        []float64
	periods                   []string
	fitIdx                    int    // its record in Result.Fits
	label                     string // the driver, or both drivers
	evidence                  string // R², the test, n
}

// chooseLine is the line on best's driver, with a second driver when
// forward selection adopts one (which sets it on the behaviour and records
// the two-driver fit).
func chooseLine(res *Result, best *candidate, cands []*candidate, diag *costdrift.Diagnostics, s Settings) lineFormula {
	b := &res.Behaviour
	lin := best.linear
	pair, secondTried := forwardSelect(best, cands, s)
	if secondTried > 0 && pair != nil {
		diag.Models = append(diag.Models, costdrift.ModelSummary{Model: costdrift.ModelTwoDriver, Driver: best.driver.Name + " + " + pair.c.driver.Name,
			Lag: best.lag, N: pair.full.N, AICc: pair.full.AICc, PRESS: pair.full.PRESS, R2: pair.full.R2})
	}
	l := lineFormula{pair: pair, label: driverLabel(best), fitIdx: best.linearIdx,
		evidence: fmt.Sprintf("R² %.2f, slope %s after correction, n %d", lin.R2, pText(best.adjustedP), lin.N)}
	if pair == nil {
		l.a, l.slope = lin.Coef[0], lin.Coef[1]
		level := l.a + l.slope*best.meanX
		l.fixedShare, l.variableShare = l.a/level, l.slope*best.meanX/level
		l.interceptP = lin.P[0]
		l.reg, l.columns, l.ys, l.periods = lin, [][]float64{best.x}, best.y, best.periods
		return l
	}
	r := pair.full
	l.a, l.slope, l.slope2 = r.Coef[0], r.Coef[1], r.Coef[2]
	m1, m2 := meanOf(pair.x1), meanOf(pair.x2)
	level := l.a + l.slope*m1 + l.slope2*m2
	l.fixedShare, l.variableShare = l.a/level, (l.slope*m1+l.slope2*m2)/level
	l.interceptP = r.P[0]
	l.reg, l.columns, l.ys, l.periods = r, [][]float64{pair.x1, pair.x2}, pair.y, pair.periods
	b.Driver2, b.Unit2, b.Lag2 = pair.c.driver.Name, pair.c.driver.Unit, pair.c.lag
	b.R2, b.N = r.R2, r.N
	l.label += " and " + driverLabel(pair.c)
	l.evidence = fmt.Sprintf("R² %.2f with both, second driver partial F %s after correction, VIF %.1f, n %d", r.R2, pText(pair.partialP*float64(secondTried)), pair.vif, r.N)
	res.Fits = append(res.Fits, twoDriverRecord(b.Object, best, pair))
	l.fitIdx = len(res.Fits) - 1
	return l
}

// classifyLine applies the share rules to the line: variable (through the
// origin) when the fixed part is not significant or minor, fixed when the
// variable part is minor, else mixed; then diagnoses the chosen fit.
func classifyLine(res *Result, best *candidate, l lineFormula, y []float64, diag *costdrift.Diagnostics, note string, s Settings) {
	b := &res.Behaviour
	chosenIdx := l.fitIdx
	variableRule := l.interceptP >= s.Alpha || l.fixedShare < MinorShare
	prior, hasPrior := s.Prior[b.Object.String()]
	if hasPrior {
		variableRule = keepVariableOrMixed(prior.Class, variableRule, l.interceptP, l.fixedShare, s.Alpha)
	}
	class := costdrift.Mixed
	switch {
	case variableRule:
		class = costdrift.Variable
	case l.variableShare < minorShareFor(s.Prior, b.Object):
		class = costdrift.Fixed
	}
	kept := ""
	if hasPrior && samePrediction(prior, class, best, l) {
		kept = fmt.Sprintf("; kept %s as before: as %s it would predict the same costs (within %.0f %% of the mean cost)", prior.Class, class, 100*InterchangeShare)
		class = prior.Class
	}
	switch class {
	case costdrift.Variable:
		b.Class = costdrift.Variable
		b.VariableRate = l.slope
		b.VariableRate2 = l.slope2
		b.Prediction = termsOf(l.reg) // replaced by the proportional fit's below
		if l.pair != nil {
			if r, err := fit.OLS(l.columns, l.ys, false); err == nil {
				b.VariableRate, b.VariableRate2 = r.Coef[0], r.Coef[1]
				b.Prediction = termsOf(r)
			}
		} else if best.origin != nil {
			b.VariableRate = best.origin.Coef[0]
			b.Prediction = termsOf(best.origin)
			chosenIdx = best.linearIdx + 1
		}
		why := fmt.Sprintf("fixed part not significant (%s)", pText(l.interceptP))
		if l.interceptP < s.Alpha {
			why = fmt.Sprintf("fixed part is %.1f %% of cost at mean activity (below %.0f %%)", 100*l.fixedShare, 100*MinorShare)
		}
		b.Reason = fmt.Sprintf("cost moves with %s (%s); %s%s%s", l.label, l.evidence, why, kept, note)
	case costdrift.Fixed:
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
			l.label, l.evidence, 100*l.variableShare, 100*MinorShare, note)
		if l.variableShare >= minorShareFor(s.Prior, b.Object) {
			b.Reason = fmt.Sprintf("%s is significant (%s) and drives %.1f %% of cost at mean activity, but the fixed formula it had predicts the same costs; kept fixed%s",
				l.label, l.evidence, 100*l.variableShare, note)
		}
		return
	default:
		b.Class = costdrift.Mixed
		b.FixedPerPeriod, b.VariableRate, b.VariableRate2 = l.a, l.slope, l.slope2
		b.Prediction = termsOf(l.reg)
		part := "a significant fixed part"
		if kept != "" {
			part = "a fixed part" // kept mixed, its fixed part need not be significant
		}
		b.Reason = fmt.Sprintf("cost moves with %s (%s) above %s (%s), %.0f %% fixed at mean activity%s%s",
			l.label, l.evidence, part, pText(l.interceptP), 100*l.fixedShare, kept, note)
	}
	chosen := &res.Fits[chosenIdx]
	chosen.Chosen = true
	diagnose(chosen, l.reg, l.columns, l.ys, l.periods, diag)
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
