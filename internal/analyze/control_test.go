package analyze

import (
	"errors"
	"testing"

	"github.com/costdrift/costdrift/internal/costdrift"
)

// Benjamini–Hochberg worked by hand (Benjamini and Hochberg 1995, the
// step-up rule): 10 objects tested, breaks at p = 0.001, 0.004, 0.02, 0.03;
// at q = 0.05 the bounds j·q/m are 0.005, 0.010, 0.015, 0.020, so the largest
// j with p₍ⱼ₎ <= j·q/m is 2: the first two breaks stand, the other two are
// withdrawn and their objects take their analysis without the break.
func TestControlBreaks(t *testing.T) {
	results := make([]Result, 11)
	ps := map[int]float64{1: 0.03, 4: 0.001, 6: 0.02, 9: 0.004}
	for i := range results {
		o := costdrift.CostObject{Account: "6000", CostCenter: string(rune('A' + i))}
		results[i] = Result{BreakTested: i < 10, Behaviour: costdrift.Behaviour{Object: o, Class: costdrift.Fixed, Since: "2023-07"}}
		if p, ok := ps[i]; ok {
			whole := results[i]
			results[i].Behaviour.Since = "2026-01"
			results[i].Behaviour.Break = &costdrift.Break{Period: "2026-01", P: p}
			results[i].Unbroken = &whole
		}
	}
	results[10].Err = errors.New("cannot add up its costs") // a failed object counts for nothing
	if got := ControlBreaks(results, 0.05); got != 2 {
		t.Errorf("%d breaks withdrawn, want 2", got)
	}
	for i, r := range results {
		_, broke := ps[i]
		stands := broke && (i == 4 || i == 9)
		if (r.Behaviour.Break != nil) != stands {
			t.Errorf("object %d (p %v): break %v, want standing %v", i, ps[i], r.Behaviour.Break, stands)
		}
		if broke && !stands && (r.Behaviour.Since != "2023-07" || r.Unbroken != nil) {
			t.Errorf("object %d: withdrawn break left %+v", i, r)
		}
	}
	if got := ControlBreaks(results, 0); got != 0 {
		t.Errorf("q = 0 withdrew %d breaks", got)
	}
}

// The same worked example held back in a batch: only the four objects with
// a break, the ten tested counted over the whole analysis.
func TestControlBreaksAmong(t *testing.T) {
	var held []Result
	for _, p := range []float64{0.03, 0.001, 0.02, 0.004} {
		whole := Result{BreakTested: true, Behaviour: costdrift.Behaviour{Class: costdrift.Fixed, Since: "2023-07"}}
		r := whole
		r.Behaviour.Break = &costdrift.Break{Period: "2026-01", P: p}
		r.Unbroken = &whole
		held = append(held, r)
	}
	if got := ControlBreaksAmong(held, 10, 0.05); got != 2 {
		t.Errorf("%d breaks withdrawn, want 2", got)
	}
	for i, stands := range []bool{false, true, false, true} {
		if (held[i].Behaviour.Break != nil) != stands {
			t.Errorf("held %d: break %v, want standing %v", i, held[i].Behaviour.Break, stands)
		}
	}
}
