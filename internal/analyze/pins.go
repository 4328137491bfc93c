package analyze

import (
	"errors"
	"fmt"
	"sort"

	"github.com/costdrift/costdrift/internal/costdrift"
	"github.com/costdrift/costdrift/internal/fit"
)

// TestPin tests the data against a pinned formula: the model of the pin's
// class is fitted by least squares on the periods given (cost y, the pin's
// driver x; x is ignored without a driver) and the pinned coefficients are
// tested as the true ones with the F test of fit.KnownCoefficients: the
// fixed part of a fixed cost (and the level of a step cost), the rate of a
// variable one through the origin, both of a mixed one. Its p-value counts
// only after ControlPins has weighed every pin of the portfolio. It fails
// when the periods leave no residual degree of freedom.
func TestPin(p costdrift.Pin, x, y []float64) (costdrift.PinTest, error) {
	t := costdrift.PinTest{Pin: p, N: len(y)}
	var r *fit.Regression
	var err error
	predict := func(i int) float64 { return p.Fixed }
	switch p.Class {
	case costdrift.Fixed, costdrift.Step:
		r, err = fit.Constant(y)
	case costdrift.Variable:
		r, err = fit.ThroughOrigin(x, y)
		predict = func(i int) float64 { return p.Rate * x[i] }
	case costdrift.Mixed:
		r, err = fit.Line(x, y)
		predict = func(i int) float64 { return p.Fixed + p.Rate*x[i] }
	default:
		return t, fmt.Errorf("pin of class %q cannot be tested", p.Class)
	}
	if err != nil {
		return t, err
	}
	if r.DF < 1 {
		return t, errors.New("too few periods to test the pin")
	}
	rss := 0.0
	for i := range y {
		d := y[i] - predict(i)
		rss += d * d
	}
	t.F, t.P = fit.KnownCoefficients(rss, r)
	switch p.Class {
	case costdrift.Variable:
		t.DataRate = r.Coef[0]
	case costdrift.Mixed:
		t.DataFixed, t.DataRate = r.Coef[0], r.Coef[1]
	default:
		t.DataFixed = r.Coef[0]
	}
	return t, nil
}

// ControlPins marks the pins the data contradict across the whole
// portfolio: the Benjamini–Hochberg step-up procedure at q over every pin
// tested, as ControlBreaks weighs breaks, so that a portfolio of many pins
// does not raise false contradictions by the number of tests alone. With m
// tests and p₍₁₎ <= … the pins of p₍₁₎ … p₍ⱼ*₎ are contradicted, j* =
// max{ j : p₍ⱼ₎ <= j·q/m }. tests are changed in place; it returns how
// many are contradicted. q <= 0 contradicts none.
func ControlPins(tests []costdrift.PinTest, q float64) int {
	for i := range tests {
		tests[i].Contradicted = false
	}
	m := len(tests)
	if q <= 0 || m == 0 {
		return 0
	}
	order := make([]int, m)
	for i := range order {
		order[i] = i
	}
	sort.SliceStable(order, func(a, b int) bool { return tests[order[a]].P < tests[order[b]].P })
	stand := 0
	for j, i := range order {
		if tests[i].P <= float64(j+1)*q/float64(m) {
			stand = j + 1
		}
	}
	for _, i := range order[:stand] {
		tests[i].Contradicted = true
	}
	return stand
}
