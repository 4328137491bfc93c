package analyze

import (
	"math"
	"math/rand/v2"
	"strings"
	"testing"

	"github.com/costdrift/costdrift/internal/costdrift"
	"github.com/costdrift/costdrift/internal/fit"
)

// interchangeCandidates are three drivers of one invented mixed cost,
// cost = 2000 + 10·a: a itself, b (a scaled by 1.02 with a little noise of
// its own: its line predicts the same costs as a's) and c (unrelated to a:
// its line predicts the mean cost and misses the swings of a by about 9 %
// of the cost, root mean square).
func interchangeCandidates(t *testing.T) (a, b, c *candidate) {
	t.Helper()
	const n = 36
	xa, xb, xc, y := make([]float64, n), make([]float64, n), make([]float64, n), make([]float64, n)
	index := make([]int, n)
	for i := range n {
		f := float64(i)
		xa[i] = 100 + 40*math.Sin(f) + f
		xb[i] = 1.02*xa[i] + 0.5*math.Sin(7*f)
		xc[i] = 100 + 20*math.Cos(2.3*f)
		y[i] = 2000 + 10*xa[i] + 15*math.Cos(3*f)
		index[i] = i
	}
	make1 := func(name string, x []float64) *candidate {
		lin, err := fit.LineSummary(x, y)
		if err != nil {
			t.Fatal(err)
		}
		return &candidate{driver: &costdrift.DriverSeries{Name: name}, x: x, y: y, index: index, linear: lin, meanX: meanOf(x)}
	}
	return make1("a", xa), make1("b", xb), make1("c", xc)
}

// A prior driver whose line predicts the costs the best driver's does stays
// first even when its leave-one-out error is well above the best's: the two
// formulas are interchangeable (InterchangeShare), and switching between
// them is no change of the cost.
func TestPreferPriorInterchangeable(t *testing.T) {
	a, b, c := interchangeCandidates(t)
	if !interchangeable(a, b) || interchangeable(b, c) {
		t.Fatalf("interchangeable(a, b) %v, interchangeable(b, c) %v; want true, false", interchangeable(a, b), interchangeable(b, c))
	}
	a.linear.PRESS = 2 * b.linear.PRESS // far outside StickyPRESS
	got := preferPrior([]*candidate{b, a}, costdrift.Behaviour{Driver: "a", Class: costdrift.Mixed})
	if got[0] != a {
		t.Errorf("prior driver a interchangeable with the best b: first is %s, want a", got[0].driver.Name)
	}
	c.linear.PRESS = 2 * b.linear.PRESS
	got = preferPrior([]*candidate{b, c}, costdrift.Behaviour{Driver: "c", Class: costdrift.Mixed})
	if got[0] != b {
		t.Errorf("prior driver c predicting other costs than the best b: first is %s, want b", got[0].driver.Name)
	}
}

// A prior driver no longer significant at alpha but still at
// alpha·StickySignificance is kept first when the driver that is
// significant predicts the same costs; not when it predicts others.
func TestStickyRankingInterchangeable(t *testing.T) {
	a, b, c := interchangeCandidates(t)
	b.plausible, b.adjustedP, b.rank = true, 0.001, 1
	a.adjustedP = 0.2 // above alpha 0.05, below 0.05·StickySignificance
	got := stickyRanking([]*candidate{b}, []*candidate{a, b}, costdrift.Behaviour{Driver: "a", Class: costdrift.Mixed}, 0.05)
	if len(got) != 2 || got[0] != a || a.rank != 1 || b.rank != 2 {
		names := []string{}
		for _, g := range got {
			names = append(names, g.driver.Name)
		}
		t.Errorf("ranking %v (ranks a %d, b %d), want [a b] (ranks 1, 2)", names, a.rank, b.rank)
	}
	c.adjustedP = 0.2
	b.rank = 1
	got = stickyRanking([]*candidate{b}, []*candidate{b, c}, costdrift.Behaviour{Driver: "c", Class: costdrift.Mixed}, 0.05)
	if len(got) != 1 || got[0] != b {
		t.Errorf("prior c predicting other costs: ranking has %d, first %s; want [b]", len(got), got[0].driver.Name)
	}
}

// flatCandidate is a driver of an invented cost that barely follows it:
// cost = 3000 + 0.5·a, whose line's fitted costs swing by about 0.5 % of
// the cost around their mean.
func flatCandidate(t *testing.T) *candidate {
	t.Helper()
	a, _, _ := interchangeCandidates(t)
	y := make([]float64, len(a.x))
	for i, x := range a.x {
		y[i] = 3000 + 0.5*x + 15*math.Cos(3*float64(i))
	}
	lin, err := fit.LineSummary(a.x, y)
	if err != nil {
		t.Fatal(err)
	}
	orig, err := fit.ThroughOriginSummary(a.x, y)
	if err != nil {
		t.Fatal(err)
	}
	return &candidate{driver: a.driver, x: a.x, y: y, index: a.index, linear: lin, origin: orig, meanX: a.meanX}
}

// With no driver significant, a prior driver whose line predicts the same
// costs as their mean stays, however weak its slope: a small variable part
// fading into the noise does not turn the cost fixed (and back later). A
// line that swings by 9 % of the cost is not kept on a weak slope.
func TestStickyRankingFlatLine(t *testing.T) {
	flat := flatCandidate(t)
	flat.adjustedP = 0.8 // far above alpha·StickySignificance
	got := stickyRanking(nil, []*candidate{flat}, costdrift.Behaviour{Driver: "a", Class: costdrift.Mixed}, 0.05)
	if len(got) != 1 || got[0] != flat {
		t.Errorf("flat prior line: ranking has %d candidates, want it alone", len(got))
	}
	steep, _, _ := interchangeCandidates(t)
	steep.adjustedP = 0.8
	if got := stickyRanking(nil, []*candidate{steep}, costdrift.Behaviour{Driver: "a", Class: costdrift.Mixed}, 0.05); len(got) != 0 {
		t.Errorf("steep prior line on a slope p 0.8: ranking has %d candidates, want none", len(got))
	}
}

// The line rules' class gives way to the prior class when the prior
// class's formula on the same periods predicts the same costs: fixed and
// mixed on a line that barely moves, variable and mixed on a line that
// nearly passes through the origin; not when the costs differ.
func TestSamePrediction(t *testing.T) {
	flat := flatCandidate(t)
	lf := lineFormula{a: flat.linear.Coef[0], slope: flat.linear.Coef[1]}
	mixedOnA := costdrift.Behaviour{Class: costdrift.Mixed, Driver: "a"}
	if !samePrediction(mixedOnA, costdrift.Fixed, flat, lf) {
		t.Error("mixed prior, fixed now, on a line swinging 0.5 % of the cost: want the same prediction")
	}
	if !samePrediction(costdrift.Behaviour{Class: costdrift.Fixed}, costdrift.Mixed, flat, lf) {
		t.Error("fixed prior, mixed now, on a line swinging 0.5 % of the cost: want the same prediction")
	}
	// The flat cost through the origin misses it by far more than 5 %.
	if samePrediction(costdrift.Behaviour{Class: costdrift.Variable, Driver: "a"}, costdrift.Mixed, flat, lf) {
		t.Error("variable prior, mixed now, on a line with a fixed part of nearly all the cost: want different predictions")
	}
	steep, _, _ := interchangeCandidates(t)
	ls := lineFormula{a: steep.linear.Coef[0], slope: steep.linear.Coef[1]}
	if samePrediction(mixedOnA, costdrift.Fixed, steep, ls) {
		t.Error("mixed prior, fixed now, on a line swinging 9 % of the cost: want different predictions")
	}
	if samePrediction(costdrift.Behaviour{Class: costdrift.Mixed, Driver: "b"}, costdrift.Fixed, flat, lf) {
		t.Error("mixed prior on another driver: want no comparison")
	}
}

// A step model that would replace a line on the same driver is kept out
// when its fitted costs are within InterchangeShare of the prior line's (a
// cost barely following its driver, cut into levels); a cost that jumps by
// 40 % at a threshold of its driver becomes a step.
func TestStepLikeLine(t *testing.T) {
	flat := flatCandidate(t)
	sf := fitStep(flat)
	if sf == nil {
		t.Fatal("no step model on the flat cost")
	}
	if !stepLikeLine(costdrift.Behaviour{Class: costdrift.Mixed, Driver: "a"}, flat, sf) {
		t.Error("steps on a cost swinging 0.5 % of itself: want the same prediction as the mixed line")
	}
	a, _, _ := interchangeCandidates(t)
	y := make([]float64, len(a.x))
	for i, x := range a.x {
		y[i] = 2000 + 10*math.Cos(3*float64(i))
		if x >= 110 {
			y[i] += 800
		}
	}
	lin, err := fit.LineSummary(a.x, y)
	if err != nil {
		t.Fatal(err)
	}
	orig, err := fit.ThroughOriginSummary(a.x, y)
	if err != nil {
		t.Fatal(err)
	}
	jump := &candidate{driver: a.driver, x: a.x, y: y, index: a.index, linear: lin, origin: orig, meanX: a.meanX}
	if sf := fitStep(jump); sf == nil || stepLikeLine(costdrift.Behaviour{Class: costdrift.Variable, Driver: "a"}, jump, sf) {
		t.Error("a 40 % jump at a threshold: want a step model that predicts other costs than the variable line")
	}
}

// A mixed cost whose line through the origin predicts the same costs (a
// small fixed part) keeps its class from the prior, and its reason says
// why; with no prior, the line rules alone decide it is variable.
func TestKeptClassReason(t *testing.T) {
	r := rand.New(rand.NewPCG(45, 46))
	x := swingingDriver(r, 36)
	cost := make([]float64, 36)
	for i := range cost {
		cost[i] = 400 + 20*x[i+1] + 300*r.NormFloat64()
	}
	p := onePanel(cost, x)
	plain := Object(p, &p.Objects[0], driftSettings).Behaviour
	if plain.Class != costdrift.Variable {
		t.Fatalf("no prior: class %s (%s), want variable", plain.Class, plain.Reason)
	}
	s := driftSettings
	s.Prior = map[string]costdrift.Behaviour{p.Objects[0].Object.String(): {Object: p.Objects[0].Object, Class: costdrift.Mixed, Driver: "pallets"}}
	kept := Object(p, &p.Objects[0], s).Behaviour
	if kept.Class != costdrift.Mixed || !strings.Contains(kept.Reason, "kept mixed as before: as variable it would predict the same costs") {
		t.Errorf("mixed prior: class %s, reason %q; want mixed, kept as before", kept.Class, kept.Reason)
	}
}
