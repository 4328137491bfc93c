package costdrift

import (
	"errors"
	"fmt"
	"math"
)

// PredictionTerms are a cost formula's prediction terms as the store keeps
// them beside the formula: what a prediction from the fitted model needs,
// detached from the data it was fitted on, so that budgets and variances
// come from the store without refitting. For new regressor values x0,
//
//	ŷ  = Coef · r,   se = S · sqrt(1 + rᵀ·Cov·r),
//
// where r = (1, x0 − Centre) for a model with an intercept and r = x0
// without one, and Cov = (XᵀX)⁻¹ in that parametrisation (centred, so that
// a straight line's terms read as the textbook formula).
//
// The fit package computes the terms and predicts from them with its own
// type, fit.Terms, which has exactly these fields: a value converts
// between the two types, fit.Terms(t) and PredictionTerms(t), and the
// conversion stops compiling if either type gains a field the other lacks.
type PredictionTerms struct {
	Intercept bool      `json:"intercept"`
	Centre    []float64 `json:"centre,omitempty"` // regressor means (with an intercept)
	Coef      []float64 `json:"coef"`             // ŷ at the means first, then the slopes; without an intercept the slopes
	Cov       []float64 `json:"cov"`              // (XᵀX)⁻¹, k×k row-major, in the parametrisation of Coef
	S         float64   `json:"s"`                // residual standard error
	N         int       `json:"n"`                // observations fitted
	DF        int       `json:"df"`               // residual degrees of freedom
	// Levels marks the terms of a step model: the regressors are one
	// indicator per level, not activity.
	Levels bool `json:"levels,omitempty"`
}

// Check reports whether the terms are complete and consistent: the sizes
// agree, the numbers are finite and DF >= 1. The store keeps only terms
// that pass, and terms read back from it are checked before use.
func (t PredictionTerms) Check() error {
	k := len(t.Coef)
	switch {
	case k == 0:
		return errors.New("prediction terms without coefficients")
	case len(t.Cov) != k*k:
		return fmt.Errorf("prediction terms: %d coefficients but %d covariance entries", k, len(t.Cov))
	case t.Intercept && len(t.Centre) != k-1:
		return fmt.Errorf("prediction terms: %d coefficients but %d centres", k, len(t.Centre))
	case !t.Intercept && len(t.Centre) != 0:
		return errors.New("prediction terms: centres without an intercept")
	case t.DF < 1:
		return fmt.Errorf("prediction terms: %d residual degrees of freedom", t.DF)
	case !(t.S >= 0) || math.IsInf(t.S, 0):
		return fmt.Errorf("prediction terms: residual standard error %g", t.S)
	}
	for _, v := range append(append(append([]float64(nil), t.Coef...), t.Cov...), t.Centre...) {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return errors.New("prediction terms hold a number that is not finite")
		}
	}
	return nil
}
