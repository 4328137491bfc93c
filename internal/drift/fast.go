package drift

import (
	"fmt"
	"math"
)

// SupFLine is FStats for the two models the analysis tests most, computed
// from running sums in O(n) instead of two fits per candidate break:
// y = a + b·x (x non-nil) or y = a (x nil). For a segment the residual sum
// of squares of the line is
//
//	RSS = Syy − Sxy²/Sxx,   Sxx = Σ(x − x̄)², Sxy = Σ(x − x̄)(y − ȳ), Syy = Σ(y − ȳ)²,
//
// and of the mean RSS = Syy. The centred sums come from prefix sums about
// the whole series' means, which keeps the cancellation small for cost data.
// A segment whose activity is constant (Sxx = 0 to 1e-12 of its scale)
// returns an error, as FStats does.
func SupFLine(x, y []float64, trim float64) (*FStatsResult, error) {
	n := len(y)
	k := 1
	if x != nil {
		k = 2
		if len(x) != n {
			panic(fmt.Sprintf("drift: SupFLine x has %d values, y has %d", len(x), n))
		}
	}
	if !(trim > 0 && trim < 0.5) {
		panic(fmt.Sprintf("drift: SupFLine trim %g not in (0, 0.5)", trim))
	}
	from, to, err := candidateRange(n, k, trim)
	if err != nil {
		return nil, err
	}
	// Prefix sums of deviations from the overall means.
	var mx, my float64
	for i := 0; i < n; i++ {
		my += y[i]
		if x != nil {
			mx += x[i]
		}
	}
	mx, my = mx/float64(n), my/float64(n)
	px := make([]float64, n+1)
	py := make([]float64, n+1)
	pxx := make([]float64, n+1)
	pxy := make([]float64, n+1)
	pyy := make([]float64, n+1)
	for i := 0; i < n; i++ {
		dy := y[i] - my
		dx := 0.0
		if x != nil {
			dx = x[i] - mx
		}
		px[i+1] = px[i] + dx
		py[i+1] = py[i] + dy
		pxx[i+1] = pxx[i] + dx*dx
		pxy[i+1] = pxy[i] + dx*dy
		pyy[i+1] = pyy[i] + dy*dy
	}
	rss := func(lo, hi int) (float64, error) {
		m := float64(hi - lo)
		sy := py[hi] - py[lo]
		syy := pyy[hi] - pyy[lo] - sy*sy/m
		if x == nil {
			return math.Max(syy, 0), nil
		}
		sx := px[hi] - px[lo]
		sxx := pxx[hi] - pxx[lo] - sx*sx/m
		sxy := pxy[hi] - pxy[lo] - sx*sy/m
		scale := pxx[hi] - pxx[lo]
		if sxx <= 1e-12*math.Max(scale, 1e-300) || sxx <= 0 {
			return 0, fmt.Errorf("supf: activity is constant in observations %d..%d", lo+1, hi)
		}
		return math.Max(syy-sxy*sxy/sxx, 0), nil
	}
	full, err := rss(0, n)
	if err != nil {
		return nil, err
	}
	res := &FStatsResult{
		N: n, K: k, From: from, To: to,
		Lambda: float64((n-from)*to) / float64(from*(n-to)),
		F:      make([]float64, to-from+1),
		RSS:    full,
	}
	df := float64(n - 2*k)
	best := math.Inf(1)
	for i := from; i <= to; i++ {
		r1, err := rss(0, i)
		if err != nil {
			return nil, err
		}
		r2, err := rss(i, n)
		if err != nil {
			return nil, err
		}
		split := r1 + r2
		f := chowWald(full, split, df)
		res.F[i-from] = f
		if i == from || f > res.SupF {
			res.SupF, res.Break = f, i
		}
		best = math.Min(best, split)
	}
	res.BreakRSS = best
	res.AveF, res.ExpF = aveExp(res.F)
	return res, nil
}
