package drift

import (
	"errors"
	"fmt"
	"math"

	"github.com/costdrift/costdrift/internal/fit"
	"gonum.org/v1/gonum/stat/distuv"
)

// Errors returned for data the tests cannot be computed on. They are wrapped
// with context; test with errors.Is. Numerical trouble found by the
// regression package (fit.ErrIllConditioned, fit.ErrNonFinite) is passed on
// wrapped as well.
var (
	// ErrTooFewObservations: the trimmed candidate range is empty (each
	// segment needs at least k + 1 observations), or a Chow break leaves a
	// segment with k observations or fewer.
	ErrTooFewObservations = errors.New("drift: too few observations")
	// ErrNoTable: a published table has no entry for the case asked for
	// (Hansen's response surface is embedded for k = 1..3 only; Andrews'
	// table for the trimming, number of restrictions and level it lists).
	ErrNoTable = errors.New("drift: outside the published table")
)

// FStatsResult is the sequence of Chow statistics over the candidate breaks
// and what is read from it. A break i means the first segment holds
// observations 1..i (y[0:i] in Go) and the new behaviour starts at
// observation i+1 (y[i]); this is strucchange's convention ("the last
// observation of the first segment").
type FStatsResult struct {
	N int // observations
	K int // coefficients of the model, intercept included
	// From and To bound the candidate breaks: From = ⌊trim·N⌋, To = N − From,
	// then From raised to K+1 and To lowered to N−K−1 where needed, as
	// strucchange's Fstats does.
	From, To int
	// Lambda = ((N − From)·To) / (From·(N − To)), the trimming parameter of
	// Andrews (1993); Hansen's p-value reads it.
	Lambda float64
	// F[j] is the Wald-scale Chow statistic for the break at From + j:
	//
	//	F_i = (RSS − (RSS1_i + RSS2_i)) / ((RSS1_i + RSS2_i) / (N − 2K))
	F        []float64
	RSS      float64 // no-break residual sum of squares
	SupF     float64 // max_i F_i (Quandt–Andrews)
	Break    int     // the first i attaining SupF: the dated break
	BreakRSS float64 // RSS1 + RSS2 at Break = RSS / (1 + SupF/(N − 2K))
	AveF     float64 // mean_i F_i (Andrews–Ploberger average)
	ExpF     float64 // log(mean_i exp(F_i/2)) (Andrews–Ploberger exponential)
}

// FStats computes the Chow statistic for every candidate break in the
// trimmed range and its supremum, following strucchange's Fstats (Zeileis et
// al. 2002, from memory) with the default covariance: for break i,
//
//	F_i = (RSS − (RSS1_i + RSS2_i)) / ((RSS1_i + RSS2_i)/(n − 2k)),
//
// where RSS is the residual sum of squares of the model on all n
// observations, RSS1_i on observations 1..i and RSS2_i on i+1..n, and k the
// number of coefficients. F_i/k is exactly F(k, n − 2k) for a fixed i under
// normal errors; F_i is on the Wald (χ²_k) scale that Andrews' critical
// values and Hansen's p-values use. The candidates run from
// from = ⌊trim·n⌋ to n − from (from raised to k+1 and to lowered to n−k−1
// when a segment would otherwise have k observations or fewer).
//
// columns[j][i] is regressor j at observation i (none for a mean-only
// model); intercept adds the constant. Each segment is fitted with
// internal/fit (Constant, Line, ThroughOrigin or OLS), so a segment in which
// a regressor is constant returns an error wrapping fit.ErrIllConditioned.
//
// FStats panics when a column's length differs from len(y), when the model
// has no coefficient, or when trim is not in (0, 0.5). It returns an error
// wrapping ErrTooFewObservations when the candidate range is empty.
func FStats(columns [][]float64, y []float64, intercept bool, trim float64) (*FStatsResult, error) {
	n, k := checkModel("FStats", columns, y, intercept)
	from, to, err := candidateRange(n, k, trim)
	if err != nil {
		return nil, err
	}
	full, err := segmentRSS(columns, y, intercept, 0, n)
	if err != nil {
		return nil, fmt.Errorf("fstats: no-break fit: %w", err)
	}
	res := &FStatsResult{
		N: n, K: k, From: from, To: to,
		Lambda: float64((n-from)*to) / float64(from*(n-to)),
		F:      make([]float64, to-from+1),
		RSS:    full,
	}
	df := float64(n - 2*k)
	best := math.Inf(1)
	for i := from; i <= to; i++ {
		r1, err := segmentRSS(columns, y, intercept, 0, i)
		if err != nil {
			return nil, fmt.Errorf("fstats: observations 1..%d: %w", i, err)
		}
		r2, err := segmentRSS(columns, y, intercept, i, n)
		if err != nil {
			return nil, fmt.Errorf("fstats: observations %d..%d: %w", i+1, n, err)
		}
		split := r1 + r2
		f := chowWald(full, split, df)
		res.F[i-from] = f
		// Strictly greater keeps the first maximum, as R's which.max does.
		if i == from || f > res.SupF {
			res.SupF, res.Break = f, i
		}
		best = math.Min(best, split)
	}
	res.BreakRSS = best
	res.AveF, res.ExpF = aveExp(res.F)
	return res, nil
}

// chowWald is (RSS − S)/(S/df) with S = RSS1 + RSS2; a perfect split fit
// (S = 0) of a series the pooled model does not fit gives +Inf.
func chowWald(full, split, df float64) float64 {
	switch {
	case split > 0:
		return (full - split) / (split / df)
	case full > 0:
		return math.Inf(1)
	default:
		return 0
	}
}

// aveExp returns mean(F) and log(mean(exp(F/2))), the latter computed as
// m/2 + log(mean(exp((F − m)/2))) with m = max F so that it does not
// overflow for large statistics.
func aveExp(f []float64) (ave, exp float64) {
	m := math.Inf(-1)
	for _, v := range f {
		ave += v
		m = math.Max(m, v)
	}
	n := float64(len(f))
	ave /= n
	if math.IsInf(m, 1) {
		return math.Inf(1), math.Inf(1)
	}
	var s float64
	for _, v := range f {
		s += math.Exp((v - m) / 2)
	}
	return ave, m/2 + math.Log(s/n)
}

// Chow returns the Chow (1960) test of one break after observation breakAt
// (the first segment holds observations 1..breakAt, y[0:breakAt]):
//
//	F = ((RSS − RSS1 − RSS2)/k) / ((RSS1 + RSS2)/(n − 2k)),   p = Pr(F_{k, n−2k} > F).
//
// This is the F-scale statistic of strucchange's sctest(type = "Chow"), i.e.
// the FStats value at breakAt divided by k; p is exact under normal errors
// for a break date fixed in advance, not for one chosen as the sup-F argmax
// (use SupFPValue for that). Both segments need more than k observations
// (k < breakAt < n − k), else the error wraps ErrTooFewObservations.
//
// Chow panics when breakAt is not in 1..n−1, a column's length differs from
// len(y) or the model has no coefficient.
func Chow(columns [][]float64, y []float64, intercept bool, breakAt int) (F, p float64, err error) {
	n, k := checkModel("Chow", columns, y, intercept)
	if breakAt < 1 || breakAt >= n {
		panic(fmt.Sprintf("drift: Chow break after observation %d of %d", breakAt, n))
	}
	if breakAt <= k || breakAt >= n-k {
		return 0, 0, fmt.Errorf("chow: break after observation %d of %d leaves a segment with %d coefficients or fewer observations: %w",
			breakAt, n, k, ErrTooFewObservations)
	}
	full, err := segmentRSS(columns, y, intercept, 0, n)
	if err != nil {
		return 0, 0, fmt.Errorf("chow: no-break fit: %w", err)
	}
	r1, err := segmentRSS(columns, y, intercept, 0, breakAt)
	if err != nil {
		return 0, 0, fmt.Errorf("chow: observations 1..%d: %w", breakAt, err)
	}
	r2, err := segmentRSS(columns, y, intercept, breakAt, n)
	if err != nil {
		return 0, 0, fmt.Errorf("chow: observations %d..%d: %w", breakAt+1, n, err)
	}
	df := float64(n - 2*k)
	F = chowWald(full, r1+r2, df) / float64(k)
	if math.IsInf(F, 1) {
		return F, 0, nil
	}
	return F, distuv.F{D1: float64(k), D2: df}.Survival(F), nil
}

// checkModel validates the shapes shared by every test and returns n and
// the number of coefficients k.
func checkModel(fn string, columns [][]float64, y []float64, intercept bool) (n, k int) {
	n = len(y)
	for j, c := range columns {
		if len(c) != n {
			panic(fmt.Sprintf("drift: %s column %d has %d values, y has %d", fn, j, len(c), n))
		}
	}
	k = len(columns)
	if intercept {
		k++
	}
	if k == 0 {
		panic(fmt.Sprintf("drift: %s needs a regressor or an intercept", fn))
	}
	return n, k
}

// candidateRange applies strucchange's trimming: from = ⌊trim·n⌋ (the same
// IEEE product R forms), to = n − from, then from ≥ k+1 and to ≤ n−k−1.
func candidateRange(n, k int, trim float64) (from, to int, err error) {
	if !(trim > 0 && trim < 0.5) {
		panic(fmt.Sprintf("drift: trimming %g is not in (0, 0.5)", trim))
	}
	from = int(math.Floor(trim * float64(n)))
	to = n - from
	if from < k+1 {
		from = k + 1
	}
	if to > n-k-1 {
		to = n - k - 1
	}
	if from > to {
		return 0, 0, fmt.Errorf("%d observations leave no candidate break with %d coefficients and trimming %g: %w",
			n, k, trim, ErrTooFewObservations)
	}
	return from, to, nil
}

// segmentRSS fits the model to observations lo..hi−1 with internal/fit and
// returns its residual sum of squares.
func segmentRSS(columns [][]float64, y []float64, intercept bool, lo, hi int) (float64, error) {
	r, err := fitModel(columns, y, intercept, lo, hi)
	if err != nil {
		return 0, err
	}
	return r.RSS, nil
}

// fitModel fits the model to observations lo..hi−1 with internal/fit. The
// closed forms (Constant, Line, ThroughOrigin) are used where they apply
// because they are exact centred sums and allocate no matrices.
func fitModel(columns [][]float64, y []float64, intercept bool, lo, hi int) (*fit.Regression, error) {
	ys := y[lo:hi]
	switch {
	case len(columns) == 0:
		return fit.Constant(ys)
	case len(columns) == 1 && intercept:
		return fit.Line(columns[0][lo:hi], ys)
	case len(columns) == 1:
		return fit.ThroughOrigin(columns[0][lo:hi], ys)
	}
	sub := make([][]float64, len(columns))
	for j, c := range columns {
		sub[j] = c[lo:hi]
	}
	return fit.OLS(sub, ys, intercept)
}
