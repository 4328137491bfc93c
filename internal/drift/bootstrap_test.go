package drift

import (
	"math"
	"math/rand/v2"
	"testing"
)

// The series below are invented ground-truth data: a cost with a known
// behaviour plus normal noise, drawn from PCG generators with fixed seeds.
// They stand for nothing real.

// levelSeries is a fixed cost of 10 000 per period with noise of SD
// noise·10 000; from period shiftAt on (1-based) the level is multiplied by
// 1 + shift.
func levelSeries(rng *rand.Rand, n, shiftAt int, shift, noise float64) []float64 {
	y := make([]float64, n)
	for i := range y {
		level := 10000.0
		if shiftAt > 0 && i+1 >= shiftAt {
			level *= 1 + shift
		}
		y[i] = level + rng.NormFloat64()*noise*10000
	}
	return y
}

// mixedSeries is a mixed cost 4 000 + 12·hours with hours uniform in
// 200..800 and noise of SD noise × the mean cost (11 800), no break.
func mixedSeries(rng *rand.Rand, n int, noise float64) (hours, y []float64) {
	hours = make([]float64, n)
	y = make([]float64, n)
	for i := range y {
		hours[i] = math.Round(200 + 600*rng.Float64())
		y[i] = 4000 + 12*hours[i] + rng.NormFloat64()*noise*11800
	}
	return hours, y
}

func TestBootstrapDeterministic(t *testing.T) {
	_, y := readNile(t)
	y = y[40:76] // 36 years after the 1898 break: no clear change
	a, err := SupFPValue(nil, y, true, DefaultTrim, Bootstrap, 199, 42)
	if err != nil {
		t.Fatal(err)
	}
	b, err := SupFPValue(nil, y, true, DefaultTrim, Bootstrap, 199, 42)
	if err != nil {
		t.Fatal(err)
	}
	if a.P != b.P {
		t.Errorf("same seed: p = %g and %g", a.P, b.P)
	}
	if a.Replicates != 199 || a.Seed != 42 || a.Method != Bootstrap {
		t.Errorf("recorded B = %d, seed = %d, method %v", a.Replicates, a.Seed, a.Method)
	}
	// p is (1 + count)/(B + 1): a multiple of 1/200 here.
	if r := a.P * 200; math.Abs(r-math.Round(r)) > 1e-9 || a.P < 1.0/200 || a.P > 1 {
		t.Errorf("p = %g is not a count over 200", a.P)
	}
	// Another seed draws other replicates; at a p well inside (0, 1) the
	// count moves.
	c, err := SupFPValue(nil, y, true, DefaultTrim, Bootstrap, 199, 43)
	if err != nil {
		t.Fatal(err)
	}
	if a.P < 0.05 || a.P > 0.95 {
		t.Fatalf("p = %g: pick a window with a p-value inside (0.05, 0.95) for this check", a.P)
	}
	if c.P == a.P {
		t.Errorf("seeds 42 and 43 both give p = %g", a.P)
	}
	// replicates = 0 means DefaultReplicates.
	d, err := SupFPValue(nil, y, true, DefaultTrim, Bootstrap, 0, 42)
	if err != nil {
		t.Fatal(err)
	}
	if d.Replicates != DefaultReplicates {
		t.Errorf("replicates = %d, want %d", d.Replicates, DefaultReplicates)
	}
	t.Logf("Nile 1911–1946, sup-F %.3f at %d: bootstrap p = %.3f (seed 42, B = 199), %.3f (seed 43), %.3f (B = 999)",
		a.SupF, a.Break, a.P, c.P, d.P)
}

// TestBootstrapSize: on 200 seeded no-break series of 30 periods the
// bootstrap rejects at 5 % in 2–9 % of them (binomial SD at a true 5 % is
// 1.5 points). Measured for a fixed cost (mean model, k = 1) and a mixed
// cost with one driver (k = 2). Hansen's rejection rate on the same series
// is logged beside it. B = 999 as in the product.
func TestBootstrapSize(t *testing.T) {
	if testing.Short() {
		t.Skip("simulation")
	}
	for _, model := range []string{"fixed", "mixed"} {
		t.Run(model, func(t *testing.T) {
			const series, n = 200, 30
			var boot, hansen int
			for s := 0; s < series; s++ {
				rng := rand.New(rand.NewPCG(uint64(1000+s), 1))
				var cols [][]float64
				var y []float64
				if model == "fixed" {
					y = levelSeries(rng, n, 0, 0, 0.05)
				} else {
					var x []float64
					x, y = mixedSeries(rng, n, 0.05)
					cols = [][]float64{x}
				}
				b, err := SupFPValue(cols, y, true, DefaultTrim, Bootstrap, DefaultReplicates, uint64(s))
				if err != nil {
					t.Fatal(err)
				}
				if b.P < DefaultLevel {
					boot++
				}
				h, err := HansenPValue(b.SupF, b.K, b.Lambda)
				if err != nil {
					t.Fatal(err)
				}
				if h < DefaultLevel {
					hansen++
				}
			}
			rate := float64(boot) / series
			t.Logf("%s cost, n = 30, 200 series: bootstrap rejects %.1f %%, Hansen %.1f %% at 5 %%",
				model, 100*rate, 100*float64(hansen)/series)
			if rate < 0.02 || rate > 0.09 {
				t.Errorf("bootstrap size %.1f %% outside [2 %%, 9 %%]", 100*rate)
			}
		})
	}
}

// TestBootstrapPower: a 15 % level shift in the middle of 30 periods (new
// level from period 16) at 5 % noise is rejected at 5 % in at least 90 % of
// 200 seeded series.
func TestBootstrapPower(t *testing.T) {
	if testing.Short() {
		t.Skip("simulation")
	}
	const series, n = 200, 30
	rejected := 0
	for s := 0; s < series; s++ {
		rng := rand.New(rand.NewPCG(uint64(5000+s), 2))
		y := levelSeries(rng, n, 16, 0.15, 0.05)
		b, err := SupFPValue(nil, y, true, DefaultTrim, Bootstrap, DefaultReplicates, uint64(s))
		if err != nil {
			t.Fatal(err)
		}
		if b.P < DefaultLevel {
			rejected++
		}
	}
	rate := float64(rejected) / series
	t.Logf("15 %% shift at period 16 of 30, 5 %% noise: bootstrap rejects %.1f %% of 200", 100*rate)
	if rate < 0.90 {
		t.Errorf("power %.1f %%, want at least 90 %%", 100*rate)
	}
}

// TestDating: a 15 % level shift with the new level from period 20 of 36
// (the last old period, strucchange's break, is 19) at 5 % noise is dated
// within one period (18..20) in at least 80 % of 200 seeded series.
func TestDating(t *testing.T) {
	const series, n, lastOld = 200, 36, 19
	exact, within := 0, 0
	for s := 0; s < series; s++ {
		rng := rand.New(rand.NewPCG(uint64(9000+s), 3))
		y := levelSeries(rng, n, lastOld+1, 0.15, 0.05)
		fs, err := FStats(nil, y, true, DefaultTrim)
		if err != nil {
			t.Fatal(err)
		}
		if d := fs.Break - lastOld; d == 0 {
			exact++
			within++
		} else if d == 1 || d == -1 {
			within++
		}
	}
	t.Logf("break after period 19 of 36, 15 %% shift, 5 %% noise: dated exactly in %.1f %%, within one period in %.1f %% of 200",
		100*float64(exact)/series, 100*float64(within)/series)
	if float64(within)/series < 0.80 {
		t.Errorf("dated within one period in %d of %d series, want at least 80 %%", within, series)
	}
}
