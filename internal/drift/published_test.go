package drift

import (
	"errors"
	"math"
	"testing"
)

// TestAndrewsCritical checks the embedded Andrews (2003) table at 15 %
// trimming against Andrews (2003), Table 1 [read via cran/tseriesTARMA data/ACValues.rda; the same to 2
// decimals as gretl's QLR_critvals × q], and a few other cells against the
// csv rows themselves.
func TestAndrewsCritical(t *testing.T) {
	tests := []struct {
		name  string
		p     int
		trim  float64
		level float64
		want  float64
	}{
		{"p1 10%", 1, 0.15, 0.10, 7.12},           // Andrews (2003), Table 1
		{"p1 5%", 1, 0.15, 0.05, 8.68},            // Andrews (2003), Table 1
		{"p1 1%", 1, 0.15, 0.01, 12.16},           // Andrews (2003), Table 1
		{"p2 10%", 2, 0.15, 0.10, 10.00},          // Andrews (2003), Table 1
		{"p2 5%", 2, 0.15, 0.05, 11.72},           // Andrews (2003), Table 1
		{"p2 1%", 2, 0.15, 0.01, 15.56},           // Andrews (2003), Table 1
		{"p3 10%", 3, 0.15, 0.10, 12.28},          // Andrews (2003), Table 1
		{"p3 5%", 3, 0.15, 0.05, 14.13},           // Andrews (2003), Table 1
		{"p3 1%", 3, 0.15, 0.01, 18.07},           // Andrews (2003), Table 1
		{"p20 1% pi0 .15", 20, 0.15, 0.01, 48.59}, // csv row pi0 = 0.15, last column
		{"p1 5% pi0 .05", 1, 0.05, 0.05, 9.71},    // csv row pi0 = 0.05
		{"p1 1% pi0 .5", 1, 0.5, 0.01, 6.63},      // csv row pi0 = 0.5: the χ²_1 1 % point (common practice)
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			got, err := AndrewsCritical(tc.p, tc.trim, tc.level)
			if err != nil {
				t.Fatal(err)
			}
			if got != tc.want {
				t.Errorf("AndrewsCritical(%d, %g, %g) = %g, want %g", tc.p, tc.trim, tc.level, got, tc.want)
			}
		})
	}
	for _, bad := range []struct {
		p           int
		trim, level float64
	}{{0, 0.15, 0.05}, {21, 0.15, 0.05}, {1, 0.12, 0.05}, {1, 0.15, 0.025}} {
		if _, err := AndrewsCritical(bad.p, bad.trim, bad.level); !errors.Is(err, ErrNoTable) {
			t.Errorf("AndrewsCritical(%d, %g, %g): error %v, want ErrNoTable", bad.p, bad.trim, bad.level, err)
		}
	}
}

// TestOLSCUSUMCritical: the Kolmogorov critical values of sup|Brownian
// bridge| [statsmodels breaks_cusumolsresid,
// 1.62762361, 1.35809864, 1.22384787; printed to 3 decimals as 1.628, 1.358,
// 1.224 in Ploberger & Krämer (1992)].
func TestOLSCUSUMCritical(t *testing.T) {
	tests := []struct {
		name      string
		level     float64
		want      float64 // 8 decimals, statsmodels' comment
		published float64 // 3 decimals
	}{
		{"10%", 0.10, 1.22384787, 1.224},
		{"5%", 0.05, 1.35809864, 1.358},
		{"1%", 0.01, 1.62762361, 1.628},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			c := OLSCUSUMCritical(tc.level)
			if math.Abs(c-tc.want) > 5e-9 {
				t.Errorf("critical value %.10f, want %.8f", c, tc.want)
			}
			if math.Round(c*1000)/1000 != tc.published {
				t.Errorf("critical value %.5f does not round to %.3f", c, tc.published)
			}
			if p := OLSCUSUMPValue(tc.want); math.Abs(p-tc.level) > 1e-8 {
				t.Errorf("OLSCUSUMPValue(%.8f) = %.10f, want %g", tc.want, p, tc.level)
			}
		})
	}
	// The two series used on either side of x = 1 are the same function
	// (Jacobi's theta identity); they must meet there.
	lo := func(x float64) float64 { return OLSCUSUMPValue(math.Nextafter(x, 0)) }
	if d := math.Abs(lo(1) - OLSCUSUMPValue(1)); d > 1e-14 {
		t.Errorf("the two series differ by %g at x = 1", d)
	}
	if OLSCUSUMPValue(0.05) != 1 || OLSCUSUMPValue(0) != 1 {
		t.Errorf("p at 0.05 and 0 = %g, %g, want 1 (strucchange returns 1 below 0.1)", OLSCUSUMPValue(0.05), OLSCUSUMPValue(0))
	}
}

// TestRecursiveCUSUMCritical: the Brown, Durbin & Evans (1975) boundary
// constants 0.850, 0.948, 1.143 at 10, 5, 1 % [statsmodels
// recursive_olsresiduals; recomputed from strucchange's
// crossing probability as 0.84992, 0.94790, 1.14297].
func TestRecursiveCUSUMCritical(t *testing.T) {
	tests := []struct {
		name       string
		level      float64
		recomputed float64
		published  float64
	}{
		{"10%", 0.10, 0.84992, 0.850},
		{"5%", 0.05, 0.94790, 0.948},
		{"1%", 0.01, 1.14297, 1.143},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			a := RecursiveCUSUMCritical(tc.level)
			if math.Abs(a-tc.recomputed) > 5e-6 {
				t.Errorf("a = %.7f, notes recompute %.5f", a, tc.recomputed)
			}
			if math.Round(a*1000)/1000 != tc.published {
				t.Errorf("a = %.5f does not round to %.3f", a, tc.published)
			}
		})
	}
}

// TestCUSUMBoundary: the process crosses the level-α boundary exactly when
// P < α (strucchange's boundary.efp solves pvalue.efp = α for the same
// constant).
func TestCUSUMBoundary(t *testing.T) {
	_, y := readNile(t)
	for _, mk := range []func([][]float64, []float64, bool) (*CUSUM, error){OLSCUSUM, RecursiveCUSUM} {
		c, err := mk(nil, y[:40], true)
		if err != nil {
			t.Fatal(err)
		}
		for _, level := range []float64{0.01, 0.05, 0.10, 0.5} {
			b := c.Boundary(level)
			crossed := false
			for i := 1; i < len(b); i++ {
				crossed = crossed || math.Abs(c.Process[i]) > b[i]
			}
			if crossed != (c.P < level) {
				t.Errorf("level %g: crossed %v, P = %g", level, crossed, c.P)
			}
		}
	}
}
