package analyze

import (
	"fmt"
	"hash/fnv"
	"math"
	"strings"

	"gonum.org/v1/gonum/stat/distuv"

	"github.com/costdrift/costdrift/internal/costdrift"
	"github.com/costdrift/costdrift/internal/drift"
	"github.com/costdrift/costdrift/internal/fit"
	"github.com/costdrift/costdrift/internal/present"
)

// HansenMargin: a sup-F whose Hansen p-value is below the level divided by
// this, or above the level times it, is decided without the bootstrap. In
// 24–36 periods Hansen's p-values run about 1.5 times too small near 5 %
// (measured in internal/drift), far less than this margin.
const HansenMargin = 5.0

// BreakScreenLevel: a sup-F below Andrews' critical value at this level
// cannot reach BreakAlpha, so its bootstrap p-value is not computed. Andrews'
// asymptotic values are reached early or late in small samples, never by an
// order of magnitude, so a 10 % screen for a 1 % test loses nothing in
// practice while sparing most objects the bootstrap.
const BreakScreenLevel = 0.10

// withBreak tests the behaviour's own model for a break at an unknown period
// (sup-F with 15 % trimming, residual-bootstrap p-value; drift.SupFLine) and,
// with a break significant at s.BreakAlpha, fits the behaviour again on the
// periods from the break on. When fewer than s.MinPeriods follow the break,
// the new behaviour is provisional: it keeps the class and driver it had
// before and is refitted on the periods since (README, Drift). A refitted
// rate that is not positive is implausible for a cost, as in classify: it
// is reported in the reason and never used (provisionalRate).
func withBreak(p *costdrift.Panel, obj *costdrift.ObjectSeries, res Result, s Settings) Result {
	b := res.Behaviour
	if !testable(res) {
		return res
	}
	split, stat, pValue, test, ok := findBreak(res, s, obj.Object)
	if !ok {
		return res
	}
	at := res.index[split] // window position of the first period after the break
	brk := &costdrift.Break{
		Period: p.Periods[at], LastBefore: p.Periods[res.index[split-1]], WindowFrom: p.Periods[res.index[0]], Test: test,
		Statistic: stat, P: pValue, Replicates: s.Replicates, Driver: b.Driver, Lag: b.Lag,
		Periods: len(res.y) - split,
	}
	sides := func(proportional bool) {
		if res.stepResiduals != nil {
			// A step cost's break is a shift of all its levels: the fixed
			// part before and after is its first level moved by the mean
			// residual on each side.
			e := res.stepResiduals
			brk.FixedBefore = b.FixedPerPeriod + meanOf(e[:split])
			brk.FixedAfter = b.FixedPerPeriod + meanOf(e[split:])
			brk.PredictionBefore = constantTerms(res.y[:split])
			return
		}
		brk.FixedBefore, brk.RateBefore, brk.PredictionBefore = sideFormula(res.x, res.y, 0, split, proportional)
		brk.FixedAfter, brk.RateAfter, _ = sideFormula(res.x, res.y, split, len(res.y), proportional)
	}
	brk.LevelBefore = meanOf(res.y[:split])
	if res.x != nil {
		brk.ActivityBefore = meanOf(res.x[:split])
	}

	after := subPanel(p, obj, at)
	next := objectOn(after, &after.Objects[0], s)
	if next.Behaviour.Class != costdrift.InsufficientData {
		// Both sides in the new behaviour's form: a variable cost's rates
		// through the origin, the rest as fixed plus rate.
		sides(next.Behaviour.Class == costdrift.Variable && next.Behaviour.Driver == b.Driver)
		next.Behaviour.Break = brk
		next.Behaviour.Reason = fmt.Sprintf("since %s (break: %s): %s", brk.Period, breakText(brk, s), next.Behaviour.Reason)
		return next
	}
	// Too few periods since the break to choose a driver: keep the one from
	// before and refit on what there is.
	brk.Provisional = true
	sides(b.Class == costdrift.Variable)
	prov := res
	pb := &prov.Behaviour
	pb.Spending = nil // the formula of the whole window predicts nothing after a break
	pb.Break = brk
	pb.Since = brk.Period
	pb.N = brk.Periods
	post := res.y[split:]
	pb.Prediction = nil
	implausible := ""
	switch pb.Class {
	case costdrift.Variable:
		pb.Driver2, pb.Unit2, pb.VariableRate2 = "", "", 0 // refitted on its first driver alone
		if r, err := fit.ThroughOrigin(res.x[split:], post); err == nil {
			pb.VariableRate = r.Coef[0]
			pb.Prediction = termsOf(r)
		}
		if !(pb.VariableRate > 0) {
			implausible = fmt.Sprintf("; the rate refitted on them, %s, is implausible for a cost, so the formula from before the break is kept",
				rateOf(pb.VariableRate, pb.Unit, pb.Driver))
			pb.VariableRate, pb.Prediction = brk.RateBefore, brk.PredictionBefore
		}
		brk.FixedAfter, brk.RateAfter = 0, pb.VariableRate
	case costdrift.Mixed:
		pb.Driver2, pb.Unit2, pb.VariableRate2 = "", "", 0
		pb.FixedPerPeriod, pb.VariableRate, pb.Prediction = sideFormula(res.x, res.y, split, len(res.y), false)
		if !(pb.VariableRate > 0) {
			implausible = provisionalRate(pb, brk, res.x[split:], post)
		} else if implausible = keepRate(pb, brk, res.x[split:], post); implausible == "" {
			implausible = negativeFixedPart(pb, brk, res.x[split:], post, s.Alpha)
		}
		brk.FixedAfter, brk.RateAfter = pb.FixedPerPeriod, pb.VariableRate
	default:
		pb.MeanCost = meanOf(post)
		pb.FixedPerPeriod = pb.MeanCost
		pb.Prediction = constantTerms(post)
	}
	pb.Reason = fmt.Sprintf("provisional since %s (break: %s): only %d periods since the break, fewer than %d, so the driver and class from before are kept and refitted on them%s",
		brk.Period, breakText(brk, s), brk.Periods, s.MinPeriods, implausible)
	return prov
}

// provisionalRate replaces the provisional formula of a mixed cost whose
// rate refitted on the few periods since a break is not positive. A cost
// that falls as its driver rises is implausible, and a rate from so few
// periods is mostly noise (a period without postings at high activity is
// enough to turn it), so the rate is reported and not used, as the main
// analysis never uses a negative slope:
//
//   - the rate from before the break, b₀ (fitted on the longer history),
//     is kept and only the fixed part is refitted on the n periods since:
//     a = ȳ − b₀·x̄ over them;
//   - where b₀ is not positive either, or that fixed part is negative (the
//     cost since is below what the old rate alone gives), the formula is
//     the mean cost since the break, a constant level, until enough periods
//     follow the break to fit a new rate.
//
// Either formula is cost = a + b·x with the rate b taken from elsewhere (b₀,
// or 0), so its prediction terms are those of a line whose centred level ȳ
// and rate are independent: se² = s²·(1 + 1/n) + (x − x̄)²·var(b), with
// s² = Σ(yᵢ − ȳ − b·(xᵢ − x̄))² / (n − 1) over the periods since and var(b)
// from the fit before the break (0 for the mean). It returns the reason's
// clause.
func provisionalRate(pb *costdrift.Behaviour, brk *costdrift.Break, x, y []float64) string {
	refitted := rateOf(pb.VariableRate, pb.Unit, pb.Driver)
	rate, rateVariance := brk.RateBefore, 0.0 // without the terms before, the interval is conditional on the rate
	if t := brk.PredictionBefore; t != nil && t.Intercept && len(t.Cov) == 4 {
		rateVariance = t.S * t.S * t.Cov[3]
	}
	fixed := meanOf(y) - rate*meanOf(x)
	if rate > 0 && fixed >= 0 {
		pb.FixedPerPeriod, pb.VariableRate, pb.Prediction = fixed, rate, keptRateTerms(x, y, rate, rateVariance)
		return fmt.Sprintf("; the rate refitted on them, %s, is implausible for a cost, so the rate from before the break, %s, is kept and only the fixed part is refitted on them",
			refitted, rateOf(rate, pb.Unit, pb.Driver))
	}
	why := "the rate from before the break is not positive either"
	if rate > 0 {
		why = fmt.Sprintf("the rate from before the break, %s, would leave a negative fixed part", rateOf(rate, pb.Unit, pb.Driver))
	}
	pb.FixedPerPeriod, pb.VariableRate, pb.Prediction = meanOf(y), 0, keptRateTerms(x, y, 0, 0)
	return fmt.Sprintf("; the rate refitted on them, %s, is implausible for a cost and %s, so the cost is taken at its mean since the break, %s, until a rate can be fitted",
		refitted, why, present.Amount(pb.FixedPerPeriod))
}

// negativeFixedPart replaces the provisional formula of a mixed cost whose
// refitted rate is positive but whose fixed part is below zero beyond its
// uncertainty (negative, and its two-sided p-value below alpha), where the
// rate from before the break cannot be kept (keepRate): a cost that is
// less than nothing at zero activity is implausible, and a line through so
// few periods extrapolates their noise to zero activity. The formula is the
// mean cost since the break, as in provisionalRate, until enough periods
// follow the break to estimate a formula. It returns the reason's clause,
// "" when the fixed part is plausible.
func negativeFixedPart(pb *costdrift.Behaviour, brk *costdrift.Break, x, y []float64, alpha float64) string {
	r, err := fit.Line(x, y)
	if err != nil || !(r.Coef[0] < 0) || !(r.P[0] < alpha) {
		return ""
	}
	refitted := fmt.Sprintf("%s + %s", present.Amount(r.Coef[0]), rateOf(r.Coef[1], pb.Unit, pb.Driver))
	why := "the rate from before the break is not positive"
	if brk.RateBefore > 0 {
		why = fmt.Sprintf("the rate from before the break, %s, would leave a negative fixed part too", rateOf(brk.RateBefore, pb.Unit, pb.Driver))
	}
	pb.FixedPerPeriod, pb.VariableRate, pb.Prediction = meanOf(y), 0, keptRateTerms(x, y, 0, 0)
	return fmt.Sprintf("; the formula refitted on them, %s, has a fixed part below zero beyond its uncertainty (p %s), implausible for a cost, and %s: "+
		"too few periods since the change to estimate a formula, so the cost is taken at its mean since the break, %s",
		refitted, present.PValue(r.P[0], present.AnalyticResolution), why, present.Amount(pb.FixedPerPeriod))
}

// keepRate replaces the provisional formula of a mixed cost whose rate
// refitted on the few periods since a break is positive by the rate from
// before the break, b₀, with only the fixed part refitted on them,
// a = ȳ − b₀·x̄ (terms as in provisionalRate). A line through fewer than
// min_periods points mostly fits their noise: its intercept, an
// extrapolation to zero activity, can move by more than the cost itself
// while the cost at the activity of those periods barely moved, and the
// shift the break is judged on would be that noise. The break tests of a
// mixed cost look for a shift of its level, so the formula since the break
// is the old rate on a new level until enough periods follow the break to
// fit a new rate. Where b₀ is not positive or would leave a negative fixed
// part, the refit is kept. It returns the reason's clause.
func keepRate(pb *costdrift.Behaviour, brk *costdrift.Break, x, y []float64) string {
	rate := brk.RateBefore
	fixed := meanOf(y) - rate*meanOf(x)
	if !(rate > 0) || fixed < 0 {
		return ""
	}
	rateVariance := 0.0
	if t := brk.PredictionBefore; t != nil && t.Intercept && len(t.Cov) == 4 {
		rateVariance = t.S * t.S * t.Cov[3]
	}
	refitted := rateOf(pb.VariableRate, pb.Unit, pb.Driver)
	pb.FixedPerPeriod, pb.VariableRate, pb.Prediction = fixed, rate, keptRateTerms(x, y, rate, rateVariance)
	return fmt.Sprintf("; a rate refitted on so few periods (%s) would mostly be their noise, so the rate from before the break, %s, is kept and only the fixed part is refitted on them",
		refitted, rateOf(rate, pb.Unit, pb.Driver))
}

// keptRateTerms are the prediction terms of cost = ȳ + rate·(x − x̄) on the
// periods x, y with the rate given and its variance (see provisionalRate);
// nil without a residual degree of freedom.
func keptRateTerms(x, y []float64, rate, rateVariance float64) *costdrift.PredictionTerms {
	n := len(y)
	if n < 2 {
		return nil
	}
	mx, my := meanOf(x), meanOf(y)
	var rss float64
	for i := range y {
		e := y[i] - my - rate*(x[i]-mx)
		rss += e * e
	}
	s := math.Sqrt(rss / float64(n-1))
	rateCov := 0.0 // a rate of zero variance, or no residual spread to scale by
	if s > 0 {
		rateCov = rateVariance / (s * s)
	}
	return &costdrift.PredictionTerms{Intercept: true, Centre: []float64{mx}, Coef: []float64{my, rate},
		Cov: []float64{1 / float64(n), 0, 0, rateCov}, S: s, N: n, DF: n - 1}
}

// rateOf writes a rate per unit of a driver for a reason.
func rateOf(rate float64, unit, driver string) string {
	if unit == "" {
		unit = "unit of " + strings.ReplaceAll(driver, "_", " ")
	}
	return present.RatePer(rate, unit)
}

// EndPeriods are the numbers of newest periods the end-of-window test
// checks for a change an alert can warn of. The sup-F search leaves 15 % of
// the window out at each end, so a change in the last few periods is
// invisible to it; a test of the newest periods against the formula fitted
// on the others sees it. Each is at the level Bonferroni-corrected over
// the four. A change is not dated later than the third newest period, the
// fewest an alert's warning rests on (alerts.ConfirmPeriods): dated in the
// newest two whenever they fit a little better, a change seen in three
// periods would only be watched, and warned of a month later.
var EndPeriods = []int{3, 4, 5, 6}

// WatchPeriods is the number of newest periods tested apart, at the level of
// each of EndPeriods' tests, when no break is found otherwise: a shift in
// them alone is a watch (info) until a third period confirms it. One newest
// period alone is left to the spending check: it cannot tell a change from
// a one-off.
const WatchPeriods = 2

// findBreak looks for a break in the behaviour's own model: first the sup-F
// (Quandt–Andrews) search over the trimmed window, with a residual-bootstrap
// p-value, then Chow's predictive test on the newest periods, Bonferroni-
// corrected over EndPeriods. It returns the first observation after the
// break, the statistic, its p-value and the test's name.
func findBreak(res Result, s Settings, o costdrift.CostObject) (split int, stat, p float64, test string, ok bool) {
	if res.Behaviour.Class == costdrift.Variable && res.Behaviour.Driver2 == "" && positive(res.x) {
		// A variable cost's noise grows with its activity, which the tests'
		// equal-variance errors do not allow for; its cost per unit of
		// driver has steady noise, and a change in rate is a change in its
		// level.
		perUnit := make([]float64, len(res.y))
		for i := range perUnit {
			perUnit[i] = res.y[i] / res.x[i]
		}
		res.x, res.y = nil, perUnit
	}
	if res.stepResiduals != nil {
		// A step cost is flat within its levels, so a line through it
		// leaves residuals that follow the driver, and the driver's own
		// swings would read as breaks; its step model's residuals have
		// none, and a shift of its levels is a shift of their mean.
		res.x, res.y = nil, res.stepResiduals
	}
	end := s
	if res.Behaviour.Class == costdrift.Mixed && res.x != nil {
		// Two searches over the window, each at half the level (Bonferroni):
		// the shift of the fixed part, then a change of both coefficients,
		// which a period far off the formula (a month without postings)
		// can hide from the first.
		s.BreakAlpha /= 2
		if split, stat, p, test, ok := levelBreak(res, s, o); ok {
			return split, stat, p, test, true
		}
	}
	k := 1
	var columns [][]float64
	if res.x != nil {
		k = 2
		columns = [][]float64{res.x}
	}
	if fs, err := drift.SupFLine(res.x, res.y, drift.DefaultTrim); err == nil {
		critical, err := drift.AndrewsCritical(k, drift.DefaultTrim, BreakScreenLevel)
		if err == nil && fs.SupF >= critical {
			// Far from the level, Hansen's approximation decides as the
			// bootstrap would; near it, only the bootstrap holds in small
			// samples, so it is run there (HansenMargin).
			hansen, herr := drift.HansenPValue(fs.SupF, k, fs.Lambda)
			switch {
			case herr == nil && hansen < s.BreakAlpha/HansenMargin:
				return redate(res.x, res.y, fs.Break, res.x == nil), fs.SupF, hansen, "sup-F (Quandt–Andrews, 15 % trimming), Hansen's approximation (far below the level)", true
			case herr == nil && hansen > s.BreakAlpha*HansenMargin:
			default:
				p, _, err := drift.SupFSignificant(columns, res.y, true, drift.DefaultTrim, s.Replicates, seedFor(s.Seed, o), s.BreakAlpha)
				if err == nil && p < s.BreakAlpha {
					return redate(res.x, res.y, fs.Break, res.x == nil), fs.SupF, p, "sup-F (Quandt–Andrews, 15 % trimming), residual bootstrap", true
				}
			}
		}
	}
	return endBreak(res, end)
}

// levelBreak is the break test of a mixed cost: a shift of its fixed part
// with its rate held common (drift.SupFLevel), weighted by the inverse of
// the fitted cost. Fitting each side's line freely spends a degree of
// freedom on the rate, and an intercept fitted on a few periods is far
// less certain than the cost at the activity of those periods, so that
// test flags noise; and noise that grows with the cost (a share of each
// month's cost, as bills scale) would otherwise count as a break where the
// activity is high. The weights make the errors' spread even whether the
// noise is a share of the cost or a fixed amount, at little loss when it is
// the latter (Carroll and Ruppert 1988, Transformation and Weighting in
// Regression, ch. 2, from memory). A change in rate shows too, as a shift
// of the cost at the activity of the periods after it.
func levelBreak(res Result, s Settings, o costdrift.CostObject) (split int, stat, p float64, test string, ok bool) {
	line, err := fit.LineSummary(res.x, res.y)
	if err != nil {
		return 0, 0, 1, "", false
	}
	weights := make([]float64, len(res.y))
	for i, v := range res.x {
		fitted := line.Coef[0] + line.Coef[1]*v
		if !(fitted > 0) {
			weights = nil // a formula that reaches zero cannot scale the noise
			break
		}
		weights[i] = 1 / fitted
	}
	ls, err := drift.SupFLevel([][]float64{res.x}, res.y, weights, drift.DefaultTrim)
	if err != nil {
		return 0, 0, 1, "", false
	}
	critical, err := drift.AndrewsCritical(1, drift.DefaultTrim, BreakScreenLevel)
	if err != nil || ls.SupF < critical {
		return 0, 0, 1, "", false
	}
	name := "level-shift sup-F (Andrews, fixed part only, weighted by 1/fitted cost, 15 % trimming)"
	hansen, herr := drift.HansenPValue(ls.SupF, 1, ls.Lambda)
	switch {
	case herr == nil && hansen < s.BreakAlpha/HansenMargin:
		return redate(res.x, res.y, ls.Break, true), ls.SupF, hansen, name + ", Hansen's approximation (far below the level)", true
	case herr == nil && hansen > s.BreakAlpha*HansenMargin:
		return 0, 0, 1, "", false
	}
	p = drift.SupFLevelSignificant(ls, s.Replicates, seedFor(s.Seed, o), s.BreakAlpha)
	if p < s.BreakAlpha {
		return redate(res.x, res.y, ls.Break, true), ls.SupF, p, name + ", residual bootstrap", true
	}
	return 0, 0, 1, "", false
}

// endBreak is Chow's predictive test on the newest periods (EndPeriods),
// Bonferroni-corrected over them: of the significant splits, the one the
// data fit best dates the change. Where none is significant, the newest
// WatchPeriods are tested at the same level.
func endBreak(res Result, s Settings) (split int, stat, p float64, test string, ok bool) {
	n := len(res.y)
	bestRSS := math.Inf(1)
	for _, m := range EndPeriods {
		f, pm, rss, significant := endTest(res, s, n-m)
		// Of the significant splits, the one the data fit best when the
		// newest periods may sit at a level of their own dates the change.
		if significant && rss < bestRSS {
			bestRSS, split, stat, p, ok = rss, n-m, f, pm, true
		}
	}
	if !ok {
		var significant bool
		stat, p, _, significant = endTest(res, s, n-WatchPeriods)
		split, ok = n-WatchPeriods, significant
	}
	if !ok {
		return 0, 0, 1, "", false
	}
	return split, stat, p, "shift of the newest periods (level-dummy t test), Bonferroni-corrected", true
}

// endTest is one split's predictive test: its statistic, its p-value
// Bonferroni-corrected over EndPeriods, the split's residual sum of squares
// and whether the shift is significant at the break level.
func endTest(res Result, s Settings, n1 int) (stat, p, rss float64, significant bool) {
	if n1 < s.MinPeriods {
		return 0, 1, math.NaN(), false
	}
	f, pm, rss, err := predictiveChow(res.x, res.y, n1)
	if err != nil || math.IsNaN(rss) {
		return 0, 1, math.NaN(), false
	}
	pm = math.Min(1, pm*float64(len(EndPeriods)))
	return f, pm, rss, pm < s.BreakAlpha
}

// testable reports whether the break test runs on a result: it has a class
// and enough periods for a level on each side of a break.
func testable(res Result) bool {
	return res.Behaviour.Class != costdrift.InsufficientData && res.Behaviour.Class != "" && len(res.y) >= 2*StepMinPerLevel+2
}

// redate moves a sup-F break to where a shift of the level fits best among
// its split and the newer periods. The trimming keeps the search 15 % of the
// window from the end so that the statistic has a known distribution; a
// change nearer the end than that still drives the sup-F over its critical
// value, but at a split it may search, which dates the change too early and
// averages the new level with periods of the old one: at the last split, or
// for a test of the level alone (level) at any split, as when a one-off
// month before the change pulls the peak to itself. The significance is the
// sup-F's; only the date is the least-squares estimate of a level shift
// (Bai 1994, "Least squares estimation of a shift in linear processes",
// J. Time Series Analysis 15(5)): the split s from the sup-F's on to the
// second newest period that minimises the residual sum of squares of
// cost = formula + δ·[t >= s], and no later than the third newest, as the
// end-of-window test dates (EndPeriods). A sup-F of the formula's every coefficient
// keeps its own split inside the trimmed range: its change may be one of
// the rate, which a level shift does not date.
func redate(x, y []float64, split int, level bool) int {
	n := len(y)
	last := n - int(math.Floor(drift.DefaultTrim*float64(n)))
	if split < last && !level {
		return split
	}
	best, bestRSS := split, math.Inf(1)
	for at := split; at <= n-WatchPeriods; at++ {
		shift := make([]float64, n)
		for i := at; i < n; i++ {
			shift[i] = 1
		}
		columns := [][]float64{shift}
		if x != nil {
			columns = [][]float64{x, shift}
		}
		r, err := fit.OLS(columns, y, true)
		if err != nil {
			continue
		}
		if r.RSS < bestRSS {
			best, bestRSS = at, r.RSS
		}
	}
	return min(best, n-EndPeriods[0])
}

// positive reports whether every activity value is above zero.
func positive(x []float64) bool {
	if x == nil {
		return false
	}
	for _, v := range x {
		if v <= 0 {
			return false
		}
	}
	return true
}

// predictiveChow tests the newest m = n − n1 periods against the formula
// fitted on the first n1: their errors e_j are shifted together by a change
// in behaviour. It is the t test of a level dummy for the newest periods
// (Chow's predictive test narrowed to one direction, a shift):
//
//	δ = mean(e_j),   var(δ) = s²·(1/m + 1/n1 + (x̄_new − x̄_old)²/Sxx_old),
//	s² = (RSS1 + Σ(e_j − δ)²) / (n − k − 1),   t = δ / √var(δ)  ~  t(n − k − 1)
//
// with k coefficients (1 for a fixed cost, 2 with a driver), RSS1 and Sxx_old
// from the first n1 periods. Splits whose errors do not all share a sign
// are not a change in behaviour and are passed over. splitRSS is the
// numerator of s², used to date the change among the splits.
func predictiveChow(x, y []float64, n1 int) (t, p, splitRSS float64, err error) {
	k := 1
	var first *fit.Regression
	if x != nil {
		k = 2
		first, err = fit.LineSummary(x[:n1], y[:n1])
	} else {
		first, err = fit.Constant(y[:n1])
	}
	if err != nil {
		return 0, 1, math.NaN(), err
	}
	m := len(y) - n1
	errs := make([]float64, m)
	sign, delta := 0.0, 0.0
	for j := range errs {
		pred := first.Coef[0]
		if x != nil {
			pred += first.Coef[1] * x[n1+j]
		}
		errs[j] = y[n1+j] - pred
		delta += errs[j] / float64(m)
		if j == 0 {
			sign = math.Copysign(1, errs[j])
		} else if math.Copysign(1, errs[j]) != sign {
			return 0, 1, math.NaN(), nil
		}
	}
	splitRSS = first.RSS
	for _, e := range errs {
		splitRSS += (e - delta) * (e - delta)
	}
	df := float64(len(y) - k - 1)
	leverage := 1/float64(m) + 1/float64(n1)
	if x != nil {
		var oldMean, newMean, sxx float64
		for _, v := range x[:n1] {
			oldMean += v / float64(n1)
		}
		for _, v := range x[n1:] {
			newMean += v / float64(m)
		}
		for _, v := range x[:n1] {
			sxx += (v - oldMean) * (v - oldMean)
		}
		leverage += (newMean - oldMean) * (newMean - oldMean) / sxx
	}
	s2 := splitRSS / df
	if s2 <= 0 {
		if delta != 0 {
			return math.Inf(1), 0, splitRSS, nil
		}
		return 0, 1, splitRSS, nil
	}
	t = delta / math.Sqrt(s2*leverage)
	return t, 2 * distuv.StudentsT{Mu: 0, Sigma: 1, Nu: df}.Survival(math.Abs(t)), splitRSS, nil
}

// breakText writes a break's test and p-value for a reason.
func breakText(b *costdrift.Break, s Settings) string {
	name := "sup-F"
	if strings.HasPrefix(b.Test, "shift") {
		name = fmt.Sprintf("newest %d periods shifted, t", b.Periods)
	}
	resolution := present.AnalyticResolution
	if strings.Contains(b.Test, "bootstrap") {
		resolution = present.BootstrapResolution(s.Replicates)
	}
	return fmt.Sprintf("%s %s, p %s", name, present.Statistic(b.Statistic), present.PValue(b.P, resolution))
}

// sideFormula fits one side of a break: a line on the driver (through the
// origin for a variable cost), or the mean.
func sideFormula(x, y []float64, lo, hi int, proportional bool) (fixed, rate float64, terms *costdrift.PredictionTerms) {
	if x != nil && proportional {
		if r, err := fit.ThroughOrigin(x[lo:hi], y[lo:hi]); err == nil {
			return 0, r.Coef[0], termsOf(r)
		}
	}
	if x != nil {
		if r, err := fit.Line(x[lo:hi], y[lo:hi]); err == nil {
			return r.Coef[0], r.Coef[1], termsOf(r)
		}
	}
	return meanOf(y[lo:hi]), 0, constantTerms(y[lo:hi])
}

// subPanel is the panel from window position at on, for one object; driver
// values keep their lead-in periods before it.
func subPanel(p *costdrift.Panel, obj *costdrift.ObjectSeries, at int) *costdrift.Panel {
	sub := &costdrift.Panel{Periods: p.Periods[at:], MaxLag: p.MaxLag,
		Objects: []costdrift.ObjectSeries{{Object: obj.Object, Cost: obj.Cost[at:]}}}
	sub.Drivers = make([]costdrift.DriverSeries, len(p.Drivers))
	for i, d := range p.Drivers {
		d.Values = d.Values[at:]
		sub.Drivers[i] = d
	}
	return sub
}

// seedFor gives each object its own bootstrap seed, fixed by the settings'
// seed and the object's name.
func seedFor(seed uint64, o costdrift.CostObject) uint64 {
	h := fnv.New64a()
	h.Write([]byte(o.String()))
	return seed ^ h.Sum64()
}
