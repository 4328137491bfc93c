package drift

import (
	"math"
	"math/rand/v2"
	"testing"

	"github.com/costdrift/costdrift/internal/fit"
)

// SupFLevel's statistic at every candidate equals the Wald F of the shift
// dummy computed directly: (RSS0 − RSS1)/(RSS1/(n − k − 1)) with RSS0 the
// weighted fit without the dummy and RSS1 with it (the Frisch–Waugh theorem,
// common practice), each fitted here by internal/fit on the rows scaled by
// the weights. Without regressors and weights it is FStats' sup-F for a
// change of the mean (one coefficient, the whole model, changes).
func TestSupFLevelEqualsDirectFits(t *testing.T) {
	const n = 36
	r := rand.New(rand.NewPCG(11, 12))
	x := make([]float64, n)
	y := make([]float64, n)
	w := make([]float64, n)
	for i := range x {
		x[i] = 800 * (1 + 0.4*(2*r.Float64()-1))
		level := 2000.0
		if i >= 27 {
			level = 2400
		}
		mean := level + 3*x[i]
		y[i] = mean * (1 + 0.03*r.NormFloat64())
		w[i] = 1 / mean
	}
	for _, tc := range []struct {
		name    string
		columns [][]float64
		weights []float64
	}{
		{"mean", nil, nil},
		{"line", [][]float64{x}, nil},
		{"line, weighted", [][]float64{x}, w},
	} {
		t.Run(tc.name, func(t *testing.T) {
			got, err := SupFLevel(tc.columns, y, tc.weights, DefaultTrim)
			if err != nil {
				t.Fatal(err)
			}
			scale := func(v []float64) []float64 {
				out := make([]float64, n)
				for i := range v {
					out[i] = v[i]
					if tc.weights != nil {
						out[i] *= tc.weights[i]
					}
				}
				return out
			}
			one := make([]float64, n)
			for i := range one {
				one[i] = 1
			}
			design := [][]float64{scale(one)}
			for _, c := range tc.columns {
				design = append(design, scale(c))
			}
			null, err := fit.OLS(design, scale(y), false)
			if err != nil {
				t.Fatal(err)
			}
			k := len(design)
			for i := got.From; i <= got.To; i++ {
				step := make([]float64, n)
				for t := i; t < n; t++ {
					step[t] = 1
				}
				alt, err := fit.OLS(append(append([][]float64{}, design...), scale(step)), scale(y), false)
				if err != nil {
					t.Fatal(err)
				}
				want := (null.RSS - alt.RSS) / (alt.RSS / float64(n-k-1))
				if f := got.F[i-got.From]; math.Abs(f-want) > 1e-7*math.Max(1, want) {
					t.Errorf("break %d: F %.10g, direct fits %.10g", i, f, want)
				}
				if i == got.Break && math.Abs(got.Shift-alt.Coef[k]) > 1e-7*math.Abs(alt.Coef[k]) {
					t.Errorf("shift at %d: %.6g, direct fit %.6g", i, got.Shift, alt.Coef[k])
				}
			}
			if tc.columns == nil {
				fs, err := FStats(nil, y, true, DefaultTrim)
				if err != nil {
					t.Fatal(err)
				}
				if math.Abs(fs.SupF-got.SupF) > 1e-9*fs.SupF || fs.Break != got.Break {
					t.Errorf("sup-F %.10g at %d, FStats %.10g at %d", got.SupF, got.Break, fs.SupF, fs.Break)
				}
			}
			// The designed shift of 400 after observation 27 is found there.
			if got.Break < 26 || got.Break > 28 {
				t.Errorf("break at %d, designed at 27", got.Break)
			}
		})
	}
}

// The bootstrap p-value holds its level on series without a shift (200
// seeded mixed costs with noise proportional to the cost, weighted) and finds
// a 7.5 % shift of the cost over the newest third of 36 periods at 2 % noise.
func TestSupFLevelBootstrap(t *testing.T) {
	const n, trials = 36, 200
	r := rand.New(rand.NewPCG(21, 22))
	rejected, found := 0, 0
	for k := 0; k < trials; k++ {
		x := make([]float64, n)
		for i := range x {
			x[i] = 500 * (1 + 0.4*(2*r.Float64()-1))
		}
		for _, shift := range []float64{0, 0.075} {
			y := make([]float64, n)
			w := make([]float64, n)
			for i := range y {
				mean := 1000 + 2*x[i]
				w[i] = 1 / mean
				if i >= 24 {
					mean += shift * 2000
				}
				y[i] = mean * (1 + 0.02*r.NormFloat64())
			}
			ls, err := SupFLevel([][]float64{x}, y, w, DefaultTrim)
			if err != nil {
				t.Fatal(err)
			}
			p := SupFLevelSignificant(ls, 199, uint64(k), 0.05)
			if p < 0.05 && shift == 0 {
				rejected++
			}
			if p < 0.05 && shift > 0 {
				found++
			}
		}
	}
	// At 5 % the count of 200 null series rejected is binomial, SD 3.1:
	// more than 20 (10 %) would be a test that does not hold its level.
	if rejected > 20 {
		t.Errorf("%d of %d series without a shift rejected at 5 %%", rejected, trials)
	}
	if found < 180 {
		t.Errorf("a 7.5 %% shift found in %d of %d series, want at least 90 %%", found, trials)
	}
	t.Logf("rejected %d of %d without a shift, %d of %d with one", rejected, trials, found, trials)
}
