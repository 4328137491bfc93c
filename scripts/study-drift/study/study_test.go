package study

import (
	"strings"
	"testing"

	"github.com/costdrift/costdrift/internal/costdrift"
)

// The portfolio study at two fifths of `make study-drift`'s size (README,
// Drift: the portfolio study), fixed seeds: 800 stable objects, 200 of each
// class, and 100 whose fixed part rises 15 % between months 38 and 42 (50
// fixed costs at 1.5 % noise, 50 mixed), analysed together at 13 month-ends.
//
// A 15 % rise of a fixed cost must be alerted within 3 month-ends in at
// least 95 % and the alerted shifts dated within one period in at least
// 80 %: the targets set for the method, which it meets. The other targets
// it does not meet yet, at full size or here: at most 0.5 % of stable
// objects alerted on any one analysis (0.40 % at full size, 0.75 % in this
// smaller portfolio, where 0.5 % is 4 objects), at most 2 % over the year
// in every class (mixed costs 6–9 %), mixed costs alerted within 3
// month-ends in 60 % and within 6 in 90 % (49–58 %, 81–88 %). The test holds
// those where the method now stands, with a margin for the seeds, far
// beyond the method before it (README: 3.85 % on one analysis, 11.4 % of
// stable objects over the year and 28 % of step costs; fixed costs within 3
// month-ends 60 %).
func TestPortfolioStudy(t *testing.T) {
	steady := Generate(2026, "S", Mix{costdrift.Fixed: 200, costdrift.Variable: 200, costdrift.Mixed: 200, costdrift.Step: 200}, nil)
	moved := Generate(2027, "D", Mix{costdrift.Fixed: 50, costdrift.Mixed: 50}, &Shift{Rise: 0.15, From: 38, To: 42, FixedCV: 0.015})
	rolls := Roll(append(append([]Company{}, steady...), moved...), Settings(), 0)
	stable, shifted := Stable(steady, rolls), Shifted(moved, rolls)
	var out strings.Builder
	WriteStable(&out, stable)
	WriteShifted(&out, shifted)
	t.Log("\n" + out.String())

	if stable.MaxShare > 0.01 {
		t.Errorf("%.2f %% of stable objects alerted on one analysis, want at most 1 %%", 100*stable.MaxShare)
	}
	if y := stable.YearShare(""); y > 0.045 {
		t.Errorf("%.2f %% of stable objects alerted over the year, want at most 4.5 %%", 100*y)
	}
	for _, c := range Classes {
		limit := 0.04
		if c == costdrift.Mixed {
			limit = 0.10
		}
		if y := stable.YearShare(c); y > limit {
			t.Errorf("%s: %.1f %% of stable objects alerted over the year, want at most %.0f %%", c, 100*y, 100*limit)
		}
	}
	share := func(n int, c costdrift.Class) float64 { return float64(n) / float64(shifted.Objects[c]) }
	if w := share(shifted.Within3[costdrift.Fixed], costdrift.Fixed); w < 0.95 {
		t.Errorf("fixed costs alerted within 3 month-ends: %.0f %%, want at least 95 %%", 100*w)
	}
	if w3, w6 := share(shifted.Within3[costdrift.Mixed], costdrift.Mixed), share(shifted.Within6[costdrift.Mixed], costdrift.Mixed); w3 < 0.45 || w6 < 0.8 {
		t.Errorf("mixed costs alerted within 3 / 6 month-ends: %.0f %% / %.0f %%, want at least 45 %% / 80 %%", 100*w3, 100*w6)
	}
	dated, alerted := 0, 0
	for _, c := range []costdrift.Class{costdrift.Fixed, costdrift.Mixed} {
		dated += shifted.Dated[c]
		alerted += len(shifted.Latency[c])
	}
	if d := float64(dated) / float64(alerted); d < 0.8 {
		t.Errorf("%.0f %% of the alerted shifts dated within one period, want at least 80 %%", 100*d)
	}
}
