package analyze

import (
	"math"

	"github.com/costdrift/costdrift/internal/costdrift"
)

// Hysteresis: a cost close to a boundary (two drivers nearly as good, an
// intercept near significance, a step barely better than a line) would flip
// between analyses as each month's noise moves it. Given the object's
// behaviour before (Settings.Prior), the analysis keeps it unless the new
// evidence clears the boundary by a margin; a new object is classified on the
// plain rules.
const (
	// StickyPRESS: the prior driver stays first while its leave-one-out
	// error per period is within this share of the best one's.
	StickyPRESS = 0.25
	// StepKeepDeltaAICc: a step cost stays a step while its model is at
	// least as good as the line by AICc (a new step needs more).
	StepKeepDeltaAICc = 0.0
	// StepEnterDeltaAICc: a cost that was not a step becomes one only when
	// the step beats the line by this much.
	StepEnterDeltaAICc = StepMinDeltaAICc + 4
	// StickySignificance: a cost without a driver takes one only when its
	// corrected p-value is below alpha divided by this; a cost with a driver
	// keeps it while the corrected p-value is below alpha times this.
	StickySignificance = 10.0
	// InterchangeShare: two formulas whose fitted costs over the window
	// differ by less than this share of the mean cost (root mean square)
	// predict the same costs, and a change from one to the other is not a change an
	// accountant acts on: a cost formula matters through the costs it
	// predicts (common practice). It is the smallest shift of the cost a
	// shift alert reports, half of MinShift in README, Alerts.
	InterchangeShare = 0.05
)

// stickyRanking applies the hysteresis of significance: without a prior
// driver, only drivers significant at alpha/StickySignificance count; with
// one that is no longer significant at alpha, it is kept while its positive
// slope stays significant at alpha·StickySignificance and no other driver
// is, or the one that is predicts the same costs (interchangeable); with no
// driver significant it is kept too while its line predicts the same costs
// as the mean (flatLine), so that a small variable part that fades into the
// noise does not turn the cost fixed and back.
func stickyRanking(ranked, cands []*candidate, prior costdrift.Behaviour, alpha float64) []*candidate {
	if prior.Class == costdrift.InsufficientData {
		return ranked
	}
	if prior.Driver == "" {
		out := ranked[:0:0]
		for _, c := range ranked {
			if c.adjustedP < alpha/StickySignificance {
				out = append(out, c)
			}
		}
		return out
	}
	for _, c := range ranked {
		if c.driver.Name == prior.Driver && c.lag == prior.Lag {
			return ranked
		}
	}
	for _, c := range cands {
		if c.driver.Name != prior.Driver || c.lag != prior.Lag || !(c.linear.Coef[1] > 0) {
			continue
		}
		if len(ranked) == 0 && (c.adjustedP < alpha*StickySignificance || flatLine(c)) ||
			len(ranked) > 0 && c.adjustedP < alpha*StickySignificance && interchangeable(c, ranked[0]) {
			// Still significant at the wider level and predicting what the
			// best driver does: kept first.
			c.plausible = true
			for _, r := range ranked {
				r.rank++
			}
			c.rank = 1
			return append([]*candidate{c}, ranked...)
		}
	}
	return ranked
}

// preferPrior moves the prior driver and lag to the front of the ranking
// when it is still significant and nearly as good as the best, or predicts
// the same costs as the best (interchangeable): two correlated drivers
// trade places as noise moves their fits.
func preferPrior(ranked []*candidate, prior costdrift.Behaviour) []*candidate {
	if prior.Driver == "" || len(ranked) < 2 {
		return ranked
	}
	best := ranked[0].linear.PRESS / float64(ranked[0].linear.N)
	for i, c := range ranked {
		if i == 0 || c.driver.Name != prior.Driver || c.lag != prior.Lag {
			continue
		}
		if c.linear.PRESS/float64(c.linear.N) <= (1+StickyPRESS)*best || interchangeable(c, ranked[0]) {
			out := make([]*candidate, 0, len(ranked))
			out = append(out, c)
			out = append(out, ranked[:i]...)
			return append(out, ranked[i+1:]...)
		}
		break
	}
	return ranked
}

// minorShareFor is the variable share under which a cost with a driver is
// treated as fixed: half the threshold for a cost that was driven, one and a
// half times it for one that was fixed.
func minorShareFor(priors map[string]costdrift.Behaviour, o costdrift.CostObject) float64 {
	prior, ok := priors[o.String()]
	switch {
	case !ok:
		return MinorShare
	case prior.Class == costdrift.Fixed:
		return 1.5 * MinorShare
	case prior.Driver != "":
		return MinorShare / 2
	}
	return MinorShare
}

// keepVariableOrMixed widens the boundary between variable and mixed around
// the prior class: a mixed cost turns variable only when its intercept is
// clearly not significant (p >= 4·alpha) or its fixed share below half the
// threshold; a variable cost turns mixed only when its intercept is clearly
// significant (p < alpha/4) with a fixed share above one and a half times the
// threshold.
func keepVariableOrMixed(prior costdrift.Class, variable bool, interceptP, fixedShare, alpha float64) bool {
	switch prior {
	case costdrift.Mixed:
		return interceptP >= 4*alpha || fixedShare < MinorShare/2
	case costdrift.Variable:
		return !(interceptP < alpha/4 && fixedShare >= 1.5*MinorShare)
	}
	return variable
}

// interchangeable reports whether two candidates' lines fitted on the same
// periods predict the same costs: the root mean square of the difference
// of their fitted costs is below InterchangeShare of the mean cost.
func interchangeable(a, b *candidate) bool {
	if !samePeriods(a, b) {
		return false
	}
	var ss float64
	for i := range a.x {
		d := a.linear.Coef[0] + a.linear.Coef[1]*a.x[i] - b.linear.Coef[0] - b.linear.Coef[1]*b.x[i]
		ss += d * d
	}
	return math.Sqrt(ss/float64(len(a.x))) < InterchangeShare*math.Abs(meanOf(a.y))
}

// samePrediction reports whether the prior class, refitted on the best
// driver's periods, predicts the same costs as the class the line rules
// chose (InterchangeShare): a fixed cost's mean, a variable cost's
// proportional fit, a mixed cost's line. A cost whose small variable part
// comes and goes, or whose small fixed part does, would otherwise be
// reclassified back and forth with no change in the costs it is expected
// to have. Only one driver, the prior's, and only these three classes.
func samePrediction(prior costdrift.Behaviour, class costdrift.Class, best *candidate, l lineFormula) bool {
	if prior.Class == class || l.pair != nil {
		return false
	}
	if prior.Class != costdrift.Fixed && (prior.Driver != best.driver.Name || prior.Lag != best.lag) {
		return false
	}
	mean := meanOf(best.y)
	fitted := func(c costdrift.Class, x float64) (float64, bool) {
		switch c {
		case costdrift.Fixed:
			return mean, true
		case costdrift.Variable:
			if best.origin == nil {
				return 0, false
			}
			return best.origin.Coef[0] * x, true
		case costdrift.Mixed:
			return l.a + l.slope*x, true
		}
		return 0, false
	}
	var ss float64
	for _, x := range best.x {
		p, ok1 := fitted(prior.Class, x)
		q, ok2 := fitted(class, x)
		if !ok1 || !ok2 {
			return false
		}
		ss += (p - q) * (p - q)
	}
	return math.Sqrt(ss/float64(len(best.x))) < InterchangeShare*math.Abs(mean)
}

// flatLine reports whether a candidate's line predicts the same costs as
// their mean: its fitted costs differ from the mean by less than
// InterchangeShare of it, root mean square.
func flatLine(c *candidate) bool {
	mean := meanOf(c.y)
	var ss float64
	for _, x := range c.x {
		d := c.linear.Coef[1] * (x - c.meanX)
		ss += d * d
	}
	return math.Sqrt(ss/float64(len(c.x))) < InterchangeShare*math.Abs(mean)
}

// stepLikeLine reports whether a step model that would replace a prior
// variable or mixed cost on the same driver and lag predicts the same costs
// as the prior class's line refitted on its periods (InterchangeShare): the
// steps are then within the noise of the line, and the cost stays a line.
func stepLikeLine(prior costdrift.Behaviour, c *candidate, sf *stepFit) bool {
	if prior.Driver != c.driver.Name || prior.Lag != c.lag || len(sf.model.Residuals) != len(c.y) {
		return false
	}
	var a, b float64
	switch {
	case prior.Class == costdrift.Variable && c.origin != nil:
		b = c.origin.Coef[0]
	case prior.Class == costdrift.Mixed:
		a, b = c.linear.Coef[0], c.linear.Coef[1]
	default:
		return false
	}
	return stepsNearLine(c, sf, a, b)
}

// sameSteps reports whether two step models fitted on the same periods
// predict the same costs: the root mean square of the difference of their
// fitted costs (each period's level) is below InterchangeShare of the mean
// cost.
func sameSteps(a *candidate, as *stepFit, b *candidate, bs *stepFit) bool {
	if !samePeriods(a, b) || len(as.model.Residuals) != len(a.y) || len(bs.model.Residuals) != len(b.y) {
		return false
	}
	var ss float64
	for i := range a.y {
		d := (a.y[i] - as.model.Residuals[i]) - (b.y[i] - bs.model.Residuals[i])
		ss += d * d
	}
	return math.Sqrt(ss/float64(len(a.y))) < InterchangeShare*math.Abs(meanOf(a.y))
}

// samePeriods reports whether two candidates are fitted on the same
// periods, so that their fitted costs can be compared period by period.
func samePeriods(a, b *candidate) bool {
	if len(a.index) != len(b.index) || len(a.y) == 0 {
		return false
	}
	for i := range a.index {
		if a.index[i] != b.index[i] {
			return false
		}
	}
	return true
}

// lineLikeSteps reports whether a candidate's line predicts the same costs
// as its step model (InterchangeShare): the steps' levels are then within
// the noise of the line, and a step cost stays a step.
func lineLikeSteps(c *candidate, sf *stepFit) bool {
	if len(sf.model.Residuals) != len(c.y) || len(c.y) == 0 {
		return false
	}
	return stepsNearLine(c, sf, c.linear.Coef[0], c.linear.Coef[1])
}

// stepsNearLine reports whether a step model's fitted costs (its levels)
// are within InterchangeShare of the mean cost of the line a + b·x, root
// mean square over the candidate's periods.
func stepsNearLine(c *candidate, sf *stepFit, a, b float64) bool {
	var ss float64
	for i, x := range c.x {
		d := c.y[i] - sf.model.Residuals[i] - a - b*x
		ss += d * d
	}
	return math.Sqrt(ss/float64(len(c.x))) < InterchangeShare*math.Abs(meanOf(c.y))
}
