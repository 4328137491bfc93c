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

// A design reused across bootstrap replicates applies the rotations it
// recorded on its first y; every later sup-F must be bit for bit what a
// fresh design computes from the rows, on lines, lines through the origin,
// several regressors, and columns with zeros (whose rotations are skipped).
func TestRecordedRotationsGiveTheSameSupF(t *testing.T) {
	r := rand.New(rand.NewPCG(10, 11))
	for c := range 300 {
		n := 12 + r.IntN(40)
		var cols [][]float64
		for range r.IntN(3) + 1 {
			col := make([]float64, n)
			for i := range col {
				col[i] = 100 + 900*r.Float64()
				if c%3 == 0 && r.IntN(4) == 0 {
					col[i] = 0
				}
			}
			cols = append(cols, col)
		}
		intercept := c%2 == 0
		k := len(cols)
		if intercept {
			k++
		}
		from, to := k, n-k
		reused := newDesign(cols, intercept, n)
		y := make([]float64, n)
		for round := range 5 {
			for i := range y {
				y[i] = 50 * r.NormFloat64()
			}
			fresh := newDesign(cols, intercept, n)
			want := fresh.supF(y, from, to)
			got := reused.supF(y, from, to)
			if math.Float64bits(got) != math.Float64bits(want) {
				t.Fatalf("design %d, replicate %d: sup-F %v with recorded rotations, %v from the rows", c, round, got, want)
			}
		}
	}
}
