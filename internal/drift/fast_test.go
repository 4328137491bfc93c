package drift

import (
	"math"
	"math/rand/v2"
	"testing"
)

// SupFLine must equal FStats (fits per segment by internal/fit) on the same
// data: an internal consistency check of the running-sum shortcut.
func TestSupFLineEqualsFStats(t *testing.T) {
	r := rand.New(rand.NewPCG(8, 9))
	for c := 0; c < 200; c++ {
		n := 24 + r.IntN(37)
		x := make([]float64, n)
		y := make([]float64, n)
		shift := 0.0
		if c%2 == 0 {
			shift = 0.2
		}
		for i := range x {
			x[i] = 500 + 400*r.Float64()
			level := 1.0
			if i > n/2 {
				level += shift
			}
			y[i] = (1000 + 3*x[i]) * level * (1 + 0.05*r.NormFloat64())
		}
		for _, withX := range []bool{true, false} {
			var cols [][]float64
			var xs []float64
			if withX {
				cols, xs = [][]float64{x}, x
			}
			want, err := FStats(cols, y, true, DefaultTrim)
			if err != nil {
				t.Fatal(err)
			}
			got, err := SupFLine(xs, y, DefaultTrim)
			if err != nil {
				t.Fatal(err)
			}
			if got.Break != want.Break || got.From != want.From || got.To != want.To ||
				math.Abs(got.SupF-want.SupF) > 1e-7*math.Max(1, want.SupF) {
				t.Fatalf("case %d (x %v): SupFLine %v at %d, FStats %v at %d", c, withX, got.SupF, got.Break, want.SupF, want.Break)
			}
			for j := range want.F {
				if math.Abs(got.F[j]-want.F[j]) > 1e-7*math.Max(1, want.F[j]) {
					t.Fatalf("case %d: F[%d] = %v, want %v", c, j, got.F[j], want.F[j])
				}
			}
		}
	}
}
