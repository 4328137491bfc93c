package analyze

import (
	"gonum.org/v1/gonum/stat/distuv"

	"github.com/costdrift/costdrift/internal/fit"
)

// regressionWithSlopeP is a straight line on 22 periods whose slope has
// two-sided p-value p: its t statistic is the Student t quantile that
// gives p, as adjust orders candidates by |t| when their degrees of
// freedom agree.
func regressionWithSlopeP(p float64) *fit.Regression {
	const df = 20
	t := distuv.StudentsT{Mu: 0, Sigma: 1, Nu: df}.Quantile(1 - p/2)
	return &fit.Regression{Coef: []float64{0, 1}, StdErr: []float64{1, 1 / t}, T: []float64{0, t}, P: []float64{1, p},
		N: df + 2, DF: df, Intercept: true}
}
