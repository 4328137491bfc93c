package fit

import (
	"fmt"
	"math"
	"sort"
)

// TheilSenFit is the Theil–Sen line y = Intercept + Slope·x.
type TheilSenFit struct {
	Intercept, Slope float64
	Pairs            int // pairs with distinct x whose slopes entered the median
}

// TheilSen fits a line robust to outliers in cost (Theil 1950, Sen 1968,
// from memory):
//
//	Slope     = median{ (y_j − y_i)/(x_j − x_i) : i < j, x_i ≠ x_j }
//	Intercept = median{ y_i − Slope·x_i }
//
// Pairs with equal x carry no slope and are skipped. The median of an even
// count is the mean of the two middle values. These are the definitions of
// scipy.stats.theilslopes with method="joint" (method="separate", its
// default, takes median(y) − Slope·median(x) for the intercept instead).
// About 29 % of the costs can be arbitrarily wrong before the slope follows
// them (breakdown point 1 − 1/√2, from memory). It takes O(N²) time and
// memory for the pairwise slopes.
//
// TheilSen panics when len(x) != len(y). It returns an error wrapping
// ErrTooFewObservations when N < 2, ErrNonFinite for NaN or ±Inf input or a
// pairwise slope that overflows, and ErrIllConditioned when every x is equal.
func TheilSen(x, y []float64) (TheilSenFit, error) {
	n := len(x)
	if len(y) != n {
		panic(fmt.Sprintf("fit: TheilSen x has %d values, y has %d", n, len(y)))
	}
	if n < 2 {
		return TheilSenFit{}, fmt.Errorf("theil-sen: %d observations: %w", n, ErrTooFewObservations)
	}
	if err := checkFinite(x, "x"); err != nil {
		return TheilSenFit{}, fmt.Errorf("theil-sen: %w", err)
	}
	if err := checkFinite(y, "y"); err != nil {
		return TheilSenFit{}, fmt.Errorf("theil-sen: %w", err)
	}
	slopes := make([]float64, 0, n*(n-1)/2)
	for i := 0; i < n; i++ {
		for j := i + 1; j < n; j++ {
			// Oriented so that the x difference is positive, as scipy forms
			// them, so that the same quotient is rounded the same way.
			var s float64
			switch {
			case x[j] > x[i]:
				s = (y[j] - y[i]) / (x[j] - x[i])
			case x[i] > x[j]:
				s = (y[i] - y[j]) / (x[i] - x[j])
			default:
				continue
			}
			if !isFinite(s) {
				return TheilSenFit{}, fmt.Errorf("theil-sen: slope of observations %d and %d overflows: %w", i, j, ErrNonFinite)
			}
			slopes = append(slopes, s)
		}
	}
	if len(slopes) == 0 {
		return TheilSenFit{}, fmt.Errorf("theil-sen: every activity level is %g: %w", x[0], ErrIllConditioned)
	}
	b := median(slopes)
	offsets := make([]float64, n)
	for i := range x {
		offsets[i] = y[i] - b*x[i]
	}
	return TheilSenFit{Intercept: median(offsets), Slope: b, Pairs: len(slopes)}, nil
}

// HuberTuning is the tuning constant c of Huber's ψ used by Huber: 95 %
// efficiency relative to least squares under normal errors (common practice;
// the default of statsmodels' HuberT and of R's MASS::rlm).
const HuberTuning = 1.345

// madNormal is Φ⁻¹(3/4), which makes median|e|/madNormal a consistent
// estimate of σ for normal errors.
const madNormal = 0.6744897501960817

const (
	// huberMaxIterations bounds the reweighting steps of Huber. On the 52
	// cross-check cases the iteration settles in at most 40 steps.
	huberMaxIterations = 200
	// huberTolerance: the iteration has settled when no fitted value moves by
	// more than this fraction of the robust scale.
	huberTolerance = 1e-10
	// huberRounding: a move below this fraction of the largest |y| is
	// rounding, so a nearly exact fit stops too.
	huberRounding = 1e-13
	// huberCollapse: once σ̂ has fallen below this fraction of its OLS start,
	// Huber looks for a majority of observations lying exactly on one fit.
	// Noise does not shrink a MAD a thousandfold between two fits of the
	// same data; a majority fitted exactly does, geometrically, step by step.
	huberCollapse = 1e-3
	// huberExact: a residual within this fraction of the largest |y| counts
	// as exactly 0 when looking for that majority.
	huberExact = 1e-12
)

// HuberFit is a Huber M-estimate of a linear cost with an intercept.
type HuberFit struct {
	Coef       []float64 // intercept first, then one per regressor, as OLS
	Scale      float64   // σ̂ = median|e_i| / Φ⁻¹(3/4) of the final residuals; 0 for an exact majority
	Weights    []float64 // w_i of the last weighted fit
	Residuals  []float64 // e_i = y_i − ŷ_i
	Iterations int       // weighted least-squares fits after the OLS start
}

// Huber fits y = b_0 + Σ b_j·x_j by Huber's M-estimator (Huber 1964, from
// memory), which weighs down observations far from the fit instead of
// letting them pull it, by iteratively reweighted least squares:
//
//	start:  b⁰ = OLS,  e⁰ = y − X·b⁰,  σ⁰ = median|e⁰_i| / Φ⁻¹(3/4)
//	step t: u_i = e_i^(t−1) / σ^(t−1),  w_i = min(1, c/|u_i|),  c = HuberTuning = 1.345
//	        b^t = argmin Σ w_i (y_i − x_iᵀb)²,  e^t = y − X·b^t,  σ^t = median|e^t_i| / Φ⁻¹(3/4)
//	stop:   max_i |e^t_i − e^(t−1)_i| <= 1e-10·σ^t + 1e-13·max_i|y_i|
//
// The scale (MAD about zero, Φ⁻¹(3/4) = 0.6744897501960817) is re-estimated
// after every weighted fit; this is the sequence statsmodels' RLM with
// HuberT(1.345) and scale_est="mad" runs, and its fixed point is the
// estimate, whatever the stopping rule. The weighted fits centre each
// regressor on its weighted mean Σw·x/Σw (which makes it orthogonal to the
// intercept) and solve by OLS on rows scaled by sqrt(w_i).
//
// When more than half the observations lie exactly on one fit (a cost
// posted identically in most periods, say), σ̂ shrinks towards 0 and the
// iteration creeps towards that fit, which is then the estimate: the weight
// c·σ̂/|e_i| of every other observation goes to 0. Huber does not wait for the
// creep. Once σ̂ is below 1e-3 of its start it fits OLS to the observations
// with |e_i| <= median|e|, and if those residuals are all within 1e-12·max|y|
// of 0 it returns that fit with Scale 0, weight 1 for every observation on it
// (to the same bound) and 0 for the rest.
//
// Huber panics as OLS does on columns of unequal length and when there is no
// regressor. It returns the errors of OLS for the start and for each
// weighted fit, one wrapping ErrIllConditioned when σ̂ reaches exactly 0
// without such a majority, and one wrapping ErrNoConvergence when the
// stopping rule is not met within 200 weighted fits.
func Huber(columns [][]float64, y []float64) (*HuberFit, error) {
	return huber(columns, y, huberMaxIterations)
}

// huber is Huber with the iteration limit as a parameter, so that a test can
// reach the ErrNoConvergence path.
func huber(columns [][]float64, y []float64, maxIterations int) (*HuberFit, error) {
	return irls(columns, y, maxIterations, len(columns) == 1)
}

// irls runs Huber's iteration. With closedForm (one regressor only) each
// weighted fit is the weighted line in closed form (weightedLine) instead
// of a QR solve: a run fits Huber for most cost objects, and the QR with
// its refinement was most of the time Huber took.
func irls(columns [][]float64, y []float64, maxIterations int, closedForm bool) (*HuberFit, error) {
	p, n := len(columns), len(y)
	if p == 0 {
		panic("fit: Huber needs at least one regressor")
	}
	start, err := OLS(columns, y, true)
	if err != nil {
		return nil, fmt.Errorf("huber: %w", err)
	}
	var ymax float64
	for _, v := range y {
		ymax = math.Max(ymax, math.Abs(v))
	}
	h := &HuberFit{
		Coef:      append([]float64(nil), start.Coef...),
		Weights:   make([]float64, n),
		Residuals: append([]float64(nil), start.Residuals...),
	}
	h.Scale = medianAbs(h.Residuals) / madNormal
	initialScale := h.Scale

	sw := make([]float64, n)
	design := make([][]float64, p+1)
	for j := range design {
		design[j] = make([]float64, n)
	}
	wy := make([]float64, n)
	centre := make([]float64, p)
	for h.Iterations < maxIterations {
		if h.Scale <= huberCollapse*initialScale {
			if exact, ok := exactMajority(columns, y, h, ymax); ok {
				return exact, nil
			}
			if h.Scale == 0 {
				return nil, fmt.Errorf("huber: robust scale is 0 but no majority lies exactly on one fit: %w", ErrIllConditioned)
			}
		}
		var wsum float64
		for i, e := range h.Residuals {
			w := 1.0
			if u := math.Abs(e / h.Scale); u > HuberTuning {
				w = HuberTuning / u
			}
			h.Weights[i] = w
			wsum += w
		}
		if closedForm {
			if b, xw, yw, ok := weightedLine(columns[0], y, h.Weights); ok {
				h.Iterations++
				h.Coef[0], h.Coef[1] = yw-b*xw, b
				var move float64
				for i, x := range columns[0] {
					e := (y[i] - yw) - b*(x-xw)
					move = math.Max(move, math.Abs(e-h.Residuals[i]))
					h.Residuals[i] = e
				}
				if stop, fit := h.settle(move, columns, y, ymax, initialScale); stop {
					return fit, nil
				}
				continue
			}
		}
		for i, w := range h.Weights {
			sw[i] = math.Sqrt(w)
		}
		for j, c := range columns {
			var s float64
			for i, v := range c {
				s += h.Weights[i] * v
			}
			centre[j] = s / wsum
		}
		for i := 0; i < n; i++ {
			design[0][i] = sw[i]
			for j, c := range columns {
				design[j+1][i] = sw[i] * (c[i] - centre[j])
			}
			wy[i] = sw[i] * y[i]
		}
		r, err := coefficients(design, wy, false)
		if err != nil {
			return nil, fmt.Errorf("huber: weighted fit %d: %w", h.Iterations+1, err)
		}
		h.Iterations++
		h.Coef[0] = r.Coef[0]
		for j := range columns {
			h.Coef[j+1] = r.Coef[j+1]
			h.Coef[0] -= r.Coef[j+1] * centre[j]
		}
		var move float64
		for i := 0; i < n; i++ {
			// e_i = (y_i − γ_0) − Σ b_j·(x_ij − x̄_j^w), in the centred
			// parametrisation the weighted fit was solved in.
			e := y[i] - r.Coef[0]
			for j, c := range columns {
				e -= r.Coef[j+1] * (c[i] - centre[j])
			}
			move = math.Max(move, math.Abs(e-h.Residuals[i]))
			h.Residuals[i] = e
		}
		if stop, fit := h.settle(move, columns, y, ymax, initialScale); stop {
			return fit, nil
		}
	}
	return nil, fmt.Errorf("huber: fitted values still moving after %d weighted fits: %w", maxIterations, ErrNoConvergence)
}

// settle re-estimates the scale after a weighted fit whose fitted values
// moved by at most move, and reports whether the iteration stops, with the
// estimate then.
func (h *HuberFit) settle(move float64, columns [][]float64, y []float64, ymax, initialScale float64) (bool, *HuberFit) {
	h.Scale = medianAbs(h.Residuals) / madNormal
	if move > huberTolerance*h.Scale+huberRounding*ymax {
		return false, nil
	}
	// A collapsing scale can also stop the iteration through the rounding
	// term; report the exact fit it was creeping towards.
	if h.Scale <= huberCollapse*initialScale {
		if exact, ok := exactMajority(columns, y, h, ymax); ok {
			return true, exact
		}
	}
	return true, h
}

// weightedLine is the weighted least-squares line through (x_i, y_i) with
// weights w_i > 0, in closed form with centred sums,
//
//	x̄ = Σw·x/Σw,  ȳ = Σw·y/Σw,  b = Σw(x−x̄)(y−ȳ) / Σw(x−x̄)²,
//
// the sums compensated (about twice double precision) and the means
// corrected by the weighted mean of the first-pass deviations, so that it
// agrees with the QR solve and its refinement to rounding. ok is false when
// x is constant to 7 digits under the weights (the test OLS applies to a
// centred column); the caller then takes the general solve, which reports
// that case as it always has.
func weightedLine(x, y, w []float64) (b, xbar, ybar float64, ok bool) {
	var sw, sx, sy compensated
	for i, wi := range w {
		sw.add(wi)
		sx.addProduct(wi, x[i])
		sy.addProduct(wi, y[i])
	}
	wsum := sw.value()
	xbar, ybar = sx.value()/wsum, sy.value()/wsum
	var dx, dy, sxx, sxy compensated
	for i, wi := range w {
		u, v := x[i]-xbar, y[i]-ybar
		dx.addProduct(wi, u)
		dy.addProduct(wi, v)
		sxx.addProduct(wi*u, u)
		sxy.addProduct(wi*u, v)
	}
	du, dv := dx.value(), dy.value()
	xx := sxx.value() - du*du/wsum
	xy := sxy.value() - du*dv/wsum
	xbar += du / wsum
	ybar += dv / wsum
	if !(xx > 0) || math.IsInf(xx, 0) || math.IsInf(xy, 0) || math.IsNaN(xy) ||
		math.Sqrt(xx/(xx+wsum*xbar*xbar)) < rankTolerance {
		return 0, 0, 0, false
	}
	return xy / xx, xbar, ybar, true
}

// exactMajority fits OLS to the observations with |e_i| <= median|e| of the
// current Huber iterate h and reports whether they all lie on that fit to
// within huberExact·ymax; if so it returns the limit estimate described in
// Huber's documentation.
func exactMajority(columns [][]float64, y []float64, h *HuberFit, ymax float64) (*HuberFit, bool) {
	cut := medianAbs(h.Residuals)
	var rows []int
	for i, e := range h.Residuals {
		if math.Abs(e) <= cut {
			rows = append(rows, i)
		}
	}
	sub := make([][]float64, len(columns))
	for j, c := range columns {
		sub[j] = make([]float64, len(rows))
		for r, i := range rows {
			sub[j][r] = c[i]
		}
	}
	ys := make([]float64, len(rows))
	for r, i := range rows {
		ys[r] = y[i]
	}
	fit, err := OLS(sub, ys, true)
	if err != nil {
		return nil, false
	}
	bound := huberExact * ymax
	for _, e := range fit.Residuals {
		if math.Abs(e) > bound {
			return nil, false
		}
	}
	out := &HuberFit{
		Coef:       fit.Coef,
		Weights:    make([]float64, len(y)),
		Residuals:  make([]float64, len(y)),
		Iterations: h.Iterations,
	}
	for i := range y {
		e := y[i] - fit.Coef[0]
		for j, c := range columns {
			e -= fit.Coef[j+1] * c[i]
		}
		out.Residuals[i] = e
		if math.Abs(e) <= bound {
			out.Weights[i] = 1
		}
	}
	return out, true
}

// median returns the median of v, sorting v in place; for an even count it
// is the mean of the two middle values.
func median(v []float64) float64 {
	sort.Float64s(v)
	m := len(v) / 2
	if len(v)%2 == 1 {
		return v[m]
	}
	return (v[m-1] + v[m]) / 2
}

// medianAbs returns median|v_i| without changing v.
func medianAbs(v []float64) float64 {
	a := make([]float64, len(v))
	for i, x := range v {
		a[i] = math.Abs(x)
	}
	return median(a)
}
