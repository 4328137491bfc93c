package fit

import (
	"math"
	"math/rand/v2"
	"testing"
)

// same reports whether a and b are the same float64, NaN equal to NaN.
func same(a, b float64) bool { return a == b || (math.IsNaN(a) && math.IsNaN(b)) }

// sameFit compares two summary fits field by field, bit for bit, but for
// the p-values the screen leaves out (skipP, or all with skipAllP) and FP
// when it is one of them; those must be NaN, and CoefTP must give them.
func sameFit(t *testing.T, label string, got, want *Regression, skipP int) {
	t.Helper()
	scalars := []struct {
		name string
		g, w float64
	}{
		{"RSS", got.RSS, want.RSS}, {"ResidualSE", got.ResidualSE, want.ResidualSE}, {"R2", got.R2, want.R2},
		{"AdjR2", got.AdjR2, want.AdjR2}, {"F", got.F, want.F}, {"PRESS", got.PRESS, want.PRESS},
		{"AIC", got.AIC, want.AIC}, {"AICc", got.AICc, want.AICc}, {"BIC", got.BIC, want.BIC},
	}
	if skipP != len(want.Coef)-1 && skipP != skipAllP {
		scalars = append(scalars, struct {
			name string
			g, w float64
		}{"FP", got.FP, want.FP})
	}
	for _, s := range scalars {
		if !same(s.g, s.w) {
			t.Errorf("%s: %s = %v, want %v", label, s.name, s.g, s.w)
		}
	}
	if got.N != want.N || got.DF != want.DF || got.Intercept != want.Intercept {
		t.Errorf("%s: N, DF, Intercept = %d %d %v, want %d %d %v", label, got.N, got.DF, got.Intercept, want.N, want.DF, want.Intercept)
	}
	for j := range want.Coef {
		if !same(got.Coef[j], want.Coef[j]) || !same(got.StdErr[j], want.StdErr[j]) || !same(got.T[j], want.T[j]) {
			t.Errorf("%s: coefficient %d: %v ± %v (t %v), want %v ± %v (t %v)", label, j, got.Coef[j], got.StdErr[j], got.T[j], want.Coef[j], want.StdErr[j], want.T[j])
		}
		p := got.P[j]
		if j == skipP || skipP == skipAllP {
			if !math.IsNaN(p) && got.StdErr[j] > 0 {
				t.Errorf("%s: P[%d] = %v, want it left out (NaN)", label, j, p)
			}
			_, p = CoefTP(got.Coef[j], got.StdErr[j], got.DF)
		}
		if !same(p, want.P[j]) {
			t.Errorf("%s: P[%d] = %v, want %v", label, j, p, want.P[j])
		}
	}
	// Predict relies on the centred parametrisation.
	if g, w := got.Terms(), want.Terms(); len(g.Coef) != len(w.Coef) {
		t.Errorf("%s: terms differ: %+v, want %+v", label, g, w)
	}
}

// The screen is LineSummary and ThroughOriginSummary bit for bit, with the
// p-values it leaves out given by CoefTP, on random data (costs of every
// scale, offsets, constant and near-constant activity, perfect fits, few
// points) and on the NIST StRD data sets Norris and NoInt1 (the same
// files TestNISTStRD checks against their certified values).
func TestScreenIsLineSummary(t *testing.T) {
	r := rand.New(rand.NewPCG(41, 42))
	fitted := 0
	check := func(label string, x, y []float64) {
		t.Helper()
		lx, ly := NewLineX(x), NewLineY(y)
		want, werr := LineSummary(x, y)
		got, gerr := lx.Screen(ly)
		if (werr == nil) != (gerr == nil) {
			t.Fatalf("%s: Screen error %v, LineSummary error %v", label, gerr, werr)
		}
		if werr == nil {
			fitted++
			sameFit(t, label+" line", got, want, skipAllP)
			if got.StdErr[1] > 0 && !math.IsNaN(got.FP) {
				t.Errorf("%s line: FP = %v, want it left out (NaN) like the slope's p-value", label, got.FP)
			}
		}
		want, werr = ThroughOriginSummary(x, y)
		got, gerr = lx.ScreenOrigin(ly)
		if (werr == nil) != (gerr == nil) {
			t.Fatalf("%s: ScreenOrigin error %v, ThroughOriginSummary error %v", label, gerr, werr)
		}
		if werr == nil {
			sameFit(t, label+" origin", got, want, 0)
		}
	}
	for i := range 3000 {
		n := 2 + r.IntN(40)
		x, y := make([]float64, n), make([]float64, n)
		scale := math.Pow(10, float64(r.IntN(12)-3))
		offset := 0.0
		if r.IntN(3) == 0 {
			offset = scale * math.Pow(10, float64(r.IntN(9)))
		}
		a, b := r.NormFloat64()*1000, r.NormFloat64()*10
		noise := []float64{0, 1e-9, 0.01, 1, 100}[r.IntN(5)]
		for j := range x {
			x[j] = offset + scale*r.Float64()
			y[j] = a + b*x[j] + noise*r.NormFloat64()*math.Abs(a+1)
		}
		switch r.IntN(10) {
		case 0:
			for j := range x {
				x[j] = x[0] // constant activity
			}
		case 1:
			for j := range y {
				y[j] = y[0] // constant cost
			}
		case 2:
			x[r.IntN(n)] = math.Inf(1)
		case 3:
			for j := range x {
				x[j] = math.Round(x[j]) // ties
			}
		case 4:
			for j := range x {
				x[j] = 0 // all zero
			}
		}
		check("random "+string(rune('A'+i%26)), x, y)
	}
	for _, name := range []string{"Norris", "NoInt1", "NoInt2"} {
		d := readStRD(t, name)
		check(name, d.x[0], d.y)
	}
	if fitted < 1500 {
		t.Errorf("only %d of the data sets could be fitted; the comparison needs most of them", fitted)
	}
}
