package budget

import (
	"slices"

	"github.com/costdrift/costdrift/internal/costdrift"
)

// AtPrices is b's formula moved from the price level it was fitted at
// (b.PriceBase) to another: every amount in it is multiplied by
//
//	factor = index_to / index_from
//
// (common practice: a cost at constant prices carried to another period's
// prices by the ratio of the index). That is the fixed part, the rates,
// the step levels and the mean, and in the prediction terms the
// coefficients and the residual standard error, so that the budget, its
// standard error and its interval ends all scale by factor. (XᵀX)⁻¹ and
// the activity centres are of the activity, and stay; so do the degrees
// of freedom. b itself is not changed.
func AtPrices(b costdrift.Behaviour, factor float64) costdrift.Behaviour {
	out := b
	out.FixedPerPeriod *= factor
	out.VariableRate *= factor
	out.VariableRate2 *= factor
	out.MeanCost *= factor
	if b.Steps != nil {
		out.Steps = slices.Clone(b.Steps)
		for i := range out.Steps {
			out.Steps[i].Level *= factor
		}
	}
	if b.Prediction != nil {
		t := *b.Prediction
		t.Coef = slices.Clone(t.Coef)
		for i := range t.Coef {
			t.Coef[i] *= factor
		}
		t.S *= factor
		out.Prediction = &t
	}
	return out
}
