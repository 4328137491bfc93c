package drift

import (
	"errors"
	"math"
	"strings"
	"testing"

	"github.com/costdrift/costdrift/internal/fit"
)

// TestTrimmingRange: strucchange's Fstats convention, from = floor(0.15·n),
// to = n − from, from ≥ k+1, to ≤ n−k−1 [READ: R/Fstats.R; the crosscheck
// cases cover n = 24, 25, 30, 36, 48, 60 and the clamp at n = 24, k = 3].
func TestTrimmingRange(t *testing.T) {
	tests := []struct {
		name       string
		n, k       int
		from, to   int
		wantTooFew bool
		trim       float64
	}{
		{"n100 k1", 100, 1, 15, 85, false, 0.15},            // Nile as in strucchange's example: points 15..85
		{"n36 k2", 36, 2, 5, 31, false, 0.15},               // floor(5.4) = 5
		{"n25 k1", 25, 1, 3, 22, false, 0.15},               // floor(3.75) = 3
		{"n24 k3 clamp", 24, 3, 4, 20, false, 0.15},         // floor(3.6) = 3 < k+1 = 4; to 21 > n−k−1 = 20
		{"n6 k3 empty", 6, 3, 0, 0, true, 0.15},             // from 4 > to 2
		{"n60 k1 exact product", 60, 1, 9, 51, false, 0.15}, // 0.15·60 rounds to 9.0 in IEEE, as in R
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			from, to, err := candidateRange(tc.n, tc.k, tc.trim)
			if tc.wantTooFew {
				if !errors.Is(err, ErrTooFewObservations) {
					t.Fatalf("error %v, want ErrTooFewObservations", err)
				}
				return
			}
			if err != nil {
				t.Fatal(err)
			}
			if from != tc.from || to != tc.to {
				t.Errorf("candidates %d..%d, want %d..%d", from, to, tc.from, tc.to)
			}
		})
	}
}

// TestExactCosts: a rent that is the same amount every period, and one that
// steps to a new amount, are fitted exactly. Hand-worked (common practice):
// with no residual at all there is nothing to test (F = 0, p = 1); an exact
// step has split RSS 0, so F is +Inf at the step and every test rejects.
func TestExactCosts(t *testing.T) {
	flat := make([]float64, 24)
	step := make([]float64, 24)
	for i := range flat {
		flat[i] = 1250
		step[i] = 1250
		if i >= 15 {
			step[i] = 1400
		}
	}

	b, err := SupFPValue(nil, flat, true, DefaultTrim, Bootstrap, 99, 1)
	if err != nil {
		t.Fatal(err)
	}
	if b.SupF != 0 || b.P != 1 {
		t.Errorf("flat rent: sup-F %g, bootstrap p %g; want 0 and 1", b.SupF, b.P)
	}
	c, err := OLSCUSUM(nil, flat, true)
	if err != nil {
		t.Fatal(err)
	}
	if c.Statistic != 0 || c.P != 1 {
		t.Errorf("flat rent: OLS-CUSUM %g, p %g; want 0 and 1", c.Statistic, c.P)
	}

	b, err = SupFPValue(nil, step, true, DefaultTrim, Bootstrap, 99, 1)
	if err != nil {
		t.Fatal(err)
	}
	if !math.IsInf(b.SupF, 1) || b.Break != 15 || b.P != 0.01 {
		t.Errorf("stepped rent: sup-F %g at %d, bootstrap p %g; want +Inf at 15 and 1/100", b.SupF, b.Break, b.P)
	}
	h, err := HansenPValue(b.SupF, 1, b.Lambda)
	if err != nil || h != 0 {
		t.Errorf("stepped rent: Hansen p %g (%v), want 0", h, err)
	}
	F, p, err := Chow(nil, step, true, 15)
	if err != nil || !math.IsInf(F, 1) || p != 0 {
		t.Errorf("stepped rent: Chow F %g p %g (%v), want +Inf and 0", F, p, err)
	}
}

// TestExpFLargeStatistics: exp-F = log mean exp(F_i/2) is evaluated without
// overflow; it lies between max F/2 − log(m) and max F/2 for m candidates
// (hand-derived bounds of a log-mean-exp).
func TestExpFLargeStatistics(t *testing.T) {
	y := make([]float64, 30)
	for i := range y {
		y[i] = 1000 + float64(i%3) // noise of amplitude 1
		if i >= 15 {
			y[i] += 5000 // a shift of thousands of noise SDs: F in the hundreds of thousands
		}
	}
	fs, err := FStats(nil, y, true, DefaultTrim)
	if err != nil {
		t.Fatal(err)
	}
	m := float64(len(fs.F))
	if fs.SupF < 2000 || math.IsInf(fs.ExpF, 0) || fs.ExpF > fs.SupF/2 || fs.ExpF < fs.SupF/2-math.Log(m) {
		t.Errorf("sup-F %g, exp-F %g: want exp-F finite in [supF/2 − log %g, supF/2]", fs.SupF, fs.ExpF, m)
	}
}

func TestErrors(t *testing.T) {
	y := []float64{5, 6, 5, 7, 6, 5, 6, 7, 5, 6, 9, 10, 9, 11, 10, 9, 10, 11, 10, 9}
	if _, err := FStats(nil, y[:3], true, 0.15); !errors.Is(err, ErrTooFewObservations) {
		t.Errorf("3 observations: %v, want ErrTooFewObservations", err)
	}
	if _, _, err := Chow(nil, y, true, 1); !errors.Is(err, ErrTooFewObservations) {
		t.Errorf("Chow after observation 1 with k = 1: %v, want ErrTooFewObservations", err)
	}
	if _, err := HansenPValue(10, 4, 32.11); !errors.Is(err, ErrNoTable) {
		t.Errorf("Hansen with k = 4: %v, want ErrNoTable", err)
	}
	// A driver that does not move during the first periods cannot be
	// fitted on them.
	x := make([]float64, len(y))
	for i := range x {
		x[i] = 100
		if i >= 6 {
			x[i] = 100 + float64(i*7%11)
		}
	}
	if _, err := FStats([][]float64{x}, y, true, 0.15); !errors.Is(err, fit.ErrIllConditioned) {
		t.Errorf("constant driver in the first segments: %v, want fit.ErrIllConditioned", err)
	}
	if _, err := RecursiveCUSUM([][]float64{x}, y, true); !errors.Is(err, fit.ErrIllConditioned) {
		t.Errorf("recursive CUSUM with a constant start: %v, want fit.ErrIllConditioned", err)
	}
	bad := append([]float64(nil), y...)
	bad[3] = math.NaN()
	if _, err := OLSCUSUM(nil, bad, true); !errors.Is(err, fit.ErrNonFinite) {
		t.Errorf("NaN in y: %v, want fit.ErrNonFinite", err)
	}
	if _, err := RecursiveCUSUM(nil, bad, true); !errors.Is(err, fit.ErrNonFinite) {
		t.Errorf("recursive CUSUM, NaN in y: %v, want fit.ErrNonFinite", err)
	}
	badX := append([]float64(nil), y...)
	badX[7] = math.Inf(1)
	if _, err := RecursiveCUSUM([][]float64{badX}, y, true); !errors.Is(err, fit.ErrNonFinite) {
		t.Errorf("recursive CUSUM, Inf in a driver: %v, want fit.ErrNonFinite", err)
	}
	if _, err := SupFPValue([][]float64{badX}, y, true, 0.15, Bootstrap, 9, 1); !errors.Is(err, fit.ErrNonFinite) {
		t.Errorf("sup-F, Inf in a driver: %v, want fit.ErrNonFinite", err)
	}
}

func TestMisusePanics(t *testing.T) {
	y := []float64{5, 6, 5, 7, 6, 5, 6, 7, 5, 6, 9, 10, 9, 11, 10, 9, 10, 11, 10, 9}
	short := [][]float64{{1, 2, 3}}
	tests := []struct {
		name string
		call func()
	}{
		{"trim 0", func() { FStats(nil, y, true, 0) }},
		{"trim 0.5", func() { FStats(nil, y, true, 0.5) }},
		{"column length", func() { FStats(short, y, true, 0.15) }},
		{"no coefficient", func() { FStats(nil, y, false, 0.15) }},
		{"Chow break 0", func() { Chow(nil, y, true, 0) }},
		{"Chow break n", func() { Chow(nil, y, true, len(y)) }},
		{"negative replicates", func() { SupFPValue(nil, y, true, 0.15, Bootstrap, -1, 0) }},
		{"unknown method", func() { SupFPValue(nil, y, true, 0.15, Method(7), 0, 0) }},
		{"Hansen k 0", func() { HansenPValue(1, 0, 32) }},
		{"OLS-CUSUM level 0", func() { OLSCUSUMCritical(0) }},
		{"OLS-CUSUM level 1", func() { OLSCUSUMCritical(1) }},
		{"Rec-CUSUM level 0.99", func() { RecursiveCUSUMCritical(0.99) }},
		{"OLSCUSUM column length", func() { OLSCUSUM(short, y, true) }},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			defer func() {
				r := recover()
				if r == nil {
					t.Fatal("no panic")
				}
				if s, ok := r.(string); !ok || !strings.HasPrefix(s, "drift: ") {
					t.Errorf("panic %v, want a message starting \"drift: \"", r)
				}
			}()
			tc.call()
		})
	}
}
