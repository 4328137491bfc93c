package fit

import (
	"fmt"
	"math/rand/v2"
	"testing"
)

// Screens taken from a Slab are the screens Screen and ScreenOrigin make on
// their own, bit for bit: all of them held at once (no two share storage,
// across the slab's blocks), and again after a Reset, when the slab hands
// its storage out a second time to other data. Once grown, it allocates
// nothing.
func TestSlabScreensAreScreens(t *testing.T) {
	r := rand.New(rand.NewPCG(51, 52))
	const n = 36
	data := func() (*LineX, *LineY) {
		x, y := make([]float64, n), make([]float64, n)
		for i := range x {
			x[i] = 100 + 50*r.Float64()
			y[i] = 2000 + 12*x[i] + 40*r.NormFloat64()
		}
		return NewLineX(x), NewLineY(y)
	}
	var sl Slab
	// More screens than one block holds regressions (slabRegressions) and
	// more floats than one float block (slabFloats) holds.
	const screens = 3*slabRegressions + 5
	for round := range 2 {
		sl.Reset()
		type pair struct {
			lx     *LineX
			ly     *LineY
			lin, o *Regression
		}
		var held []pair
		for range screens / 2 {
			lx, ly := data()
			lin, err := lx.ScreenOn(ly, &sl)
			if err != nil {
				t.Fatal(err)
			}
			o, err := lx.ScreenOriginOn(ly, &sl)
			if err != nil {
				t.Fatal(err)
			}
			held = append(held, pair{lx, ly, lin, o})
		}
		for i, h := range held {
			want, _ := h.lx.Screen(h.ly)
			sameFit(t, fmt.Sprintf("round %d, line %d", round, i), h.lin, want, -3) // -3: no p-value left out, every field compared as it is
			wantO, _ := h.lx.ScreenOrigin(h.ly)
			sameFit(t, fmt.Sprintf("round %d, origin %d", round, i), h.o, wantO, -3)
		}
	}
	lx, ly := data()
	allocs := testing.AllocsPerRun(20, func() {
		sl.Reset()
		for range screens / 2 {
			lx.ScreenOn(ly, &sl)
			lx.ScreenOriginOn(ly, &sl)
		}
	})
	if allocs != 0 {
		t.Errorf("screens from a grown slab allocate %v times per round, want 0", allocs)
	}
}
