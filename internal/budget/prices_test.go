package budget

import (
	"math"
	"testing"

	"github.com/costdrift/costdrift/internal/costdrift"
)

// TestAtPrices: a formula moved to another price level budgets factor
// times as much, with a standard error and interval ends factor times as
// large and the same degrees of freedom (index ratio, common practice);
// the formula it came from is unchanged.
func TestAtPrices(t *testing.T) {
	mixed := costdrift.Behaviour{Object: costdrift.CostObject{Account: "6200", CostCenter: "WELD"}, Class: costdrift.Mixed,
		Driver: "machine_hours", FixedPerPeriod: 4210.5, VariableRate: 1.875, RangeMin: 500, RangeMax: 1500, PriceBase: "2026-06",
		Prediction: &costdrift.PredictionTerms{Intercept: true, Centre: []float64{900.5}, Coef: []float64{5898.94, 1.875},
			Cov: []float64{1.0 / 35, 0, 0, 1.25e-6}, S: 80.5, N: 35, DF: 33}}
	step := costdrift.Behaviour{Object: costdrift.CostObject{Account: "6300", CostCenter: "ASSY"}, Class: costdrift.Step, Driver: "orders",
		Steps:      []costdrift.StepLevel{{From: 40, To: 95, Level: 3000}, {From: 96, To: 160, Level: 4500}},
		Prediction: &costdrift.PredictionTerms{Coef: []float64{3000, 4500}, Cov: []float64{1.0 / 12, 0, 0, 1.0 / 18}, S: 60, N: 30, DF: 28, Levels: true}}
	const factor = 1.0512712 // e.g. an index of 105.12712 at the budget's period over 100 at the formula's
	for _, tc := range []struct {
		b costdrift.Behaviour
		x float64
	}{{mixed, 1000}, {step, 120}} {
		before, err := Evaluate(&tc.b, tc.x, 0)
		if err != nil {
			t.Fatal(err)
		}
		moved := AtPrices(tc.b, factor)
		after, err := Evaluate(&moved, tc.x, 0)
		if err != nil {
			t.Fatal(err)
		}
		for _, v := range []struct {
			what        string
			got, before float64
		}{{"budget", after.Value, before.Value}, {"se", after.SE, before.SE}, {"low 95", after.Low95, before.Low95},
			{"high 95", after.High95, before.High95}, {"low 80", after.Low80, before.Low80}} {
			if math.Abs(v.got-factor*v.before) > 1e-9*math.Abs(v.before) {
				t.Errorf("%s %s at the new prices %.10g, want %.10g (factor × %.10g)", tc.b.Object, v.what, v.got, factor*v.before, v.before)
			}
		}
		if after.DF != before.DF {
			t.Errorf("%s degrees of freedom %v, want %v", tc.b.Object, after.DF, before.DF)
		}
	}
	if mixed.FixedPerPeriod != 4210.5 || mixed.Prediction.Coef[0] != 5898.94 || step.Steps[1].Level != 4500 {
		t.Errorf("AtPrices changed the formula it was given")
	}
}
