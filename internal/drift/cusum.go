package drift

import (
	"fmt"
	"math"

	"github.com/costdrift/costdrift/internal/fit"
)

// CUSUM is a cumulative-sum fluctuation process and its test, as
// strucchange's efp and sctest.efp compute them.
type CUSUM struct {
	// Process starts with the 0 strucchange puts in front: Process[0] = 0,
	// Process[i] the scaled sum of the first i residuals.
	Process []float64
	// Statistic is the test statistic; Peak the index into Process where it
	// is attained (the first such index).
	Statistic float64
	Peak      int
	P         float64 // p-value of Statistic
	recursive bool
}

// Boundary returns the level-α boundary at each point of Process: the
// process crosses it (|Process[i]| > Boundary[i] for some i ≥ 1) exactly
// when P < level. For OLS-CUSUM it is the constant OLSCUSUMCritical(level);
// for recursive CUSUM the line a·(1 + 2i/m), a = RecursiveCUSUMCritical(level),
// m = len(Process) − 1. It panics when level is not in (0, 1).
func (c *CUSUM) Boundary(level float64) []float64 {
	b := make([]float64, len(c.Process))
	if !c.recursive {
		crit := OLSCUSUMCritical(level)
		for i := range b {
			b[i] = crit
		}
		return b
	}
	a := RecursiveCUSUMCritical(level)
	m := float64(len(c.Process) - 1)
	for i := range b {
		b[i] = a * (1 + 2*float64(i)/m)
	}
	return b
}

// OLSCUSUM is the OLS-based CUSUM test of Ploberger & Krämer (1992,
// Econometrica 60(2), 271–285), scaled as strucchange's efp(type =
// "OLS-CUSUM"): with e_t the residuals of the no-break least-squares fit,
//
//	σ̂ = sqrt(Σ(e_t − ē)² / (n − k))        (ē = 0 with an intercept, so σ̂² = RSS/(n − k))
//	B(0) = 0,   B(i) = Σ_{t≤i} e_t / (σ̂·√n),   i = 1..n
//	S0 = max_{i≥1} |B(i)|,   P = OLSCUSUMPValue(S0)
//
// Under a stable model B converges to a Brownian bridge, so S0 has the
// Kolmogorov distribution. A change in the mean cost makes the residuals
// one-signed on each side of it, and |B| peaks near the break. A perfect fit
// (all residuals 0) has no fluctuation: Process is all 0, S0 = 0 and P = 1.
//
// OLSCUSUM panics as FStats does on misuse; fitting errors come from
// internal/fit.
func OLSCUSUM(columns [][]float64, y []float64, intercept bool) (*CUSUM, error) {
	n, k := checkModel("OLSCUSUM", columns, y, intercept)
	reg, err := fitModel(columns, y, intercept, 0, n)
	if err != nil {
		return nil, fmt.Errorf("ols-cusum: %w", err)
	}
	e := reg.Residuals
	sigma := centredSD(e, n-k)
	c := &CUSUM{Process: make([]float64, n+1)}
	if sigma == 0 {
		c.P = 1
		return c, nil
	}
	scale := sigma * math.Sqrt(float64(n))
	var s float64
	for i, v := range e {
		s += v
		c.Process[i+1] = s / scale
	}
	for i := 1; i <= n; i++ {
		if a := math.Abs(c.Process[i]); a > c.Statistic {
			c.Statistic, c.Peak = a, i
		}
	}
	c.P = OLSCUSUMPValue(c.Statistic)
	return c, nil
}

// RecursiveCUSUM is the CUSUM test of Brown, Durbin & Evans (1975, JRSS B
// 37(2), 149–192) on recursive residuals, scaled as strucchange's efp(type
// = "Rec-CUSUM"). For r = k+1..n, with b_{r−1} the least-squares fit to the
// first r−1 observations,
//
//	w_r  = (y_r − x_rᵀb_{r−1}) / sqrt(1 + x_rᵀ(X_{r−1}ᵀX_{r−1})⁻¹x_r)
//	σ̂    = sample SD of the w_r (mean-centred, n − k − 1 degrees of freedom)
//	W(0) = 0,   W(i) = Σ_{r ≤ k+i} w_r / (σ̂·√(n − k)),   i = 1..n−k
//	S    = max_i |W(i)| / (1 + 2i/(n − k)),   P = RecursiveCUSUMPValue(S)
//
// W converges to a Brownian motion under a stable model; S compares it with
// the boundary lines ±a(1 + 2i/(n − k)). The recursive residuals are
// computed by Givens row updating of the QR factor (see rowQR), one row at
// a time. It needs n ≥ k + 2; the first k observations must determine the
// coefficients, else the error wraps fit.ErrIllConditioned.
func RecursiveCUSUM(columns [][]float64, y []float64, intercept bool) (*CUSUM, error) {
	n, k := checkModel("RecursiveCUSUM", columns, y, intercept)
	if n < k+2 {
		return nil, fmt.Errorf("recursive cusum: %d observations for %d coefficients: %w", n, k, ErrTooFewObservations)
	}
	// The rows are rotated in here rather than fitted by internal/fit, so
	// the finiteness check internal/fit makes is made here.
	for j, c := range append([][]float64{y}, columns...) {
		for i, v := range c {
			if math.IsNaN(v) || math.IsInf(v, 0) {
				what := "y"
				if j > 0 {
					what = fmt.Sprintf("regressor %d", j-1)
				}
				return nil, fmt.Errorf("recursive cusum: %s[%d] = %g: %w", what, i, v, fit.ErrNonFinite)
			}
		}
	}
	w, err := recursiveResiduals(newDesign(columns, intercept, n), y)
	if err != nil {
		return nil, fmt.Errorf("recursive cusum: %w", err)
	}
	m := len(w)
	c := &CUSUM{Process: make([]float64, m+1), recursive: true}
	sigma := centredSD(w, m-1)
	if sigma == 0 {
		c.P = 1
		return c, nil
	}
	scale := sigma * math.Sqrt(float64(m))
	var s float64
	for i, v := range w {
		s += v
		c.Process[i+1] = s / scale
	}
	for i := 1; i <= m; i++ {
		if a := math.Abs(c.Process[i]) / (1 + 2*float64(i)/float64(m)); a > c.Statistic {
			c.Statistic, c.Peak = a, i
		}
	}
	c.P = RecursiveCUSUMPValue(c.Statistic)
	return c, nil
}

// recursiveResiduals returns w_{k+1}..w_n. Before row r is rotated into the
// factor [R z] of rows 1..r−1, b = R⁻¹z and v = R⁻ᵀx_r give
// w_r = (y_r − x_rᵀb)/sqrt(1 + vᵀv).
func recursiveResiduals(d *design, y []float64) ([]float64, error) {
	n, k := d.n, d.k
	q := &d.qr
	q.reset()
	colSq := make([]float64, k)
	b := make([]float64, k)
	v := make([]float64, k)
	w := make([]float64, 0, n-k)
	for i := 0; i < n; i++ {
		x := d.rows[i*k : (i+1)*k]
		if i >= k {
			for j := 0; j < k; j++ {
				// The rank test internal/fit applies to a scaled column.
				if math.Abs(q.r[j*k+j]) <= 1e-7*math.Sqrt(colSq[j]) {
					return nil, fmt.Errorf("the first %d observations do not determine coefficient %d: %w", i, j, fit.ErrIllConditioned)
				}
			}
			for j := k - 1; j >= 0; j-- { // R·b = z
				s := q.z[j]
				for m := j + 1; m < k; m++ {
					s -= q.r[j*k+m] * b[m]
				}
				b[j] = s / q.r[j*k+j]
			}
			var fitted, vv float64
			for j := 0; j < k; j++ { // Rᵀ·v = x
				s := x[j]
				for m := 0; m < j; m++ {
					s -= q.r[m*k+j] * v[m]
				}
				v[j] = s / q.r[j*k+j]
				vv += v[j] * v[j]
				fitted += x[j] * b[j]
			}
			w = append(w, (y[i]-fitted)/math.Sqrt(1+vv))
		}
		q.add(x, y[i])
		for j := 0; j < k; j++ {
			colSq[j] += x[j] * x[j]
		}
	}
	return w, nil
}

// centredSD is sqrt(Σ(v − v̄)²/df), the scale strucchange's efp uses
// (sd(v)·sqrt((len − 1)/df)).
func centredSD(v []float64, df int) float64 {
	var m float64
	for _, x := range v {
		m += x
	}
	m /= float64(len(v))
	var ss float64
	for _, x := range v {
		ss += (x - m) * (x - m)
	}
	return math.Sqrt(ss / float64(df))
}

// OLSCUSUMPValue returns Pr(sup_t |B(t)| > x) for a Brownian bridge B, the
// Kolmogorov distribution's upper tail:
//
//	P = 2·Σ_{j≥1} (−1)^{j−1} exp(−2j²x²)                        (x ≥ 1)
//	P = 1 − (√(2π)/x)·Σ_{j≥1} exp(−(2j−1)²π²/(8x²))              (x < 1)
//
// The two series are equal (Jacobi's theta transformation); each converges
// in a few terms on its side of 1. strucchange's pvalue.efp evaluates the
// first as 1 − (1 + 2Σ(−1)^j e^{−2j²x²}) with 100 terms and returns 1 below
// x = 0.1; the values agree to rounding. Critical values: 1.224 (10 %),
// 1.358 (5 %), 1.628 (1 %).
func OLSCUSUMPValue(x float64) float64 {
	if !(x > 0) {
		return 1
	}
	if x < 1 {
		var s float64
		for j := 1; ; j++ {
			t := math.Exp(-float64((2*j-1)*(2*j-1)) * math.Pi * math.Pi / (8 * x * x))
			s += t
			if t <= 1e-17*s || t == 0 {
				break
			}
		}
		return math.Max(0, 1-math.Sqrt(2*math.Pi)/x*s)
	}
	var s float64
	for j := 1; j <= 100; j++ {
		t := math.Exp(-2 * float64(j*j) * x * x)
		if j%2 == 1 {
			s += t
		} else {
			s -= t
		}
		if t == 0 {
			break
		}
	}
	return math.Min(1, 2*s)
}

// RecursiveCUSUMPValue returns the probability that a Brownian motion W on
// [0, 1] crosses the boundary ±x(1 + 2t), as strucchange's pvalue.efp
// (Brownian motion, max functional):
//
//	P = 2·(1 − Φ(3x) + e^{−4x²}·(Φ(x) + Φ(5x) − 1) − e^{−16x²}·(1 − Φ(x)))   (x ≥ 0.3)
//	P = 1 − 0.1465·x                                                          (x < 0.3)
//
// with the upper tails 1 − Φ taken from erfc so that small p-values keep
// their digits. Critical values (Brown, Durbin & Evans 1975): 0.850 (10 %),
// 0.948 (5 %), 1.143 (1 %).
func RecursiveCUSUMPValue(x float64) float64 {
	if x < 0.3 {
		return 1 - 0.1465*x
	}
	upper := func(t float64) float64 { return 0.5 * math.Erfc(t/math.Sqrt2) }
	p := 2 * (upper(3*x) + math.Exp(-4*x*x)*((1-upper(x))-upper(5*x)) - math.Exp(-16*x*x)*upper(x))
	return math.Min(1, math.Max(0, p))
}

// OLSCUSUMCritical returns c with OLSCUSUMPValue(c) = level: the OLS-CUSUM
// boundary ±c. It panics when level is not in (0, 1).
func OLSCUSUMCritical(level float64) float64 {
	return solveDecreasing("OLSCUSUMCritical", OLSCUSUMPValue, level, 0.1, 10)
}

// RecursiveCUSUMCritical returns a with RecursiveCUSUMPValue(a) = level;
// the boundary is ±a(1 + 2t). It panics when level is not in (0, 1), or
// when level > 0.956, where strucchange's linear piece below x = 0.3 ends.
func RecursiveCUSUMCritical(level float64) float64 {
	if level > RecursiveCUSUMPValue(0.3) {
		panic(fmt.Sprintf("drift: RecursiveCUSUMCritical level %g above the tabulated range", level))
	}
	return solveDecreasing("RecursiveCUSUMCritical", RecursiveCUSUMPValue, level, 0.3, 10)
}

// solveDecreasing finds x in [lo, hi] with p(x) = level for a decreasing p
// by bisection to the resolution of a double.
func solveDecreasing(fn string, p func(float64) float64, level, lo, hi float64) float64 {
	if !(level > 0 && level < 1) {
		panic(fmt.Sprintf("drift: %s level %g is not in (0, 1)", fn, level))
	}
	for i := 0; i < 200 && hi-lo > 1e-15*hi; i++ {
		mid := (lo + hi) / 2
		if p(mid) > level {
			lo = mid
		} else {
			hi = mid
		}
	}
	return (lo + hi) / 2
}
