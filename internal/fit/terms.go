package fit

import (
	"errors"
	"fmt"
	"math"
)

// Terms is what a prediction from a fitted model needs, detached from the
// data it was fitted on: enough to compute, for new regressor values x0,
//
//	ŷ  = Coef · r,   se = S · sqrt(1 + rᵀ·Cov·r),
//
// where r = (1, x0 − Centre) for a model with an intercept and r = x0
// without one, and Cov = (XᵀX)⁻¹ in that parametrisation. With Cov in the
// centred parametrisation a straight line's terms read as the textbook
// formula, se² = S²·(1 + 1/N + (x0 − x̄)²/Sxx). The terms are stored as
// JSON beside a cost formula, so that budgets and variances are computed from
// the store without refitting: the stored form is the domain's
// PredictionTerms, whose fields are these, and a value converts between
// the two types. Stored terms are checked (PredictionTerms.Check) before
// Predict sees them.
type Terms struct {
	Intercept bool      `json:"intercept"`
	Centre    []float64 `json:"centre,omitempty"` // regressor means (with an intercept)
	Coef      []float64 `json:"coef"`             // ŷ at the means first, then the slopes; without an intercept the slopes
	Cov       []float64 `json:"cov"`              // (XᵀX)⁻¹, k×k row-major, in the parametrisation of Coef
	S         float64   `json:"s"`                // residual standard error
	N         int       `json:"n"`                // observations fitted
	DF        int       `json:"df"`               // residual degrees of freedom
	// Levels marks the terms of a step model (StepTerms): the regressors
	// are one indicator per level, not activity.
	Levels bool `json:"levels,omitempty"`
}

// Terms returns the regression's prediction terms. Predict on them gives
// what r.Predict gives.
func (r *Regression) Terms() Terms {
	k := len(r.Coef)
	if k == 0 || len(r.gamma) != k || len(r.factor) != k*k {
		panic("fit: Terms on a Regression not produced by this package")
	}
	t := Terms{Intercept: r.Intercept, Coef: append([]float64(nil), r.gamma...), S: r.ResidualSE, N: r.N, DF: r.DF}
	if r.Intercept && k > 1 {
		t.Centre = append([]float64(nil), r.centre...)
	}
	// factor F is upper triangular with (XᵀX)⁻¹ = F·Fᵀ.
	t.Cov = make([]float64, k*k)
	for i := 0; i < k; i++ {
		for j := 0; j <= i; j++ {
			var s float64
			for m := i; m < k; m++ { // F[i][m] and F[j][m] are zero below the diagonal
				s += r.factor[i*k+m] * r.factor[j*k+m]
			}
			t.Cov[i*k+j], t.Cov[j*k+i] = s, s
		}
	}
	return t
}

// StepTerms returns the prediction terms of a step model: a regression of
// the cost on one indicator per level, without an intercept, so that the
// coefficients are the levels' means and Cov is diag(1/N_g). The residual
// standard error is sqrt(RSS / (N − k)); the breakpoints, chosen from the
// data, are taken as given (the interval is conditional on them). Predict on
// step terms takes the indicator vector of one level, StepRow builds it.
func StepTerms(m StepModel) (Terms, error) {
	k := len(m.Levels)
	n := 0
	for _, l := range m.Levels {
		if l.N < 1 {
			return Terms{}, errors.New("fit: step level without observations")
		}
		n += l.N
	}
	if k == 0 || n <= k {
		return Terms{}, fmt.Errorf("fit: step terms need more observations (%d) than levels (%d)", n, k)
	}
	t := Terms{Coef: make([]float64, k), Cov: make([]float64, k*k), N: n, DF: n - k, Levels: true}
	for g, l := range m.Levels {
		t.Coef[g] = l.Mean
		t.Cov[g*k+g] = 1 / float64(l.N)
	}
	t.S = math.Sqrt(m.RSS / float64(t.DF))
	return t, nil
}

// StepRow is the regressor row that selects level g of k for StepTerms.
func StepRow(g, k int) []float64 {
	row := make([]float64, k)
	row[g] = 1
	return row
}

// Regressors is the number of regressor values Predict takes.
func (t Terms) Regressors() int {
	if t.Intercept {
		return len(t.Coef) - 1
	}
	return len(t.Coef)
}

// Predict returns the fitted value at x0 and the standard error of a new
// observation there (see Terms). It panics when len(x0) is not
// t.Regressors() or the covariance is not k×k.
func (t Terms) Predict(x0 []float64) (yhat, se float64) {
	k := len(t.Coef)
	if len(x0) != t.Regressors() || len(t.Cov) != k*k {
		panic(fmt.Sprintf("fit: Predict got %d regressor values, the model has %d", len(x0), t.Regressors()))
	}
	var buf [8]float64
	row := buf[:0]
	if k > len(buf) {
		row = make([]float64, 0, k)
	}
	if t.Intercept {
		row = append(row, 1)
	}
	for j, v := range x0 {
		if t.Intercept {
			v -= t.Centre[j]
		}
		row = append(row, v)
	}
	var q float64
	for i := 0; i < k; i++ {
		yhat += t.Coef[i] * row[i]
		for j := 0; j < k; j++ {
			q += row[i] * t.Cov[i*k+j] * row[j]
		}
	}
	if q < 0 { // rounding on a nearly singular design
		q = 0
	}
	return yhat, t.S * math.Sqrt(1+q)
}

// Interval returns the two-sided prediction interval with coverage level
// for a new observation at x0, ŷ ± TQuantile(1 − level, DF)·se, and ŷ and
// se. It panics unless 0 < level < 1.
func (t Terms) Interval(x0 []float64, level float64) (low, high, yhat, se float64) {
	if !(level > 0 && level < 1) {
		panic(fmt.Sprintf("fit: Terms.Interval level %g: need 0 < level < 1", level))
	}
	yhat, se = t.Predict(x0)
	half := TQuantile(1-level, t.DF) * se
	return yhat - half, yhat + half, yhat, se
}
