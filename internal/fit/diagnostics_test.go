package fit

import (
	"errors"
	"math"
	"strings"
	"testing"
)

// TestDurbinWatson: hand-worked vectors, the raw-series vector of
// statsmodels' test_statstools.py test_durbin_watson (benchmarks from R
// car::durbinWatsonTest), and the Longley OLS residuals (2.5594876892815
// recomputed from the NIST certified fit; 2.559 in statsmodels' printed
// summary).
func TestDurbinWatson(t *testing.T) {
	x := []float64{-0.1184, -1.3403, 0.0063, -0.612, -0.3869, -0.2313, -2.8485, -0.2167, 0.4153, 1.8492,
		-0.3706, 0.9726, -0.1501, -0.0337, -1.4423, 1.2489, 0.9182, -0.2331, -0.6182, 0.183}
	squared := make([]float64, len(x))
	for i, v := range x {
		squared[i] = v * v
	}
	lagged := make([]float64, len(x)-1) // R's x[2:20] + 0.5·x[1:19]
	for i := range lagged {
		lagged[i] = x[i+1] + 0.5*x[i]
	}
	l := readStRD(t, "Longley")
	longley, err := OLS(l.x, l.y, true)
	if err != nil {
		t.Fatal(err)
	}
	tests := []struct {
		name      string
		residuals []float64
		want      float64
		tol       float64 // relative
	}{
		// Σ(Δe)² = 4 + 4 + 4, Σe² = 4 → 3 (by hand).
		{"alternating", []float64{1, -1, 1, -1}, 3, 1e-15},
		// Σ(Δe)² = 1 + 1, Σe² = 1 + 4 + 9 → 1/7 (by hand).
		{"trend", []float64{1, 2, 3}, 1.0 / 7, 1e-15},
		{"statsmodels x", x, 1.95298958377419, 1e-13},
		{"statsmodels x²", squared, 1.848802400319998, 1e-13},
		{"statsmodels x[2:20] + 0.5·x[1:19]", lagged, 1.09897993228779, 1e-13},
		{"Longley OLS residuals", longley.Residuals, 2.5594876892815, 1e-12},
		// No residual, no evidence of autocorrelation: 2 by convention.
		{"perfect fit", []float64{0, 0, 0}, 2, 0},
	}
	for _, tt := range tests {
		if got := DurbinWatson(tt.residuals); math.Abs(got-tt.want) > tt.tol*tt.want {
			t.Errorf("%s: DW = %.15g, want %.15g", tt.name, got, tt.want)
		}
	}
}

// TestVIFByHand: with two regressors R²_j is the squared correlation r², so
// VIF = 1/(1 − r²) for both. x1 = (1..5), x2 = (2, 1, 4, 3, 5): deviations
// (−2, −1, 0, 1, 2) and (−1, −2, 1, 0, 2), Sxy = 8, Sxx = Syy = 10, r = 0.8,
// VIF = 1/0.36 (by hand).
func TestVIFByHand(t *testing.T) {
	x1 := []float64{1, 2, 3, 4, 5}
	x2 := []float64{2, 1, 4, 3, 5}
	got, err := VIF([][]float64{x1, x2})
	if err != nil {
		t.Fatal(err)
	}
	for j, v := range got {
		if math.Abs(v-1/0.36) > 1e-12 {
			t.Errorf("VIF[%d] = %.15g, want %.15g", j, v, 1/0.36)
		}
	}
	one, err := VIF([][]float64{x1})
	if err != nil || len(one) != 1 || one[0] != 1 {
		t.Errorf("one regressor: %v, %v; want [1]", one, err)
	}
	shifted := []float64{5, 7, 9, 11, 13} // 2·x1 + 3
	for _, tt := range []struct {
		name    string
		columns [][]float64
		want    error
	}{
		{"collinear", [][]float64{x1, shifted}, ErrIllConditioned},
		{"constant", [][]float64{x1, {3, 3, 3, 3, 3}}, ErrIllConditioned},
		{"too few", [][]float64{{1, 2}, {2, 1}}, ErrTooFewObservations},
		{"NaN", [][]float64{x1, {1, 2, math.NaN(), 4, 5}}, ErrNonFinite},
	} {
		if _, err := VIF(tt.columns); !errors.Is(err, tt.want) {
			t.Errorf("%s: err = %v, want %v", tt.name, err, tt.want)
		}
	}
}

// TestPartialFAgainstModelF: with the constant as the reduced model the
// partial F test is the regression's overall F test, so F must equal the
// NIST certified ANOVA F (Norris.dat and Longley.dat, "Regression" row) and
// p must equal the fit's FP.
func TestPartialFAgainstModelF(t *testing.T) {
	for _, tt := range []struct {
		name  string
		file  string
		fit   func(d strd) (*Regression, error)
		tol   float64 // relative
		pTol  float64
		wantQ int
	}{
		{"Norris line", "Norris", func(d strd) (*Regression, error) { return Line(d.x[0], d.y) }, 1e-9, 1e-12, 1},
		{"Longley six regressors", "Longley", func(d strd) (*Regression, error) { return OLS(d.x, d.y, true) }, 1e-9, 1e-12, 6},
	} {
		t.Run(tt.name, func(t *testing.T) {
			d := readStRD(t, tt.file)
			full, err := tt.fit(d)
			if err != nil {
				t.Fatal(err)
			}
			constant, err := Constant(d.y)
			if err != nil {
				t.Fatal(err)
			}
			F, p := PartialF(full, constant)
			if math.Abs(F-d.f) > tt.tol*d.f {
				t.Errorf("F = %.15g, NIST certified %.15g", F, d.f)
			}
			if math.Abs(F-full.F) > 1e-12*full.F {
				t.Errorf("F = %.15g, full model's F %.15g", F, full.F)
			}
			if math.Abs(p-full.FP) > tt.pTol*math.Max(full.FP, 1e-300) {
				t.Errorf("p = %.15g, full model's FP %.15g", p, full.FP)
			}
		})
	}
}

// TestPartialFEdges: a perfect full fit and a reduced model that fits as
// well (worked by hand from the definitions in PartialF's doc comment).
func TestPartialFEdges(t *testing.T) {
	x := []float64{1, 2, 3, 4}
	exact, err := Line(x, []float64{5, 7, 9, 11})
	if err != nil {
		t.Fatal(err)
	}
	c, err := Constant([]float64{5, 7, 9, 11})
	if err != nil {
		t.Fatal(err)
	}
	if F, p := PartialF(exact, c); !math.IsInf(F, 1) || p != 0 {
		t.Errorf("perfect full fit: F, p = %g, %g; want +Inf, 0", F, p)
	}
	flat := []float64{3, 3, 3, 3}
	l, _ := Line(x, flat)
	cf, _ := Constant(flat)
	if F, p := PartialF(l, cf); F != 0 || p != 1 {
		t.Errorf("nothing to explain: F, p = %g, %g; want 0, 1", F, p)
	}
}

// TestPredictionInterval: the interval is ŷ ± t·se with Predict's ŷ and se
// and TQuantile's t (the definition), and on the machine-shop example of
// ExampleLine worked by hand: s² = 2 750/3, at 150 hours
// se² = s²·(1 + 1/5 + 10²/4 000) = s²·1.225, t(0.05, 3) = 3.1824463052837095
// (mpmath 1.2.1 at 40 digits; printed t tables give 3.182).
func TestPredictionInterval(t *testing.T) {
	r, err := Line([]float64{100, 120, 140, 160, 180}, []float64{2600, 2950, 3200, 3500, 3850})
	if err != nil {
		t.Fatal(err)
	}
	low, high := r.PredictionInterval([]float64{150}, 0.95)
	half := 3.1824463052837095 * math.Sqrt(2750.0/3*1.225)
	const tol = 1e-9 // relative
	if math.Abs(low-(3372.5-half)) > tol*3372.5 || math.Abs(high-(3372.5+half)) > tol*3372.5 {
		t.Errorf("interval (%.12g, %.12g), want 3372.5 ∓ %.12g", low, high, half)
	}
	yhat, se := r.Predict([]float64{150})
	tq := TQuantile(1-0.95, r.DF)
	if low != yhat-tq*se || high != yhat+tq*se {
		t.Errorf("interval (%.17g, %.17g) is not ŷ ∓ t·se = (%.17g, %.17g)", low, high, yhat-tq*se, yhat+tq*se)
	}
	exact, _ := Line([]float64{1, 2, 3, 4}, []float64{5, 7, 9, 11})
	if lo, hi := exact.PredictionInterval([]float64{10}, 0.9); lo != 23 || hi != 23 {
		t.Errorf("perfect fit: interval (%g, %g), want (23, 23)", lo, hi)
	}
}

func TestDiagnosticsMisusePanics(t *testing.T) {
	line, err := Line([]float64{1, 2, 3, 4}, []float64{2, 1, 4, 3})
	if err != nil {
		t.Fatal(err)
	}
	other, err := Line([]float64{1, 2, 3, 4, 5}, []float64{2, 1, 4, 3, 5})
	if err != nil {
		t.Fatal(err)
	}
	c, err := Constant([]float64{2, 1, 4, 3})
	if err != nil {
		t.Fatal(err)
	}
	for _, tt := range []struct {
		name string
		call func()
	}{
		{"DurbinWatson one residual", func() { DurbinWatson([]float64{1}) }},
		{"DurbinWatson NaN", func() { DurbinWatson([]float64{1, math.NaN()}) }},
		{"VIF no columns", func() { _, _ = VIF(nil) }},
		{"VIF length mismatch", func() { _, _ = VIF([][]float64{{1, 2, 3}, {1, 2}}) }},
		{"PartialF different N", func() { PartialF(other, c) }},
		{"PartialF reversed", func() { PartialF(c, line) }},
		{"PartialF nil", func() { PartialF(line, nil) }},
		{"PredictionInterval level 1", func() { line.PredictionInterval([]float64{2}, 1) }},
		{"PredictionInterval level 0", func() { line.PredictionInterval([]float64{2}, 0) }},
		{"PredictionInterval wrong length", func() { line.PredictionInterval(nil, 0.95) }},
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
