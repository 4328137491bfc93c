package analyze

import "github.com/costdrift/costdrift/internal/fit"

func regressionWithSlopeP(p float64) *fit.Regression {
	return &fit.Regression{Coef: []float64{0, 1}, P: []float64{1, p}}
}
