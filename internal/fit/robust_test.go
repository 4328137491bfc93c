package fit

import (
	"errors"
	"math"
	"strings"
	"testing"

	"gonum.org/v1/gonum/stat/distuv"
)

// TestTheilSenByHand: medians of pairwise slopes worked by hand (common
// practice: the textbook definition).
func TestTheilSenByHand(t *testing.T) {
	tests := []struct {
		name             string
		x, y             []float64
		slope, intercept float64
		pairs            int
	}{
		// Slopes of the 6 pairs: (1,2) 2, (1,3) 0.5, (1,4) 3, (2,3) −1,
		// (2,4) 3.5, (3,4) 8; sorted −1, 0.5, 2, 3, 3.5, 8, median 2.5.
		// y − 2.5x = (−1.5, −2, −5.5, 0), median (−2 − 1.5)/2 = −1.75.
		{"four points", []float64{1, 2, 3, 4}, []float64{1, 3, 2, 10}, 2.5, -1.75, 6},
		// x = 1 twice: that pair has no slope. The other 5: 2, 2, 1, 1.5, 2,
		// median 2; y − 2x = (−1, 0, −1, −1), median −1.
		{"tied activity", []float64{1, 1, 2, 3}, []float64{1, 2, 3, 5}, 2, -1, 5},
		// Order does not matter: the first case shuffled.
		{"shuffled", []float64{3, 1, 4, 2}, []float64{2, 1, 10, 3}, 2.5, -1.75, 6},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			got, err := TheilSen(tt.x, tt.y)
			if err != nil {
				t.Fatal(err)
			}
			if got.Slope != tt.slope || got.Intercept != tt.intercept || got.Pairs != tt.pairs {
				t.Errorf("got %+v, want slope %g, intercept %g, %d pairs", got, tt.slope, tt.intercept, tt.pairs)
			}
		})
	}
}

// plantedOutlier is a ground-truth line y = 1000 + 20x with a bounded
// deterministic wiggle of ±8 and one period 600 above the line (invented data).
func plantedOutlier() (x, y []float64) {
	for i := 0; i < 20; i++ {
		v := float64(10 + 2*i)
		x = append(x, v)
		y = append(y, 1000+20*v+8*math.Sin(float64(3*i)))
	}
	y[19] += 600
	return x, y
}

// TestRobustResistOutlier: with one period far off the line, least squares
// tilts (its slope moves by more than 2 per unit) while Theil–Sen and Huber
// stay within 0.5 of the true 20 and Huber weighs the outlier down. Ground
// truth by construction.
func TestRobustResistOutlier(t *testing.T) {
	x, y := plantedOutlier()
	ols, err := Line(x, y)
	if err != nil {
		t.Fatal(err)
	}
	if math.Abs(ols.Coef[1]-20) < 2 {
		t.Fatalf("OLS slope %g: the planted outlier should pull it by more than 2", ols.Coef[1])
	}
	ts, err := TheilSen(x, y)
	if err != nil {
		t.Fatal(err)
	}
	h, err := Huber([][]float64{x}, y)
	if err != nil {
		t.Fatal(err)
	}
	const tol = 0.5
	for _, c := range []struct {
		name  string
		slope float64
	}{{"Theil–Sen", ts.Slope}, {"Huber", h.Coef[1]}} {
		if math.Abs(c.slope-20) > tol {
			t.Errorf("%s slope %g, want 20 ± %g", c.name, c.slope, tol)
		}
	}
	if math.Abs(h.Coef[0]-1000) > 30 {
		t.Errorf("Huber intercept %g, want 1000 ± 30", h.Coef[0])
	}
	if h.Weights[19] > 0.1 {
		t.Errorf("outlier weight %g, want below 0.1", h.Weights[19])
	}
	if h.Iterations < 2 || h.Iterations >= huberMaxIterations {
		t.Errorf("%d iterations", h.Iterations)
	}
}

// TestHuberFixedPoint: the returned estimate is a fixed point of the
// iteration Huber documents. Weights recomputed from the returned residuals
// and scale, w_i = min(1, 1.345/|e_i/σ̂|), give a weighted least-squares fit
// with the same coefficients, and σ̂ is median|e|/Φ⁻¹(3/4) of the returned
// residuals (internal consistency; Φ⁻¹(3/4) from gonum's normal quantile).
func TestHuberFixedPoint(t *testing.T) {
	if want := (distuv.Normal{Mu: 0, Sigma: 1}).Quantile(0.75); math.Abs(madNormal-want) > 1e-15 {
		t.Errorf("madNormal = %.17g, Φ⁻¹(3/4) = %.17g", madNormal, want)
	}
	x, y := plantedOutlier()
	h, err := Huber([][]float64{x}, y)
	if err != nil {
		t.Fatal(err)
	}
	if want := medianAbs(h.Residuals) / madNormal; math.Abs(h.Scale-want) > 1e-12*want {
		t.Errorf("Scale %.15g, median|e|/Φ⁻¹(3/4) = %.15g", h.Scale, want)
	}
	sw := make([]float64, len(y))
	cols := [][]float64{make([]float64, len(y)), make([]float64, len(y))}
	wy := make([]float64, len(y))
	for i, e := range h.Residuals {
		w := math.Min(1, HuberTuning/math.Abs(e/h.Scale))
		sw[i] = math.Sqrt(w)
		cols[0][i], cols[1][i], wy[i] = sw[i], sw[i]*x[i], sw[i]*y[i]
	}
	r, err := OLS(cols, wy, false)
	if err != nil {
		t.Fatal(err)
	}
	for j := range r.Coef {
		// The stopping rule allows fitted values to move by 1e-10·σ̂ in the
		// last step; 1e-8 relative leaves room for that.
		if math.Abs(r.Coef[j]-h.Coef[j]) > 1e-8*math.Abs(h.Coef[j]) {
			t.Errorf("coef %d: Huber %.15g, one more weighted fit %.15g", j, h.Coef[j], r.Coef[j])
		}
	}
	if _, err := huber([][]float64{x}, y, 1); !errors.Is(err, ErrNoConvergence) {
		t.Errorf("one iteration allowed: err = %v, want ErrNoConvergence", err)
	}
}

// TestHuberExactMajority: when most periods lie exactly on one line the
// robust scale shrinks to 0 and the estimate is that line (worked by hand:
// y = 3 + 2x at x = 1..5; a fixed 100 in 11 of 12 periods).
func TestHuberExactMajority(t *testing.T) {
	tests := []struct {
		name    string
		x, y    []float64
		coef    []float64
		weights []float64
	}{
		{"every point on the line", []float64{1, 2, 3, 4, 5, 6}, []float64{5, 7, 9, 11, 13, 15},
			[]float64{3, 2}, []float64{1, 1, 1, 1, 1, 1}},
		{"one point off a sloped line", []float64{1, 2, 3, 4, 5, 6}, []float64{5, 7, 9, 11, 13, 40},
			[]float64{3, 2}, []float64{1, 1, 1, 1, 1, 0}},
		{"fixed cost with one extra charge", []float64{5, 7, 3, 8, 9, 4, 6, 5, 7, 8, 6, 5},
			[]float64{100, 100, 100, 100, 100, 100, 100, 100, 100, 100, 100, 180},
			[]float64{100, 0}, []float64{1, 1, 1, 1, 1, 1, 1, 1, 1, 1, 1, 0}},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			h, err := Huber([][]float64{tt.x}, tt.y)
			if err != nil {
				t.Fatal(err)
			}
			for j, c := range tt.coef {
				if math.Abs(h.Coef[j]-c) > 1e-9*math.Max(1, math.Abs(c)) {
					t.Errorf("coef %d = %.15g, want %g", j, h.Coef[j], c)
				}
			}
			for i, w := range tt.weights {
				if h.Weights[i] != w {
					t.Errorf("weight %d = %g, want %g", i, h.Weights[i], w)
				}
			}
			if h.Scale != 0 {
				t.Errorf("Scale = %g, want 0", h.Scale)
			}
		})
	}
}

func TestRobustErrors(t *testing.T) {
	nan := math.NaN()
	tests := []struct {
		name string
		call func() error
		want error
	}{
		{"Theil–Sen one point", func() error { _, err := TheilSen([]float64{1}, []float64{2}); return err }, ErrTooFewObservations},
		{"Theil–Sen constant activity", func() error {
			_, err := TheilSen([]float64{4, 4, 4}, []float64{1, 2, 3})
			return err
		}, ErrIllConditioned},
		{"Theil–Sen NaN cost", func() error { _, err := TheilSen([]float64{1, 2, 3}, []float64{1, nan, 3}); return err }, ErrNonFinite},
		{"Huber constant activity", func() error {
			_, err := Huber([][]float64{{4, 4, 4, 4}}, []float64{1, 2, 3, 5})
			return err
		}, ErrIllConditioned},
		{"Huber too few", func() error { _, err := Huber([][]float64{{1, 2}}, []float64{1, 2}); return err }, ErrTooFewObservations},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			if err := tt.call(); !errors.Is(err, tt.want) {
				t.Errorf("err = %v, want %v", err, tt.want)
			}
		})
	}
	for _, tt := range []struct {
		name string
		call func()
	}{
		{"Theil–Sen length mismatch", func() { _, _ = TheilSen([]float64{1, 2}, []float64{1}) }},
		{"Huber no regressor", func() { _, _ = Huber(nil, []float64{1, 2, 3}) }},
		{"Huber length mismatch", func() { _, _ = Huber([][]float64{{1, 2}}, []float64{1, 2, 3}) }},
	} {
		t.Run(tt.name, func(t *testing.T) {
			defer func() {
				msg, _ := recover().(string)
				if !strings.HasPrefix(msg, "fit: ") {
					t.Fatalf("recovered %q, want a panic starting with \"fit: \"", msg)
				}
			}()
			tt.call()
		})
	}
}

// TestHuberOneRegressorClosedForm: with one regressor each weighted fit is
// solved in closed form; it agrees with the general QR solve to 1e-12
// relative in coefficients, scale, weights and residuals, in the same
// number of weighted fits (internal consistency; invented data: a planted
// outlier, costs of a million on activity near 5000 with three outliers,
// and a cost identical in most periods).
func TestHuberOneRegressorClosedForm(t *testing.T) {
	px, py := plantedOutlier()
	var bx, by []float64
	for i := 0; i < 36; i++ {
		x := 5000 + 400*math.Sin(float64(7*i))
		bx = append(bx, x)
		by = append(by, 1e6+37.5*x+900*math.Cos(float64(5*i)))
	}
	by[3] += 40000
	by[17] -= 25000
	by[30] += 90000
	fixed := []float64{100, 100, 100, 100, 100, 100, 100, 130, 100, 100, 100, 70}
	fx := []float64{1, 2, 3, 4, 5, 6, 7, 8, 9, 10, 11, 12}
	for _, tc := range []struct {
		name string
		x, y []float64
	}{{"planted outlier", px, py}, {"large costs", bx, by}, {"fixed majority", fx, fixed}} {
		closed, err := irls([][]float64{tc.x}, tc.y, huberMaxIterations, true)
		if err != nil {
			t.Fatalf("%s: %v", tc.name, err)
		}
		general, err := irls([][]float64{tc.x}, tc.y, huberMaxIterations, false)
		if err != nil {
			t.Fatalf("%s: %v", tc.name, err)
		}
		if closed.Iterations != general.Iterations {
			t.Errorf("%s: %d weighted fits in closed form, %d by QR", tc.name, closed.Iterations, general.Iterations)
		}
		near := func(what string, a, b, size float64) {
			if math.Abs(a-b) > 1e-12*size {
				t.Errorf("%s: %s %.17g in closed form, %.17g by QR", tc.name, what, a, b)
			}
		}
		for j := range general.Coef {
			near("coef", closed.Coef[j], general.Coef[j], math.Abs(general.Coef[j]))
		}
		near("scale", closed.Scale, general.Scale, general.Scale)
		var ymax float64
		for _, v := range tc.y {
			ymax = math.Max(ymax, math.Abs(v))
		}
		for i := range general.Residuals {
			near("weight", closed.Weights[i], general.Weights[i], 1)
			near("residual", closed.Residuals[i], general.Residuals[i], ymax)
		}
	}
}
