package drift

import (
	"bufio"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
)

// readNile reads testdata/drift/nile.csv (year,volume; source in the README
// there).
func readNile(t *testing.T) (years []int, volume []float64) {
	t.Helper()
	f, err := os.Open(filepath.Join("..", "..", "testdata", "drift", "nile.csv"))
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	sc := bufio.NewScanner(f)
	sc.Scan() // header
	for sc.Scan() {
		parts := strings.Split(strings.TrimSpace(sc.Text()), ",")
		if len(parts) != 2 {
			t.Fatalf("nile.csv: line %q", sc.Text())
		}
		y, err1 := strconv.Atoi(parts[0])
		v, err2 := strconv.ParseFloat(parts[1], 64)
		if err1 != nil || err2 != nil {
			t.Fatalf("nile.csv: line %q", sc.Text())
		}
		years = append(years, y)
		volume = append(volume, v)
	}
	if len(volume) != 100 {
		t.Fatalf("nile.csv: %d values, want 100", len(volume))
	}
	return years, volume
}

// printed checks got against a value printed with a given number of
// significant digits: it must round to the same digits.
func printed(t *testing.T, what string, got, want float64, digits int) {
	t.Helper()
	exp := math.Floor(math.Log10(math.Abs(want)))
	half := 0.5 * math.Pow(10, exp-float64(digits-1))
	if math.Abs(got-want) > half*(1+1e-9) {
		t.Errorf("%s = %.10g, printed %.*g", what, got, digits, want)
	}
}

// TestNile checks the mean-shift model Nile ~ 1 (n = 100, k = 1) against the
// values strucchange prints in its saved test output
// (cran/strucchange tests/strucchange-tests.Rout.save and
// tests/Examples/strucchange-Ex.Rout.save);
// Debian's r-cran-strucchange 1.5-3 prints the same. Each value is matched
// to the digits printed, and to the notes' recomputation where they give
// more digits.
func TestNile(t *testing.T) {
	years, y := readNile(t)

	fs, err := FStats(nil, y, true, 0.15)
	if err != nil {
		t.Fatal(err)
	}
	if fs.From != 15 || fs.To != 85 || len(fs.F) != 71 {
		t.Errorf("candidates %d..%d (%d), want 15..85 (71): strucchange Fstats, from = floor(0.15·100)",
			fs.From, fs.To, len(fs.F))
	}
	printed(t, "sup.F", fs.SupF, 75.93, 4)                  // strucchange: sup.F = 75.93
	printed(t, "ave.F", fs.AveF, 21.215, 5)                 // strucchange: ave.F = 21.215
	printed(t, "exp.F", fs.ExpF, 33.759, 5)                 // strucchange: exp.F = 33.759
	printed(t, "RSS no break", fs.RSS, 2835157, 7)          // breakpoints RSS m = 0: 2835157
	printed(t, "RSS at the break", fs.BreakRSS, 1597457, 7) // breakpoints RSS m = 1: 1597457
	closeTo(t, "sup.F", fs.SupF, 75.92976942748538, 1e-12)  // notes [RECOMPUTED]; R prints 75.929769427485425
	closeTo(t, "ave.F", fs.AveF, 21.21466677799182, 1e-12)  // notes [RECOMPUTED]
	closeTo(t, "exp.F", fs.ExpF, 33.75897495638686, 1e-12)  // notes [RECOMPUTED]
	closeTo(t, "RSS", fs.RSS, 2835156.75, 1e-13)            // notes [RECOMPUTED]; exact: Σ(y−ȳ)² of integers/100
	if fs.Break != 28 || years[fs.Break-1] != 1898 {
		t.Errorf("break after observation %d (%d), want 28 (1898): strucchange breakpoints(fs)", fs.Break, years[fs.Break-1])
	}

	// sctest(fs, type = "supF") prints p-value = 2.22e-16: 1 − pchisq(...)
	// rounded to one ulp below 1. HansenPValue takes the χ² upper tail
	// itself, which is smaller; both say the same: below 1e-15.
	h, err := SupFPValue(nil, y, true, 0.15, Hansen, 0, 0)
	if err != nil {
		t.Fatal(err)
	}
	if !(h.P >= 0 && h.P <= 2.3e-16) {
		t.Errorf("Hansen p = %g, strucchange prints 2.22e-16", h.P)
	}

	// sctest(Nile ~ 1, type = "Chow", point = 28): F = 75.93, p-value = 7.438e-14
	// (Debian r-cran-strucchange 1.5-3; with k = 1 the Chow F equals the
	// Wald-scale F_28).
	F, p, err := Chow(nil, y, true, 28)
	if err != nil {
		t.Fatal(err)
	}
	printed(t, "Chow F", F, 75.93, 4)
	printed(t, "Chow p", p, 7.438e-14, 4)

	// sctest(efp(Nile ~ 1, type = "OLS-CUSUM")): S0 = 2.9518, p-value = 5.409e-08.
	ols, err := OLSCUSUM(nil, y, true)
	if err != nil {
		t.Fatal(err)
	}
	printed(t, "S0", ols.Statistic, 2.9518, 5)
	printed(t, "OLS-CUSUM p", ols.P, 5.409e-08, 4)
	closeTo(t, "S0", ols.Statistic, 2.9517661026633735, 1e-12) // notes [RECOMPUTED]
	if ols.Peak != 28 {
		t.Errorf("OLS-CUSUM peaks at %d, want 28: the cumulated residuals of a mean shift peak at the break (common practice)", ols.Peak)
	}

	// sctest(efp(Nile ~ 1, type = "Rec-CUSUM")): S = 2.0669, p-value = 7.487e-08.
	rec, err := RecursiveCUSUM(nil, y, true)
	if err != nil {
		t.Fatal(err)
	}
	printed(t, "S", rec.Statistic, 2.0669, 5)
	printed(t, "Rec-CUSUM p", rec.P, 7.487e-08, 4)
	closeTo(t, "S", rec.Statistic, 2.06692088890315, 1e-12) // notes [RECOMPUTED]
}

func closeTo(t *testing.T, what string, got, want, rel float64) {
	t.Helper()
	if math.Abs(got-want) > rel*math.Abs(want) {
		t.Errorf("%s = %.17g, want %.17g (rel %.1e)", what, got, want, rel)
	}
}
