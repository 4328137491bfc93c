package drift

import (
	"math/rand/v2"
	"testing"
)

// Stopping early decides exactly as the full bootstrap: the same replicates
// in the same order, cut short once the p-value cannot fall below the level.
func TestSupFSignificantAgreesWithFullBootstrap(t *testing.T) {
	r := rand.New(rand.NewPCG(40, 41))
	for c := 0; c < 40; c++ {
		n := 30
		y := make([]float64, n)
		shift := 0.0
		if c%2 == 1 {
			shift = 0.06 * float64(c%5)
		}
		for i := range y {
			y[i] = 1000 * (1 + 0.05*r.NormFloat64())
			if i >= 18 {
				y[i] *= 1 + shift
			}
		}
		full, err := SupFPValue(nil, y, true, DefaultTrim, Bootstrap, 999, uint64(c))
		if err != nil {
			t.Fatal(err)
		}
		p, _, err := SupFSignificant(nil, y, true, DefaultTrim, 999, uint64(c), 0.01)
		if err != nil {
			t.Fatal(err)
		}
		if (full.P < 0.01) != (p < 0.01) || (full.P < 0.01 && p != full.P) || (full.P >= 0.01 && p > full.P) {
			t.Fatalf("case %d: full bootstrap p %v, early-stopping p %v", c, full.P, p)
		}
	}
}
