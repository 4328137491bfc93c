package fit

import (
	"math"
	"testing"
)

// KnownCoefficients against statsmodels 0.13.5 (Debian's /usr/bin/python3):
// sm.OLS(y, X).fit().f_test((np.eye(k), beta0)), fvalue and pvalue.
func TestKnownCoefficients(t *testing.T) {
	sumSq := func(y []float64, f func(i int) float64) float64 {
		s := 0.0
		for i := range y {
			d := y[i] - f(i)
			s += d * d
		}
		return s
	}
	x := []float64{10, 20, 30, 40, 50}
	y := []float64{121, 139, 163, 178, 207}
	constY := []float64{1, 2, 3, 4}
	c, err := Constant(constY)
	if err != nil {
		t.Fatal(err)
	}
	l, err := Line(x, y)
	if err != nil {
		t.Fatal(err)
	}
	o, err := ThroughOrigin(x, y)
	if err != nil {
		t.Fatal(err)
	}
	for _, tc := range []struct {
		name  string
		rss0  float64
		r     *Regression
		wantF float64
		wantP float64
	}{
		// y = 1, 2, 3, 4 against a = 2.
		{"constant", sumSq(constY, func(int) float64 { return 2 }), c, 0.6, 0.49502534605971094},
		// the line against a = 100, b = 2.
		{"line", sumSq(y, func(i int) float64 { return 100 + 2*x[i] }), l, 0.9552429667519238, 0.4775239684795},
		// through the origin against b = 4.
		{"origin", sumSq(y, func(i int) float64 { return 4 * x[i] }), o, 1.559669891509283, 0.27981235450112035},
	} {
		F, p := KnownCoefficients(tc.rss0, tc.r)
		if math.Abs(F-tc.wantF) > 1e-9*tc.wantF || math.Abs(p-tc.wantP) > 1e-9 {
			t.Errorf("%s: F %.15g p %.15g, statsmodels %.15g %.15g", tc.name, F, p, tc.wantF, tc.wantP)
		}
	}
	if F, p := KnownCoefficients(l.RSS, l); F != 0 || p != 1 {
		t.Errorf("the fitted coefficients themselves: F %g p %g, want 0 and 1", F, p)
	}
}
