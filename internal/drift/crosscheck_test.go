package drift

import (
	"encoding/json"
	"math"
	"os"
	"path/filepath"
	"testing"
)

// driftFile holds what R's strucchange 1.5-3 (R 4.2.2, Debian bookworm)
// computes for 25 seeded series; scripts/crosscheck/drift.R writes it and
// scripts/crosscheck/run.sh checks that a fresh run reproduces it. The data
// are R Mersenne-Twister draws and stand for nothing real.
var driftFile = filepath.Join("..", "..", "testdata", "crosscheck", "drift.json")

type driftCase struct {
	Name         string      `json:"name"`
	Model        string      `json:"model"`
	Intercept    bool        `json:"intercept"`
	PlantedBreak int         `json:"planted_break"`
	X            [][]float64 `json:"x"`
	Y            []float64   `json:"y"`
	FStats       struct {
		From       int       `json:"from"`
		To         int       `json:"to"`
		NReg       int       `json:"nreg"`
		Lambda     float64   `json:"lambda"`
		F          []float64 `json:"F"`
		SupF       float64   `json:"sup_f"`
		PHansen    float64   `json:"p_hansen"`
		Breakpoint int       `json:"breakpoint"`
		RSSAtBreak float64   `json:"rss_at_break"`
		AveF       float64   `json:"ave_f"`
		ExpF       float64   `json:"exp_f"`
	} `json:"fstats"`
	Chow struct {
		Point int     `json:"point"`
		F     float64 `json:"F"`
		P     float64 `json:"p"`
	} `json:"chow"`
	OLSCUSUM cusumGolden `json:"ols_cusum"`
	RecCUSUM cusumGolden `json:"rec_cusum"`
}

type cusumGolden struct {
	Process   []float64 `json:"process"`
	Statistic float64   `json:"statistic"`
	P         float64   `json:"p"`
}

func readDrift(t *testing.T) []driftCase {
	t.Helper()
	raw, err := os.ReadFile(driftFile)
	if err != nil {
		t.Fatal(err)
	}
	var doc struct {
		Cases []driftCase `json:"cases"`
	}
	if err := json.Unmarshal(raw, &doc); err != nil {
		t.Fatal(err)
	}
	if len(doc.Cases) < 20 {
		t.Fatalf("%s: %d cases, want at least 20", driftFile, len(doc.Cases))
	}
	return doc.Cases
}

// Tolerances of the cross-check.
const (
	// statRel: statistics agree to 1e-8 relative to max(|R's value|, 1).
	// The floor 1 is for F_i and CUSUM values near 0, where a relative
	// comparison would ask for more digits than the difference RSS − S or a
	// sum of residuals of opposite signs has in either program.
	statRel = 1e-8
	// pRel, pAbs: p-values agree to 1e-6 relative. The absolute 1e-15 admits
	// strucchange's habit of forming 1 − pchisq(...), 1 − pf(...) and
	// 1 − (1 + 2Σ…), which cannot go below one ulp of 1 (2.2e-16, or 0),
	// where this package takes the upper tail directly.
	pRel = 1e-6
	pAbs = 1e-15
)

func statClose(got, want float64) bool {
	return math.Abs(got-want) <= statRel*math.Max(math.Abs(want), 1)
}

func pClose(got, want float64) bool {
	return math.Abs(got-want) <= pRel*math.Abs(want)+pAbs
}

// TestCrosscheckDrift compares every statistic, p-value and dated break
// with strucchange's on the seeded series of drift.json: Fstats (from, to,
// λ, the F sequence, sup-F, breakpoint, RSS at the break, ave-F, exp-F),
// sctest supF (Hansen p-value), sctest type = "Chow" at the planted break,
// efp OLS-CUSUM and Rec-CUSUM (process, statistic, p-value).
func TestCrosscheckDrift(t *testing.T) {
	for _, c := range readDrift(t) {
		t.Run(c.Name, func(t *testing.T) {
			n, k := len(c.Y), len(c.X)
			if c.Intercept {
				k++
			}
			if n < 24 || n > 60 {
				t.Errorf("n = %d outside 24..60", n)
			}
			g := c.FStats
			fs, err := FStats(c.X, c.Y, c.Intercept, 0.15)
			if err != nil {
				t.Fatal(err)
			}
			if fs.K != g.NReg || fs.From != g.From || fs.To != g.To || len(fs.F) != len(g.F) {
				t.Fatalf("k %d, candidates %d..%d (%d); strucchange k %d, %d..%d (%d)",
					fs.K, fs.From, fs.To, len(fs.F), g.NReg, g.From, g.To, len(g.F))
			}
			if !statClose(fs.Lambda, g.Lambda) {
				t.Errorf("lambda = %.17g, strucchange %.17g", fs.Lambda, g.Lambda)
			}
			for j := range g.F {
				if !statClose(fs.F[j], g.F[j]) {
					t.Errorf("F at break %d = %.17g, strucchange %.17g", fs.From+j, fs.F[j], g.F[j])
				}
			}
			for _, s := range []struct {
				what      string
				got, want float64
			}{
				{"sup.F", fs.SupF, g.SupF},
				{"ave.F", fs.AveF, g.AveF},
				{"exp.F", fs.ExpF, g.ExpF},
			} {
				if !statClose(s.got, s.want) {
					t.Errorf("%s = %.17g, strucchange %.17g", s.what, s.got, s.want)
				}
			}
			if math.Abs(fs.BreakRSS-g.RSSAtBreak) > statRel*g.RSSAtBreak {
				t.Errorf("RSS at break = %.17g, strucchange %.17g", fs.BreakRSS, g.RSSAtBreak)
			}
			if fs.Break != g.Breakpoint {
				t.Errorf("break after observation %d, strucchange %d", fs.Break, g.Breakpoint)
			}

			p, err := HansenPValue(fs.SupF, fs.K, fs.Lambda)
			if err != nil {
				t.Fatal(err)
			}
			if !pClose(p, g.PHansen) {
				t.Errorf("Hansen p = %.17g, strucchange %.17g", p, g.PHansen)
			}

			// The row-updating sup-F the bootstrap uses must give the same
			// statistic as the segment-by-segment fits.
			d := newDesign(c.X, c.Intercept, n)
			if s := d.supF(c.Y, fs.From, fs.To); math.Abs(s-fs.SupF) > 1e-9*math.Max(fs.SupF, 1) {
				t.Errorf("row-updating sup-F %.17g, FStats %.17g", s, fs.SupF)
			}

			F, pc, err := Chow(c.X, c.Y, c.Intercept, c.Chow.Point)
			if err != nil {
				t.Fatal(err)
			}
			if !statClose(F, c.Chow.F) || !pClose(pc, c.Chow.P) {
				t.Errorf("Chow at %d: F = %.17g p = %.17g, strucchange F = %.17g p = %.17g",
					c.Chow.Point, F, pc, c.Chow.F, c.Chow.P)
			}

			ols, err := OLSCUSUM(c.X, c.Y, c.Intercept)
			if err != nil {
				t.Fatal(err)
			}
			compareCUSUM(t, "OLS-CUSUM", ols, c.OLSCUSUM)
			rec, err := RecursiveCUSUM(c.X, c.Y, c.Intercept)
			if err != nil {
				t.Fatal(err)
			}
			compareCUSUM(t, "Rec-CUSUM", rec, c.RecCUSUM)
		})
	}
}

func compareCUSUM(t *testing.T, what string, got *CUSUM, want cusumGolden) {
	t.Helper()
	if len(got.Process) != len(want.Process) {
		t.Fatalf("%s: process has %d points, strucchange %d", what, len(got.Process), len(want.Process))
	}
	for i := range want.Process {
		if !statClose(got.Process[i], want.Process[i]) {
			t.Errorf("%s process[%d] = %.17g, strucchange %.17g", what, i, got.Process[i], want.Process[i])
		}
	}
	if !statClose(got.Statistic, want.Statistic) {
		t.Errorf("%s statistic = %.17g, strucchange %.17g", what, got.Statistic, want.Statistic)
	}
	if !pClose(got.P, want.P) {
		t.Errorf("%s p = %.17g, strucchange %.17g", what, got.P, want.P)
	}
}
