package analyze

import (
	"math"

	"gonum.org/v1/gonum/stat/distuv"

	"github.com/costdrift/costdrift/internal/costdrift"
	"github.com/costdrift/costdrift/internal/fit"
)

// Step model settings (README, The method): 2 to 4 levels, each at least 3 periods.
// A step model must beat the straight line on the same data by at least
// StepMinDeltaAICc. The brief's default is 4, a difference conventionally
// read as "considerably less support" for the worse model (Burnham &
// Anderson 2002, from memory); 8 is used because a step's breakpoints are
// chosen from the data, which its two parameters per level understate: at 4,
// 2.5 % of mixed costs in the ground-truth study were called step and 2.4 %
// of stable costs were reclassified over twelve analyses; at 8, 0.4 % and
// 1.6 %, with step costs still found in 99.6 % of cases.
const (
	StepMaxLevels    = 4
	StepMinPerLevel  = 3
	StepMinDeltaAICc = 8.0
	// StepCandidates is how many of the best-ranked drivers get a step
	// fit: a step cost whose levels rise with its driver always correlates
	// with it, so it is among the significant drivers.
	StepCandidates = 3
	// MaxVIF is the largest variance inflation a second driver may bring.
	MaxVIF = 5.0
	// MinPRESSGain is how much a second driver must cut the leave-one-out
	// error: a formula with two drivers is harder to budget with and to
	// explain, so it must earn its place, not merely pass a test.
	MinPRESSGain = 0.10
	// SecondDriverStrictness divides alpha for the second driver's test: at
	// alpha 0.05 a cost with one driver gets a spurious second one in about
	// 3 % of cases (measured on invented data); at alpha/5, well under 1 %.
	SecondDriverStrictness = 5.0
)

// stepFit is the best step model of a candidate.
type stepFit struct {
	model  fit.StepModel
	r2     float64
	press  float64
	rising bool
	// withinP is the p-value of a common slope inside the levels: a
	// step-fixed cost is flat within each level, while a linear cost cut
	// into levels keeps rising inside them.
	withinP     float64
	withinSlope float64
}

// fitStep fits the step model on a candidate's data.
func fitStep(c *candidate) *stepFit {
	sf, err := fit.Step(c.x, c.y, StepMaxLevels, StepMinPerLevel)
	if err != nil {
		return nil
	}
	// The lowest-AICc model whose levels rise with the driver: a split of
	// one flat level into two nearly equal ones can win on AICc by noise
	// while not rising, and must not hide the rising model below it.
	best := -1
	for i, m := range sf.Models {
		if rising(m) && (best < 0 || m.AICc < sf.Models[best].AICc) {
			best = i
		}
	}
	if best < 0 {
		best = sf.Best
	}
	m := sf.Models[best]
	tss := 0.0
	mean := meanOf(c.y)
	for _, v := range c.y {
		tss += (v - mean) * (v - mean)
	}
	out := &stepFit{model: m, rising: rising(m)}
	if tss > 0 {
		out.r2 = 1 - m.RSS/tss
	}
	// Leave-one-out error with the partition held fixed: leaving out one
	// of n_g periods moves its level's mean, so the error of that period is
	// e_i · n_g / (n_g − 1).
	level := func(x float64) int {
		for g := len(m.Levels) - 1; g >= 0; g-- {
			if x >= m.Levels[g].From {
				return g
			}
		}
		return 0
	}
	for i, e := range m.Residuals {
		n := float64(m.Levels[level(c.x[i])].N)
		loo := e * n / (n - 1)
		out.press += loo * loo
	}
	out.withinSlope, out.withinP = withinSlope(c.x, c.y, m, level)
	return out
}

// withinSlope fits one common slope inside the levels (an analysis of
// covariance with a level per group: y = μ_g + b·x + e) and returns b and
// its two-sided p-value, with N − k − 1 degrees of freedom.
func withinSlope(x, y []float64, m fit.StepModel, level func(float64) int) (float64, float64) {
	k := len(m.Levels)
	sumX, sumY, count := make([]float64, k), make([]float64, k), make([]float64, k)
	for i := range x {
		g := level(x[i])
		sumX[g] += x[i]
		sumY[g] += y[i]
		count[g]++
	}
	var sxx, sxy float64
	for i := range x {
		g := level(x[i])
		dx, dy := x[i]-sumX[g]/count[g], y[i]-sumY[g]/count[g]
		sxx += dx * dx
		sxy += dx * dy
	}
	df := float64(len(x) - k - 1)
	if sxx == 0 || df < 1 {
		return 0, 1
	}
	b := sxy / sxx
	rss := 0.0
	for i := range x {
		g := level(x[i])
		e := (y[i] - sumY[g]/count[g]) - b*(x[i]-sumX[g]/count[g])
		rss += e * e
	}
	se := math.Sqrt(rss / df / sxx)
	if se == 0 {
		if b == 0 {
			return 0, 1
		}
		return b, 0
	}
	t := math.Abs(b / se)
	return b, 2 * distuv.StudentsT{Mu: 0, Sigma: 1, Nu: df}.Survival(t)
}

// rising reports whether each level is above the one before.
func rising(m fit.StepModel) bool {
	for i := 1; i < len(m.Levels); i++ {
		if m.Levels[i].Mean <= m.Levels[i-1].Mean {
			return false
		}
	}
	return true
}

// stepRecord turns a step fit into a stored fit.
func stepRecord(o costdrift.CostObject, c *candidate, s *stepFit) costdrift.Fit {
	f := costdrift.Fit{
		Object: o, Driver: c.driver.Name, Lag: c.lag, Model: costdrift.ModelStep, N: len(c.x),
		R2: s.r2, PRESS: s.press, AICc: s.model.AICc, RangeMin: c.rangeMin, RangeMax: c.rangeMax,
		Intercept: math.NaN(), InterceptSE: math.NaN(), InterceptP: math.NaN(), Slope: math.NaN(), SlopeSE: math.NaN(),
		SlopeT: math.NaN(), SlopeP: math.NaN(), SlopeAdjustedP: math.NaN(), ResidualSE: math.NaN(),
	}
	for _, l := range s.model.Levels {
		f.Levels = append(f.Levels, costdrift.StepLevel{From: l.From, To: l.To, Level: l.Mean, N: l.N})
	}
	return f
}

// second is a candidate second driver, fitted together with the best one on
// the periods both cover.
type second struct {
	c        *candidate
	full     *fit.Regression // cost = a + b·x + b2·x2
	reduced  *fit.Regression // cost = a + b·x on the same periods
	x1, x2   []float64
	y        []float64
	periods  []string
	partialP float64
	vif      float64
}

// pairWith aligns a second candidate with the first on their common
// periods; both list their observations in window order.
func pairWith(first, c2 *candidate) second {
	s := second{c: c2}
	if len(first.index) == len(c2.index) && first.index[0] == c2.index[0] && first.index[len(first.index)-1] == c2.index[len(c2.index)-1] {
		// The usual case: both cover the same periods.
		s.x1, s.x2, s.y, s.periods = first.x, c2.x, first.y, first.periods
		return s
	}
	for i, j := 0, 0; i < len(first.index) && j < len(c2.index); {
		switch {
		case first.index[i] < c2.index[j]:
			i++
		case first.index[i] > c2.index[j]:
			j++
		default:
			s.x1 = append(s.x1, first.x[i])
			s.x2 = append(s.x2, c2.x[j])
			s.y = append(s.y, first.y[i])
			s.periods = append(s.periods, first.periods[i])
			i++
			j++
		}
	}
	return s
}

// screen computes, from centred sums, what the two-driver fit
// cost = a + b·x1 + b2·x2 would give, without fitting it: the coefficients,
// the partial F of x2 against the one-driver line, and the variance
// inflation 1/(1 − r²) of the pair. Only pairs that pass on these go on to
// the full fit.
func (s *second) screen() (b1, b2, partialF, vif float64, ok bool) {
	n := float64(len(s.y))
	var m1, m2, my float64
	for i := range s.y {
		m1 += s.x1[i]
		m2 += s.x2[i]
		my += s.y[i]
	}
	m1, m2, my = m1/n, m2/n, my/n
	var s11, s22, s12, s1y, s2y, syy float64
	for i := range s.y {
		d1, d2, dy := s.x1[i]-m1, s.x2[i]-m2, s.y[i]-my
		s11 += d1 * d1
		s22 += d2 * d2
		s12 += d1 * d2
		s1y += d1 * dy
		s2y += d2 * dy
		syy += dy * dy
	}
	det := s11*s22 - s12*s12
	if s11 <= 0 || s22 <= 0 || det <= 1e-12*s11*s22 || n < 4 {
		return 0, 0, 0, 0, false
	}
	b1 = (s22*s1y - s12*s2y) / det
	b2 = (s11*s2y - s12*s1y) / det
	rssFull := syy - b1*s1y - b2*s2y
	rssReduced := syy - s1y*s1y/s11
	if rssFull <= 0 {
		return b1, b2, math.Inf(1), s11 * s22 / det, true
	}
	// Rounding in the sums can put the full model's RSS a hair above the
	// reduced one's, which exact arithmetic never does: a second driver
	// that adds nothing then has F = 0, not a negative value outside the
	// F distribution.
	partialF = math.Max(0, (rssReduced-rssFull)/(rssFull/(n-3)))
	vif = s11 * s22 / det // 1 / (1 − r²) with r² = s12² / (s11·s22)
	return b1, b2, partialF, vif, true
}

// forwardSelect looks for a second driver (README, The method): its coefficient
// positive and significant by the partial F test at alpha /
// SecondDriverStrictness, Bonferroni-corrected over the second drivers tried;
// the pair's variance inflation below MaxVIF; and the leave-one-out error at
// least MinPRESSGain lower than with the first driver alone. Of those, the one
// with the lowest PRESS is returned, with how many were tried. Pairs are
// screened from sums first; only those that pass are fitted in full.
func forwardSelect(best *candidate, cands []*candidate, s Settings) (*second, int) {
	pairs := make([]second, 0, len(cands)) // values: one allocation, not one a pair
	for _, c := range cands {
		if c.driver.Name == best.driver.Name || c.negative {
			continue
		}
		p := pairWith(best, c)
		if len(p.y) < s.MinPeriods || len(p.y) < 6 {
			continue
		}
		pairs = append(pairs, p)
	}
	tried := len(pairs)
	level := s.Alpha / SecondDriverStrictness / float64(max(tried, 1))
	var chosen *second
	for i := range pairs {
		p := &pairs[i]
		b1, b2, partialF, vif, ok := p.screen()
		if !ok || b1 <= 0 || b2 <= 0 || vif >= MaxVIF {
			continue
		}
		df := float64(len(p.y) - 3)
		if fDist(df).Survival(partialF) >= level {
			continue
		}
		full, err := fit.OLS([][]float64{p.x1, p.x2}, p.y, true)
		if err != nil {
			continue // the two drivers are collinear
		}
		reduced := best.linear
		if len(p.y) != len(best.y) {
			if reduced, err = fit.Line(p.x1, p.y); err != nil {
				continue
			}
		}
		p.full, p.reduced, p.vif = full, reduced, vif
		_, p.partialP = fit.PartialF(full, reduced)
		if full.Coef[1] <= 0 || full.Coef[2] <= 0 || p.partialP*float64(tried) >= s.Alpha/SecondDriverStrictness ||
			full.PRESS > (1-MinPRESSGain)*reduced.PRESS {
			continue
		}
		if chosen == nil || full.PRESS < chosen.full.PRESS {
			chosen = p
		}
	}
	return chosen, tried
}

// fDist is the F(1, df) distribution of a partial F test of one coefficient.
func fDist(df float64) distuv.F { return distuv.F{D1: 1, D2: df} }

// twoDriverRecord turns an adopted second driver into a stored fit.
func twoDriverRecord(o costdrift.CostObject, best *candidate, p *second) costdrift.Fit {
	r := p.full
	f := costdrift.Fit{
		Object: o, Driver: best.driver.Name, Lag: best.lag, Model: costdrift.ModelTwoDriver, N: r.N,
		Intercept: r.Coef[0], InterceptSE: r.StdErr[0], InterceptP: r.P[0],
		Slope: r.Coef[1], SlopeSE: r.StdErr[1], SlopeT: r.T[1], SlopeP: r.P[1], SlopeAdjustedP: math.NaN(),
		R2: r.R2, ResidualSE: r.ResidualSE, PRESS: r.PRESS, AICc: r.AICc,
		Driver2: p.c.driver.Name, Lag2: p.c.lag, Slope2: r.Coef[2], Slope2SE: r.StdErr[2], Slope2P: p.partialP, VIF: p.vif,
	}
	f.RangeMin, f.RangeMax = minMax(p.x1)
	return f
}

// diagnose fills the chosen fit's diagnostics: the Durbin–Watson statistic of
// its residuals, a Huber fit beside least squares, and the periods whose
// Cook's distance exceeds 4/n.
func diagnose(f *costdrift.Fit, r *fit.Regression, columns [][]float64, y []float64, periods []string, d *costdrift.Diagnostics) {
	f.DurbinWatson = fit.DurbinWatson(r.Residuals)
	d.DurbinWatson = f.DurbinWatson
	f.RobustIntercept, f.RobustSlope = math.NaN(), math.NaN()
	d.RobustIntercept, d.RobustSlope = math.NaN(), math.NaN()
	if h, err := fit.Huber(columns, y); err == nil {
		f.RobustIntercept, f.RobustSlope = h.Coef[0], h.Coef[1]
		d.RobustIntercept, d.RobustSlope = h.Coef[0], h.Coef[1]
		// Least squares and the robust fit differ by more than two standard
		// errors of the slope: a few periods sway the formula.
		if se := r.StdErr[1]; se > 0 && math.Abs(h.Coef[1]-r.Coef[1]) > 2*se {
			d.RobustNote = "a robust (Huber) fit gives a rate more than two standard errors away from least squares: a few periods sway the formula"
		}
	}
	limit := outlierCookScale / float64(r.N)
	for i, cd := range r.CooksD {
		if cd > limit {
			student := r.Residuals[i] / (r.ResidualSE * math.Sqrt(1-r.Leverage[i]))
			f.Outliers = append(f.Outliers, costdrift.Outlier{Period: periods[i], CooksD: cd, Studentised: student})
		}
	}
}
