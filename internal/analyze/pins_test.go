package analyze

import (
	"math/rand/v2"
	"testing"

	"github.com/costdrift/costdrift/internal/costdrift"
)

// A pinned fixed cost against its data, a year of month-ends on an
// invented portfolio of 500 stable pinned fixed costs (levels 1,000–9,000,
// normal noise of 2 %, each pinned at its true level) and one whose level
// rose 15 % twelve periods ago:
//
//   - the stable portfolio raises no contradiction at any of the 12
//     month-ends (each a 36-period window, rolled one period on), under the
//     Benjamini–Hochberg control at q = 0.01, and its raw p-values are
//     calibrated: about 5 % fall below 0.05, as they must under the null;
//   - the 15 % shift is contradicted at the year's end, among all 501 pins,
//     tested on the periods since its break (the analysis fits a behaviour
//     from its dated break on, README "The method").
func TestPinContradictionOverAYear(t *testing.T) {
	rng := rand.New(rand.NewPCG(1605, 2026))
	const objects, window, monthEnds, q = 500, 36, 12, 0.01
	levels := make([]float64, objects)
	series := make([][]float64, objects)
	for i := range series {
		levels[i] = 1000 + 8000*rng.Float64()
		series[i] = make([]float64, window+monthEnds)
		for j := range series[i] {
			series[i][j] = levels[i] * (1 + 0.02*rng.NormFloat64())
		}
	}
	shifted := make([]float64, window+monthEnds)
	for j := range shifted {
		level := 2600.0
		if j >= window {
			level *= 1.15
		}
		shifted[j] = level * (1 + 0.02*rng.NormFloat64())
	}
	below05, tests := 0, 0
	for m := range monthEnds {
		var ts []costdrift.PinTest
		for i := range series {
			pt, err := TestPin(costdrift.Pin{Object: "stable", Class: costdrift.Fixed, Fixed: levels[i]}, nil, series[i][m+1:m+1+window])
			if err != nil {
				t.Fatal(err)
			}
			if pt.N != window {
				t.Fatalf("n %d, want %d", pt.N, window)
			}
			if pt.P < 0.05 {
				below05++
			}
			tests++
			ts = append(ts, pt)
		}
		if m == monthEnds-1 {
			pt, err := TestPin(costdrift.Pin{Object: "6100/WELD", Class: costdrift.Fixed, Fixed: 2600}, nil, shifted[window:])
			if err != nil {
				t.Fatal(err)
			}
			if pt.DataFixed < 2900 || pt.DataFixed > 3080 {
				t.Errorf("the data's level since the shift %.2f, want near 2,990", pt.DataFixed)
			}
			ts = append(ts, pt)
		}
		contradicted := ControlPins(ts, q)
		if m < monthEnds-1 && contradicted != 0 {
			t.Errorf("month-end %d: %d stable pins contradicted, want none", m+1, contradicted)
		}
		if m == monthEnds-1 {
			if last := ts[len(ts)-1]; !last.Contradicted || contradicted != 1 {
				t.Errorf("year end: the 15 %% shift contradicted %v (p %.3g), %d contradicted in all; want it alone", last.Contradicted, last.P, contradicted)
			}
		}
	}
	if share := float64(below05) / float64(tests); share < 0.035 || share > 0.065 {
		t.Errorf("%.3f of the stable pins' p-values are below 0.05; a calibrated test gives about 0.05", share)
	}
}

// ControlPins is the Benjamini–Hochberg step-up procedure (worked by hand,
// common practice): p = 0.001, 0.008, 0.039, 0.041, 0.042, 0.06 at q = 0.05
// over m = 6: the thresholds j·q/m are 0.0083, 0.0167, 0.025, 0.0333,
// 0.0417, 0.05; the largest j with p₍ⱼ₎ <= j·q/m is 2, so the first two
// stand although 0.042 is below 0.05 on its own.
func TestControlPinsByHand(t *testing.T) {
	ps := []float64{0.042, 0.001, 0.06, 0.039, 0.008, 0.041}
	ts := make([]costdrift.PinTest, len(ps))
	for i, p := range ps {
		ts[i].P = p
	}
	if n := ControlPins(ts, 0.05); n != 2 {
		t.Fatalf("%d contradicted, want 2", n)
	}
	for i, want := range []bool{false, true, false, false, true, false} {
		if ts[i].Contradicted != want {
			t.Errorf("p %g: contradicted %v, want %v", ps[i], ts[i].Contradicted, want)
		}
	}
}

// TestPin's data estimate and F for a mixed pin match fit.KnownCoefficients'
// statsmodels check (internal/fit/known_test.go): the line through hours
// 10–50 and costs 121, 139, 163, 178, 207 against 100 + 2·hours.
func TestPinMixed(t *testing.T) {
	pt, err := TestPin(costdrift.Pin{Class: costdrift.Mixed, Fixed: 100, Rate: 2}, []float64{10, 20, 30, 40, 50}, []float64{121, 139, 163, 178, 207})
	if err != nil {
		t.Fatal(err)
	}
	// statsmodels 0.13.5: f_test((I, [100, 2])) F 0.9552429667519238, p 0.4775239684795;
	// OLS by hand: x̄ 30, ȳ 161.6, Sxy 2110, Sxx 1000, so b = 2.11 and a = 161.6 − 63.3 = 98.3.
	if d := pt.F - 0.9552429667519238; d > 1e-9 || d < -1e-9 || pt.N != 5 {
		t.Errorf("F %.15g n %d", pt.F, pt.N)
	}
	if d := pt.DataFixed - 98.3; d > 1e-9 || d < -1e-9 {
		t.Errorf("data fixed %.12g", pt.DataFixed)
	}
	if d := pt.DataRate - 2.11; d > 1e-12 || d < -1e-12 {
		t.Errorf("data rate %.12g", pt.DataRate)
	}
}
