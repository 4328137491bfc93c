package fit

import (
	"errors"
	"fmt"
	"math"
	"sync"

	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/stat/distuv"
)

// Errors returned for numerical trouble. They are wrapped with context; test
// with errors.Is.
var (
	// ErrTooFewObservations: the fit needs N > len(Coef), i.e. DF >= 1, so that
	// the residual variance can be estimated.
	ErrTooFewObservations = errors.New("fit: too few observations")
	// ErrIllConditioned: a regressor is constant (in a model with an intercept)
	// or all zero, regressors are linearly dependent, or the scaled design
	// matrix is too badly conditioned for the coefficients to carry meaning.
	ErrIllConditioned = errors.New("fit: ill-conditioned regressors")
	// ErrNonFinite: an input value is NaN or ±Inf, or a sum of squares overflows.
	ErrNonFinite = errors.New("fit: non-finite value")
	// ErrNoConvergence: an iterative estimate (Huber) did not settle within
	// its iteration limit.
	ErrNoConvergence = errors.New("fit: no convergence")
)

const (
	// rankTolerance bounds, for a design column scaled to unit length (and
	// centred when the model has an intercept), the part of it not explained by
	// the columns before it: |R_jj| < rankTolerance is treated as rank
	// deficiency. 1e-7 is the column tolerance R's lm() passes to its LINPACK
	// QR (qr(tol = 1e-07)) [from memory], so a model this package rejects is
	// one that lm would also drop a coefficient from. The same bound applied to
	// sqrt(Σ(x−x̄)²/Σx²) flags a regressor that is constant to 7 digits.
	rankTolerance = 1e-7
	// conditionLimit bounds κ₁(R) = ‖R‖₁·‖R⁻¹‖₁ of the scaled (and centred)
	// design. Beyond 1e10 fewer than about 6 of the 16 digits of a double are
	// left in the coefficients.
	conditionLimit = 1e10
	// leverageOne: an observation with 1 − h_i below this is treated as having
	// leverage exactly 1 (it alone determines a coefficient), so that its
	// leave-one-out prediction does not exist.
	leverageOne = 1e-10
)

// Regression is the result of an ordinary least-squares fit. See the package
// documentation for the formulas behind each field.
type Regression struct {
	Intercept bool      // the model carries an intercept; it is Coef[0]
	Coef      []float64 // intercept first when Intercept
	StdErr    []float64 // standard errors of Coef: s·sqrt([(XᵀX)⁻¹]_jj)
	T         []float64 // Coef / StdErr
	// P holds two-sided p-values 2·Pr(T_DF > |T_j|), Student t with DF degrees
	// of freedom. On a perfect fit (RSS exactly 0) StdErr is 0, and a nonzero
	// coefficient has T = ±Inf and P = 0 while a coefficient that is exactly 0
	// has T = 0 and P = 1; P is never NaN.
	P  []float64
	N  int // observations
	DF int // residual degrees of freedom, N − len(Coef)

	RSS        float64 // residual sum of squares Σ e_i²
	ResidualSE float64 // s = sqrt(RSS / DF)
	// R2 is 1 − RSS/Σ(y−ȳ)² (centred) with an intercept and 1 − RSS/Σy²
	// (uncentred) without one. When the model has no slopes (Constant), or the
	// denominator is exactly 0 (y constant with an intercept, y all zero
	// without), R2 and AdjR2 are 0 because there is no variation for the
	// regressors to explain.
	R2    float64
	AdjR2 float64 // 1 − (1 − R2)·(N − i)/DF with i = 1 with intercept, 0 without
	// F tests all slopes (every coefficient but the intercept) at once:
	// F = ((TSS − RSS)/(k − i)) / (RSS/DF), with TSS uncentred without an
	// intercept, and FP = Pr(F_{k−i, DF} > F). When there is no slope to test
	// (Constant) or TSS is exactly 0, F = 0 and FP = 1, never NaN. A perfect fit
	// with TSS > 0 has F = +Inf and FP = 0.
	F, FP float64

	Residuals []float64 // e_i = y_i − ŷ_i
	Leverage  []float64 // hat values h_i = x_iᵀ(XᵀX)⁻¹x_i; they sum to len(Coef)
	// CooksD holds Cook's distance D_i = e_i²·h_i / (k·s²·(1 − h_i)²). It is 0
	// for every observation of a perfect fit and +Inf for an observation with
	// leverage 1.
	CooksD []float64
	// PRESS is the leave-one-out sum of squared prediction errors
	// Σ (e_i / (1 − h_i))²; +Inf when some observation has leverage 1.
	PRESS float64

	// AIC, AICc and BIC use the Gaussian log-likelihood at the maximum,
	// counting the error variance as a parameter as R's AIC(lm) does:
	//
	//	logL = −N/2 · (ln(2π) + 1 + ln(RSS/N)),   m = len(Coef) + 1
	//	AIC  = −2·logL + 2m
	//	AICc = AIC + 2m(m+1)/(N − m − 1)          (+Inf when N − m − 1 <= 0, i.e. DF <= 2)
	//	BIC  = −2·logL + ln(N)·m
	//
	// A perfect fit (RSS = 0) gives −Inf for all three (AICc +Inf when DF <= 2).
	AIC, AICc, BIC float64

	// centre holds the regressor means subtracted before fitting when the model
	// has an intercept (nil without one); gamma the coefficients in that centred
	// parametrisation (gamma[0] is the fitted value at the means); factor the
	// k×k row-major matrix W with W·Wᵀ = (X_cᵀX_c)⁻¹ in the same
	// parametrisation. Predict needs all three.
	centre []float64
	gamma  []float64
	factor []float64
}

// newRegression allocates a Regression and every slice it holds from one
// backing array, so that a fit costs two allocations.
func newRegression(n, k, regressors int, intercept bool) *Regression {
	return newRegressionArrays(n, k, regressors, intercept, true)
}

// newRegressionArrays is newRegression; without arrays the per-observation
// slices (Residuals, Leverage, CooksD) are left nil.
func newRegressionArrays(n, k, regressors int, intercept, arrays bool) *Regression {
	return (*Slab)(nil).regression(n, k, regressors, intercept, arrays)
}

// Slab hands out the regressions of fits made and dropped in bulk, such as
// the screens of one cost object's candidates, from blocks it keeps: once it
// has grown to an object's needs, a screen allocates nothing. Reset makes
// everything it handed out its own again, so that whoever screens with a
// Slab must hold no regression from it across a Reset. The zero Slab is
// ready to use; a nil *Slab allocates each regression on its own.
type Slab struct {
	regs   [][]Regression // blocks of slabRegressions each
	floats [][]float64    // blocks of slabFloats each
	reg    int            // regressions handed out since the last Reset
	block  int            // the float block being handed out
	float  int            // floats handed out of it
}

const (
	slabRegressions = 64
	slabFloats      = 2048
)

// Reset takes back every regression the slab handed out.
func (sl *Slab) Reset() {
	sl.reg, sl.float, sl.block = 0, 0, 0
}

// regression is newRegressionArrays from the slab: the Regression and its
// slices zeroed, as a new one would be.
func (sl *Slab) regression(n, k, regressors int, intercept, arrays bool) *Regression {
	size := 5*k + k*k
	if arrays {
		size += 3 * n
	}
	if intercept {
		size += regressors
	}
	var buf []float64
	var r *Regression
	if sl == nil || size > slabFloats {
		buf = make([]float64, size)
		r = &Regression{}
	} else {
		buf, r = sl.take(size)
	}
	*r = Regression{Intercept: intercept, N: n, DF: n - k}
	carve := func(m int) []float64 {
		s := buf[:m:m]
		buf = buf[m:]
		return s
	}
	r.Coef = carve(k)
	r.StdErr = carve(k)
	r.T = carve(k)
	r.P = carve(k)
	r.gamma = carve(k)
	r.factor = carve(k * k)
	if intercept {
		r.centre = carve(regressors)
	}
	if arrays {
		r.Residuals = carve(n)
		r.Leverage = carve(n)
		r.CooksD = carve(n)
	}
	return r
}

// take hands out the next Regression and size zeroed floats, growing the
// slab by a block where it has none left.
func (sl *Slab) take(size int) ([]float64, *Regression) {
	b, i := sl.reg/slabRegressions, sl.reg%slabRegressions
	if b == len(sl.regs) {
		sl.regs = append(sl.regs, make([]Regression, slabRegressions))
	}
	sl.reg++
	r := &sl.regs[b][i]
	if sl.block < len(sl.floats) && sl.float+size > slabFloats {
		sl.block, sl.float = sl.block+1, 0
	}
	if sl.block == len(sl.floats) {
		sl.floats = append(sl.floats, make([]float64, slabFloats))
	}
	buf := sl.floats[sl.block][sl.float : sl.float+size : sl.float+size]
	sl.float += size
	clear(buf)
	return buf, r
}

// OLS fits y = X·b (+ intercept) by least squares; columns[j][i] is regressor
// j at observation i, and Coef comes back in the order intercept (when asked
// for), columns[0], columns[1], ….
//
// With an intercept each regressor is centred on its mean x̄_j first; every
// design column is then scaled to unit length and [X_s y] is factorised by
// Householder QR (gonum mat.QR) as Q·[R c; 0 ρ]. The scaled coefficients solve
// R·b_s = c and (XᵀX)⁻¹ = D⁻¹R⁻¹R⁻ᵀD⁻¹ with D the column lengths. The
// intercept is recovered as b_0 = (ȳ + g_0) − Σ b_j·x̄_j, where g_0 is the
// fitted intercept of the centred problem. The coefficients and residuals are
// then improved by iterative refinement on the unscaled data (see refine),
// and RSS = Σ e_i² of the refined residuals.
//
// OLS panics when a column's length differs from len(y) or when there is
// neither a column nor an intercept. It returns an error wrapping
// ErrTooFewObservations when N <= k, ErrNonFinite for NaN or ±Inf input, and
// ErrIllConditioned when a regressor is constant (with an intercept), a column
// is all zero, a column is within rankTolerance of the span of the columns
// before it, or κ₁(R) exceeds conditionLimit.
func OLS(columns [][]float64, y []float64, intercept bool) (*Regression, error) {
	return ols(columns, y, intercept, rankTolerance, conditionLimit)
}

// ols is OLS with the two refusal thresholds as parameters, so that a test can
// measure how far the arithmetic itself gets on a design OLS refuses (NIST
// Filip). Production code calls OLS.
func ols(columns [][]float64, y []float64, intercept bool, rankTol, condLimit float64) (*Regression, error) {
	return solve(columns, y, intercept, rankTol, condLimit, true)
}

// coefficients is OLS without the inference: the same coefficients,
// residuals and RSS, bit for bit, but no standard errors, t and p-values,
// R², F or leave-one-out error. Huber's reweighting fits need only the
// coefficients, up to forty times per fit, and the p-values they never
// read took half their time.
func coefficients(columns [][]float64, y []float64, intercept bool) (*Regression, error) {
	return solve(columns, y, intercept, rankTolerance, conditionLimit, false)
}

// solve is OLS; with infer false it skips finish.
func solve(columns [][]float64, y []float64, intercept bool, rankTol, condLimit float64, infer bool) (*Regression, error) {
	n, p := len(y), len(columns)
	for j, c := range columns {
		if len(c) != n {
			panic(fmt.Sprintf("fit: OLS column %d has %d values, y has %d", j, len(c), n))
		}
	}
	k := p
	first := 0 // index in Coef of the first regressor
	if intercept {
		k++
		first = 1
	}
	if k == 0 {
		panic("fit: OLS needs a regressor or an intercept")
	}
	if n <= k {
		return nil, fmt.Errorf("ols: %d observations for %d coefficients: %w", n, k, ErrTooFewObservations)
	}
	if err := checkFinite(y, "y"); err != nil {
		return nil, fmt.Errorf("ols: %w", err)
	}
	for j, c := range columns {
		if err := checkFinite(c, fmt.Sprintf("regressor %d", j)); err != nil {
			return nil, fmt.Errorf("ols: %w", err)
		}
	}

	r := newRegression(n, k, p, intercept)
	width := k + 1 // design columns plus y
	data := make([]float64, n*width)
	scale := make([]float64, k) // D: length of each centred design column

	var ybar float64
	if intercept {
		ybar = mean(y)
		scale[0] = math.Sqrt(float64(n))
		for i := 0; i < n; i++ {
			data[i*width] = 1 / scale[0]
		}
	}
	for j, c := range columns {
		col := first + j
		var centre float64
		if intercept {
			centre = mean(c)
			r.centre[j] = centre
		}
		raw := norm(c, 0)
		if raw == 0 {
			return nil, fmt.Errorf("ols: regressor %d is all zero: %w", j, ErrIllConditioned)
		}
		d := raw
		if intercept {
			d = norm(c, centre)
			if d < rankTol*raw {
				return nil, fmt.Errorf("ols: regressor %d is constant: %w", j, ErrIllConditioned)
			}
		}
		if math.IsInf(d, 0) {
			return nil, fmt.Errorf("ols: regressor %d: sum of squares overflows: %w", j, ErrNonFinite)
		}
		scale[col] = d
		for i := 0; i < n; i++ {
			data[i*width+col] = (c[i] - centre) / d
		}
	}
	for i := 0; i < n; i++ {
		data[i*width+k] = y[i] - ybar
	}

	var qr mat.QR
	qr.Factorize(mat.NewDense(n, width, data)) // Factorize works on a copy
	var rAug mat.Dense
	qr.RTo(&rAug)

	// R (k×k, upper triangular) and c = the first k entries of Qᵀy.
	rf := make([]float64, k*k)
	for i := 0; i < k; i++ {
		for j := i; j < k; j++ {
			rf[i*k+j] = rAug.At(i, j)
		}
	}
	for j := 0; j < k; j++ {
		if math.Abs(rf[j*k+j]) < rankTol {
			return nil, fmt.Errorf("ols: %s is a linear combination of the columns before it (|R_jj| = %.3g): %w",
				coefName(j, intercept), math.Abs(rf[j*k+j]), ErrIllConditioned)
		}
	}
	rinv := invertUpper(rf, k)
	if cond := norm1Upper(rf, k) * norm1Upper(rinv, k); cond > condLimit {
		return nil, fmt.Errorf("ols: condition number %.3g of the scaled design exceeds %.0e: %w", cond, condLimit, ErrIllConditioned)
	}

	// Back-substitution R·g_s = c, then undo the column scaling.
	gs := make([]float64, k)
	for i := k - 1; i >= 0; i-- {
		s := rAug.At(i, k)
		for j := i + 1; j < k; j++ {
			s -= rf[i*k+j] * gs[j]
		}
		gs[i] = s / rf[i*k+i]
	}
	for j := 0; j < k; j++ {
		r.gamma[j] = gs[j] / scale[j]
		for m := j; m < k; m++ {
			r.factor[j*k+m] = rinv[j*k+m] / scale[j]
		}
	}

	// Residuals e = y_c − X_s·g_s and leverage h_i = ‖x_s,iᵀ R⁻¹‖²; the
	// rows x_s,iᵀR⁻¹ form Q₁ = X_s·R⁻¹ (n×k), kept for refine.
	q1 := make([]float64, n*k)
	for i := 0; i < n; i++ {
		row := data[i*width : i*width+k]
		e := data[i*width+k]
		var h float64
		for j := 0; j < k; j++ {
			e -= row[j] * gs[j]
			var u float64
			for m := 0; m <= j; m++ {
				u += row[m] * rinv[m*k+j]
			}
			q1[i*k+j] = u
			h += u * u
		}
		r.Residuals[i] = e
		r.Leverage[i] = h
	}

	// Back to the caller's parametrisation; StdErr holds sqrt([(XᵀX)⁻¹]_jj)
	// until finish multiplies by s.
	for j := first; j < k; j++ {
		r.Coef[j] = r.gamma[j]
		r.StdErr[j] = rowNorm(r.factor[j*k : (j+1)*k])
	}
	var tss float64
	if intercept {
		r.gamma[0] += ybar
		b0 := r.gamma[0]
		for j := 0; j < p; j++ {
			b0 -= r.centre[j] * r.Coef[first+j]
		}
		r.Coef[0] = b0
		// b_0 = mᵀg with m = (1, −x̄_1, …, −x̄_p), so var(b_0)/s² = ‖Wᵀm‖².
		var v float64
		for col := 0; col < k; col++ {
			u := r.factor[col]
			for j := 0; j < p; j++ {
				u -= r.centre[j] * r.factor[(first+j)*k+col]
			}
			v += u * u
		}
		r.StdErr[0] = math.Sqrt(v)
		tss = centredSumSquares(y, ybar)
	} else {
		tss = sumSquares(y)
	}
	r.refine(columns, y, scale, rf, q1)
	r.RSS = sumSquares(r.Residuals)
	if infer {
		r.finish(tss)
	}
	return r, nil
}

// refineSteps bounds the refinement steps of OLS. One step usually reaches
// full double precision; the later ones only run while the correction is
// still above rounding level and shrinking.
const refineSteps = 4

// refine improves Coef, gamma and Residuals by iterative refinement of the
// augmented least-squares system (Björck 1967, "Iterative refinement of
// linear least squares solutions I", BIT 7, from memory)
//
//	e + X·b = y,   Xᵀ·e = 0,
//
// on the caller's unscaled, uncentred X. Each step computes the defects
//
//	f = y − e − X·b,   g = −Xᵀ·e
//
// in about twice double precision (compensated sums with exact products from
// math.FMA; Ogita, Rump & Oishi 2005, "Accurate sum and dot product", SIAM J.
// Sci. Comput. 26, from memory) and solves for the corrections with the QR
// factor R of the scaled design X_s = X·T already at hand (T centres and
// scales the columns) and Q₁ = X_s·R⁻¹, the first k columns of Q up to
// rounding of order ε·κ(R), which only slows the refinement by that factor
// and spares forming the n×n Q:
//
//	h = R⁻ᵀ·Tᵀ·g,   u = Q₁ᵀ·f − h,   δγ = R⁻¹·u,   δb = T·δγ,   δe = f − Q₁·u.
//
// Why: a backward-stable QR alone leaves an error of order ε·κ²·‖e‖ in the
// coefficients, which on a large-residual problem (NIST Wampler5) costs more
// than eight of the sixteen digits; refining with exact defects removes that
// term and leaves an error of order ε·κ.
func (r *Regression) refine(columns [][]float64, y, scale, rf, q1 []float64) {
	n, k := r.N, len(r.Coef)
	first := 0
	if r.Intercept {
		first = 1
	}
	f := make([]float64, n)
	work := make([]float64, 3*k)
	g, h, u := work[:k], work[k:2*k], work[2*k:]
	prev := math.Inf(1)
	for step := 0; step < refineSteps; step++ {
		for i := 0; i < n; i++ {
			var acc compensated
			acc.add(y[i])
			acc.add(-r.Residuals[i])
			if r.Intercept {
				acc.add(-r.Coef[0])
			}
			for j, c := range columns {
				acc.addProduct(-c[i], r.Coef[first+j])
			}
			f[i] = acc.value()
		}
		if r.Intercept {
			var acc compensated
			for _, e := range r.Residuals {
				acc.add(-e)
			}
			g[0] = acc.value()
		}
		for j, c := range columns {
			var acc compensated
			for i, e := range r.Residuals {
				acc.addProduct(-c[i], e)
			}
			g[first+j] = acc.value()
		}
		// Tᵀ·g: T[0][0] = 1/D_0 and, with an intercept, column j of X_s is
		// (x_j − x̄_j)/D_j, so T[0][j] = −x̄_j/D_j and T[j][j] = 1/D_j.
		for j := first; j < k; j++ {
			if r.Intercept {
				g[j] -= r.centre[j-first] * g[0]
			}
			g[j] /= scale[j]
		}
		if r.Intercept {
			g[0] /= scale[0]
		}
		for j := 0; j < k; j++ { // Rᵀ·h = Tᵀ·g, forward substitution
			s := g[j]
			for m := 0; m < j; m++ {
				s -= rf[m*k+j] * h[m]
			}
			h[j] = s / rf[j*k+j]
		}
		for j := 0; j < k; j++ {
			var s float64
			for i := 0; i < n; i++ {
				s += q1[i*k+j] * f[i]
			}
			u[j] = s - h[j]
		}
		for i := 0; i < n; i++ { // δe = f − Q₁·u, before u is overwritten
			s := f[i]
			for j := 0; j < k; j++ {
				s -= q1[i*k+j] * u[j]
			}
			f[i] = s
		}
		for i := k - 1; i >= 0; i-- { // R·δγ = u, back-substitution in place
			s := u[i]
			for j := i + 1; j < k; j++ {
				s -= rf[i*k+j] * u[j]
			}
			u[i] = s / rf[i*k+i]
		}
		// Stop when the correction no longer shrinks: refinement has reached
		// the rounding level and a further step would only add noise.
		var size, level float64
		for j := 0; j < k; j++ {
			d := u[j] / scale[j]
			size = math.Max(size, math.Abs(d))
			level = math.Max(level, math.Abs(r.gamma[j]))
		}
		if size >= prev {
			return
		}
		prev = size
		for j := first; j < k; j++ {
			d := u[j] / scale[j]
			r.Coef[j] += d
			r.gamma[j] += d
			if r.Intercept {
				r.Coef[0] -= r.centre[j-first] * d
			}
		}
		if r.Intercept {
			d := u[0] / scale[0]
			r.Coef[0] += d
			r.gamma[0] += d
		}
		for i, d := range f {
			r.Residuals[i] += d
		}
		if size <= 0x1p-53*level {
			return
		}
	}
}

// compensated accumulates a sum, or a dot product through addProduct, in
// about twice double precision: each addition's rounding error (TwoSum) and
// each product's (math.FMA) are carried in lo.
type compensated struct{ hi, lo float64 }

func (c *compensated) add(v float64) {
	s := c.hi + v
	b := s - c.hi
	c.lo += (c.hi - (s - b)) + (v - b)
	c.hi = s
}

func (c *compensated) addProduct(a, b float64) {
	p := a * b
	c.lo += math.FMA(a, b, -p)
	c.add(p)
}

func (c *compensated) value() float64 { return c.hi + c.lo }

// Line fits y = a + b·x: Coef = [a, b]. It uses the closed form with centred
// two-pass sums,
//
//	Sxx = Σ(x−x̄)²,  Sxy = Σ(x−x̄)(y−ȳ),  b = Sxy/Sxx,  a = ȳ − b·x̄,
//	var(a) = s²(1/N + x̄²/Sxx),  var(b) = s²/Sxx,  h_i = 1/N + (x_i−x̄)²/Sxx,
//
// the means refined by the mean of the first-pass deviations, and fills the
// same fields as OLS. It allocates no matrices (two allocations per call)
// because a run calls it for every account and driver pair.
//
// Line panics when len(x) != len(y). It returns an error wrapping
// ErrTooFewObservations when N < 3, ErrNonFinite for NaN or ±Inf input, and
// ErrIllConditioned when x is constant, which here means
// sqrt(Sxx/Σx²) < 1e-7, the test OLS applies to a centred column.
func Line(x, y []float64) (*Regression, error) { return line(x, y, true) }

// LineSummary is Line without the per-observation arrays (Residuals,
// Leverage and CooksD are nil); every other field, PRESS included, is the
// same. It is for screening many candidate drivers, where the arrays of all
// but the chosen one would be thrown away.
func LineSummary(x, y []float64) (*Regression, error) { return line(x, y, false) }

func line(x, y []float64, arrays bool) (*Regression, error) {
	n := len(x)
	if len(y) != n {
		panic(fmt.Sprintf("fit: Line x has %d values, y has %d", n, len(y)))
	}
	if n < 3 {
		return nil, fmt.Errorf("line: %d observations for 2 coefficients: %w", n, ErrTooFewObservations)
	}
	nf := float64(n)

	// Pass 1: finiteness, first means, exact constancy.
	var sx, sy float64
	xConst, yConst := true, true
	for i := 0; i < n; i++ {
		xi, yi := x[i], y[i]
		if !isFinite(xi) {
			return nil, fmt.Errorf("line: x[%d] = %g: %w", i, xi, ErrNonFinite)
		}
		if !isFinite(yi) {
			return nil, fmt.Errorf("line: y[%d] = %g: %w", i, yi, ErrNonFinite)
		}
		sx += xi
		sy += yi
		xConst = xConst && xi == x[0]
		yConst = yConst && yi == y[0]
	}
	if xConst {
		return nil, fmt.Errorf("line: activity is constant (%g): %w", x[0], ErrIllConditioned)
	}
	xbar, ybar := sx/nf, sy/nf
	if yConst {
		// Exactly zero deviations make b exactly 0 and every residual exactly 0.
		ybar = y[0]
	}

	// Pass 2: centred sums with the correction of the means.
	var dx, dy, sxx, sxy, syy float64
	for i := 0; i < n; i++ {
		u, v := x[i]-xbar, y[i]-ybar
		dx += u
		dy += v
		sxx += u * u
		sxy += u * v
		syy += v * v
	}
	sxx -= dx * dx / nf
	sxy -= dx * dy / nf
	syy -= dy * dy / nf
	xbar += dx / nf
	ybar += dy / nf
	if math.IsInf(sxx, 0) || math.IsInf(syy, 0) || math.IsNaN(sxy) || math.IsInf(sxy, 0) {
		return nil, fmt.Errorf("line: sums of squares overflow: %w", ErrNonFinite)
	}
	if sxx <= 0 || math.Sqrt(sxx/(sxx+nf*xbar*xbar)) < rankTolerance {
		return nil, fmt.Errorf("line: activity is constant to 7 digits (Sxx = %g): %w", sxx, ErrIllConditioned)
	}
	b := sxy / sxx

	// Pass 3: residuals and leverage.
	r := newRegressionArrays(n, 2, 1, true, arrays)
	var rss, press float64
	for i := 0; i < n; i++ {
		u := x[i] - xbar
		e := (y[i] - ybar) - b*u
		h := 1/nf + u*u/sxx
		if arrays {
			r.Residuals[i] = e
			r.Leverage[i] = h
		} else if free := 1 - h; free < leverageOne {
			press = math.Inf(1)
		} else {
			press += (e / free) * (e / free)
		}
		rss += e * e
	}
	r.RSS = rss
	r.PRESS = press
	r.Coef[0] = ybar - b*xbar
	r.Coef[1] = b
	r.StdErr[0] = math.Sqrt(1/nf + xbar*xbar/sxx)
	r.StdErr[1] = 1 / math.Sqrt(sxx)
	r.centre[0] = xbar
	r.gamma[0], r.gamma[1] = ybar, b
	// Centred x is orthogonal to the intercept column, so W is diagonal.
	r.factor[0], r.factor[1], r.factor[2], r.factor[3] = 1/math.Sqrt(nf), 0, 0, 1/math.Sqrt(sxx)
	r.finish(syy)
	return r, nil
}

// ThroughOrigin fits y = b·x: Coef = [b] with
//
//	b = Σxy/Σx²,  var(b) = s²/Σx²,  h_i = x_i²/Σx²,
//
// and R2 = 1 − RSS/Σy² (uncentred), as for OLS without an intercept.
//
// ThroughOrigin panics when len(x) != len(y). It returns an error wrapping
// ErrTooFewObservations when N < 2, ErrNonFinite for NaN or ±Inf input or
// overflowing sums, and ErrIllConditioned when every x is 0.
func ThroughOrigin(x, y []float64) (*Regression, error) { return throughOrigin(x, y, true) }

// ThroughOriginSummary is ThroughOrigin without the per-observation arrays,
// as LineSummary is Line.
func ThroughOriginSummary(x, y []float64) (*Regression, error) { return throughOrigin(x, y, false) }

func throughOrigin(x, y []float64, arrays bool) (*Regression, error) {
	n := len(x)
	if len(y) != n {
		panic(fmt.Sprintf("fit: ThroughOrigin x has %d values, y has %d", n, len(y)))
	}
	if n < 2 {
		return nil, fmt.Errorf("through origin: %d observations for 1 coefficient: %w", n, ErrTooFewObservations)
	}
	var sxx, sxy, syy float64
	for i := 0; i < n; i++ {
		xi, yi := x[i], y[i]
		if !isFinite(xi) {
			return nil, fmt.Errorf("through origin: x[%d] = %g: %w", i, xi, ErrNonFinite)
		}
		if !isFinite(yi) {
			return nil, fmt.Errorf("through origin: y[%d] = %g: %w", i, yi, ErrNonFinite)
		}
		sxx += xi * xi
		sxy += xi * yi
		syy += yi * yi
	}
	if math.IsInf(sxx, 0) || math.IsInf(syy, 0) || math.IsInf(sxy, 0) || math.IsNaN(sxy) {
		return nil, fmt.Errorf("through origin: sums of squares overflow: %w", ErrNonFinite)
	}
	if sxx == 0 {
		return nil, fmt.Errorf("through origin: activity is all zero: %w", ErrIllConditioned)
	}
	b := sxy / sxx
	r := newRegressionArrays(n, 1, 1, false, arrays)
	var rss, press float64
	for i := 0; i < n; i++ {
		e := y[i] - b*x[i]
		h := x[i] * x[i] / sxx
		if arrays {
			r.Residuals[i] = e
			r.Leverage[i] = h
		} else if free := 1 - h; free < leverageOne {
			press = math.Inf(1)
		} else {
			press += (e / free) * (e / free)
		}
		rss += e * e
	}
	r.RSS = rss
	r.PRESS = press
	r.Coef[0] = b
	r.StdErr[0] = 1 / math.Sqrt(sxx)
	r.gamma[0] = b
	r.factor[0] = 1 / math.Sqrt(sxx)
	r.finish(syy)
	return r, nil
}

// Constant fits y = a: Coef = [ȳ], StdErr = [s/√N], h_i = 1/N. With no slope
// to test, R2 = AdjR2 = 0, F = 0 and FP = 1 (not NaN, so results stay
// encodable).
//
// Constant returns an error wrapping ErrTooFewObservations when N < 2 and
// ErrNonFinite for NaN or ±Inf input.
func Constant(y []float64) (*Regression, error) {
	n := len(y)
	if n < 2 {
		return nil, fmt.Errorf("constant: %d observations for 1 coefficient: %w", n, ErrTooFewObservations)
	}
	if err := checkFinite(y, "y"); err != nil {
		return nil, fmt.Errorf("constant: %w", err)
	}
	nf := float64(n)
	ybar := mean(y)
	r := newRegression(n, 1, 0, true)
	var rss float64
	for i, yi := range y {
		e := yi - ybar
		r.Residuals[i] = e
		r.Leverage[i] = 1 / nf
		rss += e * e
	}
	if math.IsInf(rss, 0) {
		return nil, fmt.Errorf("constant: sum of squares overflows: %w", ErrNonFinite)
	}
	r.RSS = rss
	r.Coef[0] = ybar
	r.StdErr[0] = 1 / math.Sqrt(nf)
	r.gamma[0] = ybar
	r.factor[0] = 1 / math.Sqrt(nf)
	r.finish(rss)
	return r, nil
}

// finish derives every statistic that follows from Coef, RSS, Residuals,
// Leverage and the unit standard errors sqrt([(XᵀX)⁻¹]_jj) held in StdErr;
// tss is Σ(y−ȳ)² with an intercept and Σy² without.
func (r *Regression) finish(tss float64) { r.finishSkipP(tss, -1) }

// finishSkipP is finish, but the p-value of coefficient skip (none when
// skip < 0, every one when skip is skipAllP) is left NaN, and so is FP when
// it would be that p-value.
func (r *Regression) finishSkipP(tss float64, skip int) {
	k := len(r.Coef)
	n := float64(r.N)
	df := float64(r.DF)
	s2 := r.RSS / df
	s := math.Sqrt(s2)
	r.ResidualSE = s

	for j, c := range r.Coef {
		r.StdErr[j] *= s
		switch {
		case r.StdErr[j] > 0:
			r.T[j] = c / r.StdErr[j]
			if j == skip || skip == skipAllP {
				r.P[j] = math.NaN()
			} else {
				r.P[j] = twoSidedP(r.T[j], df)
			}
		case c == 0:
			r.T[j], r.P[j] = 0, 1
		default:
			r.T[j], r.P[j] = math.Copysign(math.Inf(1), c), 0
		}
	}

	slopes := k
	lost := 0.0 // degrees of freedom in TSS's own centring
	if r.Intercept {
		slopes--
		lost = 1
	}
	switch {
	case slopes == 0 || tss == 0:
		r.R2, r.AdjR2, r.F, r.FP = 0, 0, 0, 1
	case r.RSS == 0:
		r.R2, r.AdjR2, r.F, r.FP = 1, 1, math.Inf(1), 0
	default:
		r.R2 = 1 - r.RSS/tss
		r.AdjR2 = 1 - (1-r.R2)*(n-lost)/df
		r.F = math.Max(0, (tss-r.RSS)/float64(slopes)/s2)
		if slopes == 1 {
			// One slope: F = t², and Pr(F(1, df) > t²) is the slope's
			// two-sided p-value, already computed.
			r.FP = r.P[k-1]
		} else {
			r.FP = upperF(r.F, float64(slopes), df)
		}
	}

	if r.Leverage == nil {
		// A summary fit: its caller computed PRESS, and keeps no arrays.
		r.AIC, r.AICc, r.BIC = gaussianCriteria(r.RSS, r.N, k+1)
		return
	}
	var press float64
	for i, h := range r.Leverage {
		e := r.Residuals[i]
		free := 1 - h
		switch {
		case free < leverageOne:
			r.CooksD[i] = math.Inf(1)
			press = math.Inf(1)
		case s2 == 0:
			r.CooksD[i] = 0
		default:
			r.CooksD[i] = e * e * h / (float64(k) * s2 * free * free)
		}
		if free >= leverageOne {
			press += (e / free) * (e / free)
		}
	}
	r.PRESS = press

	r.AIC, r.AICc, r.BIC = gaussianCriteria(r.RSS, r.N, k+1)
}

// Predict returns the fitted value at new regressor values x0 (one per
// regressor, intercept excluded; empty for Constant) and the standard error
// of a new observation there,
//
//	se = s · sqrt(1 + x0ᵀ(XᵀX)⁻¹x0),
//
// where x0 carries a leading 1 when the model has an intercept. A prediction
// interval is yhat ± TQuantile(α, DF)·se. Predict evaluates both in the centred
// parametrisation the fit was computed in, through r's Terms. It panics when
// len(x0) is not the number of regressors or r was not produced by this
// package.
func (r *Regression) Predict(x0 []float64) (yhat, se float64) {
	return r.Terms().Predict(x0)
}

// PredictionInterval returns the two-sided prediction interval for a new
// observation at regressor values x0 (as for Predict) with coverage level,
//
//	ŷ ± t·se,   t = TQuantile(1 − level, DF),   se = s·sqrt(1 + x0ᵀ(XᵀX)⁻¹x0),
//
// the textbook interval for a normal linear model (common practice; it is
// what statsmodels' get_prediction(...).summary_frame(alpha) reports as
// obs_ci_lower and obs_ci_upper). level 0.95 gives the 95 % interval. A
// perfect fit (s = 0) gives low = high = ŷ. PredictionInterval panics unless
// 0 < level < 1, and as Predict does for a wrong len(x0).
func (r *Regression) PredictionInterval(x0 []float64, level float64) (low, high float64) {
	if !(level > 0 && level < 1) {
		panic(fmt.Sprintf("fit: PredictionInterval level %g: need 0 < level < 1", level))
	}
	yhat, se := r.Predict(x0)
	half := TQuantile(1-level, r.DF) * se
	return yhat - half, yhat + half
}

// TQuantile returns the two-sided critical value of Student's t with df
// degrees of freedom: the t > 0 with Pr(|T_df| > t) = p, i.e. the 1 − p/2
// quantile. TQuantile(0.05, 10) ≈ 2.228. It panics unless 0 < p <= 1 and
// df >= 1.
func TQuantile(p float64, df int) float64 {
	if !(p > 0 && p <= 1) || df < 1 {
		panic(fmt.Sprintf("fit: TQuantile(%g, %d): need 0 < p <= 1 and df >= 1", p, df))
	}
	key := quantileKey{p, df}
	if q, ok := quantiles.Load(key); ok {
		return q.(float64)
	}
	// The lower tail p/2 is passed to the incomplete beta inverse unchanged,
	// where 1 − p/2 would lose the digits of a small p.
	q := math.Abs(distuv.StudentsT{Mu: 0, Sigma: 1, Nu: float64(df)}.Quantile(p / 2))
	quantiles.Store(key, q)
	return q
}

// quantiles remembers TQuantile's values: an analysis asks for the same few
// (a 95 % interval at the window's degrees of freedom) for every object,
// and inverting the incomplete beta function each time took a tenth of the
// time of fitting the object.
var quantiles sync.Map

type quantileKey struct {
	p  float64
	df int
}

// skipAllP tells finishSkipP to leave every p-value out.
const skipAllP = -2

// twoSidedP returns 2·Pr(T_df > |t|).
func twoSidedP(t, df float64) float64 {
	if math.IsInf(t, 0) {
		return 0
	}
	return 2 * distuv.StudentsT{Mu: 0, Sigma: 1, Nu: df}.Survival(math.Abs(t))
}

// upperF returns Pr(F_{d1,d2} > f). It is computed as the lower tail of
// F_{d2,d1} at 1/f, which equals the upper tail without the cancellation of
// 1 − CDF when the p-value is small.
func upperF(f, d1, d2 float64) float64 {
	switch {
	case f <= 0:
		return 1
	case math.IsInf(f, 1):
		return 0
	}
	return distuv.F{D1: d2, D2: d1}.CDF(1 / f)
}

// mean returns the arithmetic mean, refined by the mean of the deviations
// from the first estimate; for constant input it returns that value exactly,
// so that centred values are exactly 0.
func mean(v []float64) float64 {
	var s float64
	constant := true
	for _, x := range v {
		s += x
		constant = constant && x == v[0]
	}
	if constant {
		return v[0]
	}
	n := float64(len(v))
	m := s / n
	var d float64
	for _, x := range v {
		d += x - m
	}
	return m + d/n
}

// norm returns sqrt(Σ(v_i − c)²), scaled by the largest deviation so that it
// neither overflows nor underflows for any finite input.
func norm(v []float64, c float64) float64 {
	var big float64
	for _, x := range v {
		big = math.Max(big, math.Abs(x-c))
	}
	if big == 0 || math.IsInf(big, 0) {
		return big
	}
	var s float64
	for _, x := range v {
		u := (x - c) / big
		s += u * u
	}
	return big * math.Sqrt(s)
}

// centredSumSquares returns Σ(v_i − m)² corrected by the mean deviation.
func centredSumSquares(v []float64, m float64) float64 {
	var d, s float64
	for _, x := range v {
		u := x - m
		d += u
		s += u * u
	}
	return s - d*d/float64(len(v))
}

func sumSquares(v []float64) float64 {
	var s float64
	for _, x := range v {
		s += x * x
	}
	return s
}

func rowNorm(v []float64) float64 { return math.Sqrt(sumSquares(v)) }

// invertUpper returns the inverse of the k×k upper-triangular row-major r,
// column by column by back-substitution.
func invertUpper(r []float64, k int) []float64 {
	inv := make([]float64, k*k)
	for j := 0; j < k; j++ {
		inv[j*k+j] = 1 / r[j*k+j]
		for i := j - 1; i >= 0; i-- {
			var s float64
			for m := i + 1; m <= j; m++ {
				s += r[i*k+m] * inv[m*k+j]
			}
			inv[i*k+j] = -s / r[i*k+i]
		}
	}
	return inv
}

// norm1Upper returns the largest absolute column sum of a k×k upper-triangular
// row-major matrix.
func norm1Upper(a []float64, k int) float64 {
	var best float64
	for j := 0; j < k; j++ {
		var s float64
		for i := 0; i <= j; i++ {
			s += math.Abs(a[i*k+j])
		}
		best = math.Max(best, s)
	}
	return best
}

func coefName(j int, intercept bool) string {
	if intercept {
		if j == 0 {
			return "the intercept"
		}
		return fmt.Sprintf("regressor %d", j-1)
	}
	return fmt.Sprintf("regressor %d", j)
}

func isFinite(v float64) bool { return !math.IsNaN(v) && !math.IsInf(v, 0) }

func checkFinite(v []float64, what string) error {
	for i, x := range v {
		if !isFinite(x) {
			return fmt.Errorf("%s[%d] = %g: %w", what, i, x, ErrNonFinite)
		}
	}
	return nil
}
