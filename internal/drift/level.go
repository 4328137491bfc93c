package drift

import (
	"fmt"
	"math"
	"math/rand/v2"

	"gonum.org/v1/gonum/mat"
)

// LevelShiftResult is the sequence of Wald statistics for a shift of the
// level alone (the fixed part), the other coefficients held common on both
// sides, over the candidate breaks, and what is read from it. Break follows
// FStatsResult's convention: the old level holds for y[0:Break], the new one
// from y[Break] on.
type LevelShiftResult struct {
	N int // observations
	K int // coefficients of the model without the shift, intercept included
	// From and To bound the candidate breaks as for FStats with one
	// coefficient that changes.
	From, To int
	// Lambda = ((N − From)·To) / (From·(N − To)), for Hansen's p-value.
	Lambda float64
	F      []float64 // F[j] is the statistic for the break at From + j
	SupF   float64
	Break  int     // the first i attaining SupF
	Shift  float64 // δ, the estimated shift of the level at Break, in y's units
	RSS    float64 // no-break weighted residual sum of squares

	// What the bootstrap reuses: the weighted design's rows, (Z'WZ)⁻¹, the
	// weights, the tail sums S_i = Σ_{t≥i} w_t·z_t·w_t and q_i.
	zw      *mat.Dense
	inverse *mat.Dense
	w       []float64
	q       []float64
	resid   []float64
}

// SupFLevel tests for one shift of the level of y at an unknown period in
// the model y = Z·b + δ·[t >= i] + e with Z the intercept and columns, and
// errors whose spread is proportional to 1/weights (nil: equal spread). It
// is Andrews' (1993) sup-F for partial structural change with one
// coefficient, the intercept, allowed to change: a change of a cost's fixed
// part with the rates kept. With weights w the model is fitted by weighted
// least squares on the rows scaled by w (for costs whose noise grows with
// their level, w = 1/fitted cost: the variance-stabilised test). By the
// Frisch–Waugh theorem, with u the no-break weighted residuals, M the
// projection off the weighted design, d_i the weighted step [t >= i]·w_t:
//
//	c_i = Σ_{t>=i} w_t·u_t,   q_i = d_i'M d_i = Σ_{t>=i} w_t² − S_i'(Z'W²Z)⁻¹S_i,   S_i = Σ_{t>=i} w_t²·z_t
//	F_i = (c_i²/q_i) / ((RSS − c_i²/q_i)/(n − k − 1)),   δ_i = c_i/q_i
//
// F_i is exactly F(1, n − k − 1) for a break fixed in advance under normal
// errors; its supremum over the trimmed range has Andrews' distribution with
// one restriction (AndrewsCritical(1, ...), HansenPValue(..., 1, Lambda)),
// and SupFLevelSignificant gives its residual-bootstrap p-value.
//
// SupFLevel panics when a column or the weights differ in length from y or
// trim is not in (0, 0.5). It returns an error wrapping
// ErrTooFewObservations when the candidate range is empty, and an error
// when a weight is not positive and finite or the design is singular.
func SupFLevel(columns [][]float64, y, weights []float64, trim float64) (*LevelShiftResult, error) {
	n := len(y)
	for j, c := range columns {
		if len(c) != n {
			panic(fmt.Sprintf("drift: SupFLevel column %d has %d values, y has %d", j, len(c), n))
		}
	}
	if weights != nil && len(weights) != n {
		panic(fmt.Sprintf("drift: SupFLevel has %d weights for %d observations", len(weights), n))
	}
	k := len(columns) + 1
	from, to, err := candidateRange(n, 1, trim)
	if err != nil {
		return nil, err
	}
	if n <= k+1 {
		return nil, fmt.Errorf("level shift: %d observations for %d coefficients: %w", n, k+1, ErrTooFewObservations)
	}
	w := make([]float64, n)
	for i := range w {
		w[i] = 1
		if weights != nil {
			w[i] = weights[i]
		}
		if !(w[i] > 0) || math.IsInf(w[i], 0) || math.IsNaN(y[i]) || math.IsInf(y[i], 0) {
			return nil, fmt.Errorf("level shift: observation %d: weight %g, value %g: need a positive weight and a finite value", i+1, w[i], y[i])
		}
	}
	zw := mat.NewDense(n, k, nil)
	yw := mat.NewVecDense(n, nil)
	for i := 0; i < n; i++ {
		zw.Set(i, 0, w[i])
		for j, c := range columns {
			zw.Set(i, j+1, w[i]*c[i])
		}
		yw.SetVec(i, w[i]*y[i])
	}
	var gram, inverse mat.Dense
	gram.Mul(zw.T(), zw)
	if err := inverse.Inverse(&gram); err != nil {
		return nil, fmt.Errorf("level shift: the design is singular: %w", err)
	}
	res := &LevelShiftResult{N: n, K: k, From: from, To: to, w: w, zw: zw, inverse: &inverse,
		Lambda: float64((n-from)*to) / float64(from*(n-to))}
	res.resid = project(zw, &inverse, yw.RawVector().Data)
	res.q = make([]float64, n+1)
	tail := mat.NewVecDense(k, nil)
	var sw2 float64
	for i := n - 1; i >= 1; i-- {
		sw2 += w[i] * w[i]
		for j := 0; j < k; j++ {
			tail.SetVec(j, tail.AtVec(j)+w[i]*zw.At(i, j))
		}
		res.q[i] = sw2 - mat.Inner(tail, &inverse, tail)
	}
	for _, v := range res.resid {
		res.RSS += v * v
	}
	res.F = make([]float64, to-from+1)
	res.SupF, res.Break = supLevel(res, res.resid, res.RSS, res.F)
	c := 0.0
	for t := res.Break; t < n; t++ {
		c += w[t] * res.resid[t]
	}
	res.Shift = c / res.q[res.Break]
	return res, nil
}

// project returns v less its projection on the columns of zw:
// v − Z(Z'Z)⁻¹Z'v, with inverse = (Z'Z)⁻¹.
func project(zw, inverse *mat.Dense, v []float64) []float64 {
	n, _ := zw.Dims()
	vv := mat.NewVecDense(n, append([]float64(nil), v...))
	var zv, coef, fitted mat.VecDense
	zv.MulVec(zw.T(), vv)
	coef.MulVec(inverse, &zv)
	fitted.MulVec(zw, &coef)
	vv.SubVec(vv, &fitted)
	return vv.RawVector().Data
}

// supLevel computes the statistic for every candidate break from the
// no-break weighted residuals u and their sum of squares; f (when not nil)
// receives each. It returns the supremum and the first break attaining it.
func supLevel(r *LevelShiftResult, u []float64, rss float64, f []float64) (float64, int) {
	n := r.N
	df := float64(n - r.K - 1)
	// c_i for every i, from the end.
	c := 0.0
	best, at := math.Inf(-1), r.From
	tails := make([]float64, n+1)
	for t := n - 1; t >= r.From; t-- {
		c += r.w[t] * u[t]
		tails[t] = c
	}
	for i := r.From; i <= r.To; i++ {
		stat := 0.0
		if r.q[i] > 0 {
			explained := tails[i] * tails[i] / r.q[i]
			if rest := rss - explained; rest > 0 {
				stat = explained / (rest / df)
			} else if explained > 0 {
				stat = math.Inf(1)
			}
		}
		if f != nil {
			f[i-r.From] = stat
		}
		if stat > best { // strictly greater keeps the first maximum
			best, at = stat, i
		}
	}
	return best, at
}

// SupFLevelSignificant is the residual-bootstrap p-value of SupFLevel's
// statistic: B replicates of the weighted errors drawn with replacement
// from the centred no-break residuals, each projected off the design and
// searched as the data were; p = (1 + #{sup-F* >= sup-F}) / (B + 1). As
// SupFSignificant, it stops once the p-value is certain to reach level, and
// then returns a lower bound of at least level. The draws depend only on
// seed.
func SupFLevelSignificant(r *LevelShiftResult, replicates int, seed uint64, level float64) float64 {
	if replicates < 0 {
		panic(fmt.Sprintf("drift: %d bootstrap replicates", replicates))
	}
	n := r.N
	e := append([]float64(nil), r.resid...)
	mean := 0.0
	for _, v := range e {
		mean += v / float64(n)
	}
	for i := range e {
		e[i] -= mean
	}
	src := rand.NewPCG(seed, bootstrapStream)
	draw := make([]float64, n)
	exceed := 0
	for b := 0; b < replicates; b++ {
		for i := range draw {
			draw[i] = e[drawIndex(src, n)]
		}
		u := project(r.zw, r.inverse, draw)
		rss := 0.0
		for _, v := range u {
			rss += v * v
		}
		if s, _ := supLevel(r, u, rss, nil); s >= r.SupF {
			exceed++
			if p := float64(exceed+1) / float64(replicates+1); p >= level {
				return p
			}
		}
	}
	return float64(exceed+1) / float64(replicates+1)
}
