package analyze

import (
	"math"
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
