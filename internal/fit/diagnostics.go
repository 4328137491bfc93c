package fit

import (
	"fmt"
	"math"
)

// DurbinWatson returns the Durbin–Watson statistic of residuals in time order,
//
//	d = Σ_{t=2..N} (e_t − e_{t−1})² / Σ_{t=1..N} e_t²
//
// (Durbin & Watson 1950, from memory; the definition statsmodels'
// stats.stattools.durbin_watson computes). d ≈ 2 when successive residuals are
// uncorrelated, well below 2 under positive autocorrelation, above 2 under
// negative. Residuals that are all exactly 0 (a perfect fit) carry no evidence
// of autocorrelation, and d is then reported as 2 rather than 0/0. The sums
// are taken on residuals divided by the largest |e_t|, so neither overflows.
//
// DurbinWatson panics when there are fewer than 2 residuals or one is NaN or
// ±Inf: every fit in this package returns finite residuals, so such input is
// a caller's mistake.
func DurbinWatson(residuals []float64) float64 {
	if len(residuals) < 2 {
		panic(fmt.Sprintf("fit: DurbinWatson needs at least 2 residuals, got %d", len(residuals)))
	}
	var big float64
	for t, e := range residuals {
		if !isFinite(e) {
			panic(fmt.Sprintf("fit: DurbinWatson residual %d is %g", t, e))
		}
		big = math.Max(big, math.Abs(e))
	}
	if big == 0 {
		return 2
	}
	var num, den float64
	prev := residuals[0] / big
	den = prev * prev
	for _, e := range residuals[1:] {
		u := e / big
		num += (u - prev) * (u - prev)
		den += u * u
		prev = u
	}
	return num / den
}

// VIF returns the variance inflation factor of each regressor of a design
// with an intercept; columns[j][i] is regressor j at observation i, as for
// OLS. For regressor j,
//
//	VIF_j = 1 / (1 − R²_j),
//
// where R²_j is the centred R² of the least-squares regression of column j
// on an intercept and the other columns (common practice; statsmodels'
// variance_inflation_factor computes the same when the design matrix it is
// given includes the constant column, and its value for the constant column
// itself is not a VIF of a regressor and has no counterpart here). VIF_j is
// also 1/R_jj² for the QR factor of the centred, unit-length design with
// column j placed last, the quantity OLS tests against its rank tolerance.
// With a single regressor there is nothing for it to be collinear with and
// VIF = [1].
//
// VIF panics when there is no column or the columns differ in length. It
// returns an error wrapping ErrTooFewObservations when N <= len(columns),
// ErrNonFinite for NaN or ±Inf input, and ErrIllConditioned when a column is
// constant or is within OLS's rank tolerance of a linear combination of the
// others (sqrt(1 − R²_j) < 1e-7, i.e. VIF_j > 1e14).
func VIF(columns [][]float64) ([]float64, error) {
	p := len(columns)
	if p == 0 {
		panic("fit: VIF needs at least one regressor")
	}
	n := len(columns[0])
	for j, c := range columns {
		if len(c) != n {
			panic(fmt.Sprintf("fit: VIF column %d has %d values, column 0 has %d", j, len(c), n))
		}
	}
	if n <= p {
		return nil, fmt.Errorf("vif: %d observations for %d regressors and an intercept: %w", n, p, ErrTooFewObservations)
	}
	for j, c := range columns {
		if err := checkFinite(c, fmt.Sprintf("regressor %d", j)); err != nil {
			return nil, fmt.Errorf("vif: %w", err)
		}
	}
	out := make([]float64, p)
	others := make([][]float64, 0, p-1)
	for j, c := range columns {
		m := mean(c)
		if norm(c, m) < rankTolerance*norm(c, 0) {
			return nil, fmt.Errorf("vif: regressor %d is constant: %w", j, ErrIllConditioned)
		}
		if p == 1 {
			out[j] = 1
			continue
		}
		others = others[:0]
		others = append(others, columns[:j]...)
		others = append(others, columns[j+1:]...)
		r, err := OLS(others, c, true)
		if err != nil {
			return nil, fmt.Errorf("vif: regressor %d on the others: %w", j, err)
		}
		// 1 − R²_j = RSS_j / TSS_j, taken directly so that a VIF in the
		// millions keeps its digits.
		unexplained := r.RSS / centredSumSquares(c, m)
		if math.Sqrt(unexplained) < rankTolerance {
			return nil, fmt.Errorf("vif: regressor %d is a linear combination of the others (1 − R² = %.3g): %w",
				j, unexplained, ErrIllConditioned)
		}
		out[j] = 1 / unexplained
	}
	return out, nil
}

// PartialF tests whether the coefficients that full has and reduced lacks
// are all zero, for nested least-squares fits of the same y (reduced's
// regressors a subset of full's):
//
//	F = ((RSS_r − RSS_f) / q) / (RSS_f / DF_f),   q = k_f − k_r,
//	p = Pr(F_{q, DF_f} > F)
//
// (the extra-sum-of-squares F test, common practice; statsmodels'
// compare_f_test and R's anova(reduced, full) compute the same). With
// reduced = Constant(y) and full an intercept model, F equals full.F. A
// difference RSS_r − RSS_f below 0 is rounding and gives F = 0, p = 1; a
// perfect full fit gives F = +Inf, p = 0 (F = 0, p = 1 when reduced is
// perfect too).
//
// PartialF cannot see the regressors, so nesting is the caller's promise. It
// panics when either fit is nil or not produced by this package, when the
// two have different N, or when full does not have more coefficients than
// reduced.
func PartialF(full, reduced *Regression) (F, p float64) {
	if full == nil || reduced == nil || len(full.Coef) == 0 || len(reduced.Coef) == 0 {
		panic("fit: PartialF needs two fitted regressions")
	}
	if full.N != reduced.N {
		panic(fmt.Sprintf("fit: PartialF full model has %d observations, reduced %d", full.N, reduced.N))
	}
	q := len(full.Coef) - len(reduced.Coef)
	if q <= 0 {
		panic(fmt.Sprintf("fit: PartialF full model has %d coefficients, reduced %d: full must have more",
			len(full.Coef), len(reduced.Coef)))
	}
	extra := reduced.RSS - full.RSS
	switch {
	case extra <= 0:
		return 0, 1
	case full.RSS == 0:
		return math.Inf(1), 0
	}
	F = (extra / float64(q)) / (full.RSS / float64(full.DF))
	return F, upperF(F, float64(q), float64(full.DF))
}

// KnownCoefficients tests whether a model's true coefficients are the
// given ones, from the residual sum of squares rssKnown of those
// coefficients on the same data as the least-squares fit r:
//
//	F = ((RSS_0 − RSS) / k) / (RSS / DF),   k = len(r.Coef),
//	p = Pr(F_{k, DF} > F)
//
// (the F test of the linear hypothesis β = β₀ with the identity as its
// restriction matrix, common practice; statsmodels' f_test((I, β₀))
// computes the same). A difference below 0 is rounding and gives F = 0,
// p = 1; a perfect fit r with rssKnown above it gives F = +Inf, p = 0. It
// panics when r is nil or has no residual degrees of freedom.
func KnownCoefficients(rssKnown float64, r *Regression) (F, p float64) {
	if r == nil || len(r.Coef) == 0 || r.DF < 1 {
		panic("fit: KnownCoefficients needs a fitted regression with residual degrees of freedom")
	}
	k := len(r.Coef)
	extra := rssKnown - r.RSS
	switch {
	case extra <= 0:
		return 0, 1
	case r.RSS == 0:
		return math.Inf(1), 0
	}
	F = (extra / float64(k)) / (r.RSS / float64(r.DF))
	return F, upperF(F, float64(k), float64(r.DF))
}
