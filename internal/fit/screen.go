package fit

import (
	"fmt"
	"math"
)

// An analysis fits a straight line and a line through the origin of every
// cost on every driver at every lag, and the drivers are shared by all
// costs: the part of those fits that depends on the driver alone (its
// means, sums of squares and leverages) is the same for every cost. LineX
// holds it, computed once per driver series; LineY the part that depends
// on the cost alone, once per cost. LineX.Screen then gives LineSummary's
// result, and ScreenOrigin ThroughOriginSummary's, bit for bit, in two
// passes over the data, but for one thing: the coefficients' p-values
// (and FP, the slope's p-value again) are left NaN. Each is an incomplete
// beta function; a screen of sixty candidates needs few of them: the
// slopes' p-values only as far as the multiple-testing correction can
// still find a slope significant, and the others only for the fits that
// are kept. CoefTP computes them.

// LineX is the part of a straight-line fit and of a fit through the origin
// that depends on x alone.
type LineX struct {
	x    []float64
	n    int
	err  error // the straight line cannot be fitted on x, whatever y
	xbar float64
	sxx  float64
	dx   float64   // sum of the first-pass deviations
	dev1 []float64 // x_i − first-pass mean
	dev  []float64 // x_i − refined mean
	lev  []float64 // leverages 1/n + dev²/Sxx
	// Through the origin.
	err0 error
	sxx0 float64 // Σx²
	lev0 []float64
}

// NewLineX prepares the fits of any y on x.
func NewLineX(x []float64) *LineX {
	n := len(x)
	lx := &LineX{x: x, n: n}
	nf := float64(n)
	var sx, sxx0 float64
	xConst := true
	for i, xi := range x {
		if !isFinite(xi) {
			lx.err = fmt.Errorf("line: x[%d] = %g: %w", i, xi, ErrNonFinite)
			lx.err0 = lx.err
			return lx
		}
		sx += xi
		sxx0 += xi * xi
		xConst = xConst && xi == x[0]
	}
	// Through the origin.
	lx.sxx0 = sxx0
	switch {
	case n < 2:
		lx.err0 = fmt.Errorf("through origin: %d observations for 1 coefficient: %w", n, ErrTooFewObservations)
	case math.IsInf(sxx0, 0):
		lx.err0 = fmt.Errorf("through origin: sums of squares overflow: %w", ErrNonFinite)
	case sxx0 == 0:
		lx.err0 = fmt.Errorf("through origin: activity is all zero: %w", ErrIllConditioned)
	default:
		lx.lev0 = make([]float64, n)
		for i, xi := range x {
			lx.lev0[i] = xi * xi / sxx0
		}
	}
	// The straight line, as line computes it.
	switch {
	case n < 3:
		lx.err = fmt.Errorf("line: %d observations for 2 coefficients: %w", n, ErrTooFewObservations)
		return lx
	case xConst:
		lx.err = fmt.Errorf("line: activity is constant (%g): %w", x[0], ErrIllConditioned)
		return lx
	}
	xbar := sx / nf
	lx.dev1 = make([]float64, n)
	var dx, sxx float64
	for i, xi := range x {
		u := xi - xbar
		lx.dev1[i] = u
		dx += u
		sxx += u * u
	}
	sxx -= dx * dx / nf
	xbar += dx / nf
	if math.IsInf(sxx, 0) {
		lx.err = fmt.Errorf("line: sums of squares overflow: %w", ErrNonFinite)
		return lx
	}
	if sxx <= 0 || math.Sqrt(sxx/(sxx+nf*xbar*xbar)) < rankTolerance {
		lx.err = fmt.Errorf("line: activity is constant to 7 digits (Sxx = %g): %w", sxx, ErrIllConditioned)
		return lx
	}
	lx.xbar, lx.sxx, lx.dx = xbar, sxx, dx
	lx.dev = make([]float64, n)
	lx.lev = make([]float64, n)
	for i, xi := range x {
		u := xi - xbar
		lx.dev[i] = u
		lx.lev[i] = 1/nf + u*u/sxx
	}
	return lx
}

// LineY is the part of the fits that depends on y alone.
type LineY struct {
	y    []float64
	err  error
	ybar float64 // first-pass mean (y[0] exactly for constant y)
	dev1 []float64
	dy   float64
	syy  float64 // centred, corrected
	syy0 float64 // Σy²
}

// NewLineY prepares the fits of y on any x.
func NewLineY(y []float64) *LineY {
	n := len(y)
	ly := &LineY{y: y}
	nf := float64(n)
	var sy, syy0 float64
	yConst := true
	for i, yi := range y {
		if !isFinite(yi) {
			ly.err = fmt.Errorf("line: y[%d] = %g: %w", i, yi, ErrNonFinite)
			return ly
		}
		sy += yi
		syy0 += yi * yi
		yConst = yConst && yi == y[0]
	}
	ly.syy0 = syy0
	if n == 0 {
		return ly
	}
	ybar := sy / nf
	if yConst {
		ybar = y[0]
	}
	ly.dev1 = make([]float64, n)
	var dy, syy float64
	for i, yi := range y {
		v := yi - ybar
		ly.dev1[i] = v
		dy += v
		syy += v * v
	}
	ly.ybar = ybar
	ly.dy = dy
	ly.syy = syy - dy*dy/nf
	return ly
}

// Screen is LineSummary(x, y) for the x of lx and the y of ly, but for
// the p-values P and FP, which are NaN where a standard error is positive
// (CoefTP gives P[j] from Coef[j], StdErr[j] and DF; FP is P[1]). It panics
// when they differ in length.
func (lx *LineX) Screen(ly *LineY) (*Regression, error) {
	return lx.ScreenOn(ly, nil)
}

// ScreenOn is Screen with the regression taken from sl (see Slab).
func (lx *LineX) ScreenOn(ly *LineY, sl *Slab) (*Regression, error) {
	n := lx.n
	if len(ly.y) != n {
		panic(fmt.Sprintf("fit: Screen x has %d values, y has %d", n, len(ly.y)))
	}
	if lx.err != nil {
		return nil, lx.err
	}
	if ly.err != nil {
		return nil, ly.err
	}
	nf := float64(n)
	var sxy float64
	for i, u := range lx.dev1 {
		sxy += u * ly.dev1[i]
	}
	sxy -= lx.dx * ly.dy / nf
	ybar := ly.ybar + ly.dy/nf
	if math.IsInf(ly.syy, 0) || math.IsNaN(sxy) || math.IsInf(sxy, 0) {
		return nil, fmt.Errorf("line: sums of squares overflow: %w", ErrNonFinite)
	}
	b := sxy / lx.sxx
	r := sl.regression(n, 2, 1, true, false)
	var rss, press float64
	y := ly.y
	for i, u := range lx.dev {
		e := (y[i] - ybar) - b*u
		if free := 1 - lx.lev[i]; free < leverageOne {
			press = math.Inf(1)
		} else {
			press += (e / free) * (e / free)
		}
		rss += e * e
	}
	xbar, sxx := lx.xbar, lx.sxx
	r.RSS = rss
	r.PRESS = press
	r.Coef[0] = ybar - b*xbar
	r.Coef[1] = b
	r.StdErr[0] = math.Sqrt(1/nf + xbar*xbar/sxx)
	r.StdErr[1] = 1 / math.Sqrt(sxx)
	r.centre[0] = xbar
	r.gamma[0], r.gamma[1] = ybar, b
	r.factor[0], r.factor[1], r.factor[2], r.factor[3] = 1/math.Sqrt(nf), 0, 0, 1/math.Sqrt(sxx)
	r.finishSkipP(ly.syy, skipAllP)
	return r, nil
}

// ScreenOrigin is ThroughOriginSummary(x, y) for the x of lx and the y of
// ly, but for P[0], the slope's p-value, and FP, which are NaN (CoefTP
// gives P[0] from Coef[0] and StdErr[0]).
func (lx *LineX) ScreenOrigin(ly *LineY) (*Regression, error) {
	return lx.ScreenOriginOn(ly, nil)
}

// ScreenOriginOn is ScreenOrigin with the regression taken from sl (see
// Slab).
func (lx *LineX) ScreenOriginOn(ly *LineY, sl *Slab) (*Regression, error) {
	n := lx.n
	if len(ly.y) != n {
		panic(fmt.Sprintf("fit: ScreenOrigin x has %d values, y has %d", n, len(ly.y)))
	}
	if ly.err != nil {
		return nil, ly.err
	}
	if lx.err0 != nil {
		return nil, lx.err0
	}
	x, y := lx.x, ly.y
	var sxy float64
	for i, xi := range x {
		sxy += xi * y[i]
	}
	if math.IsInf(ly.syy0, 0) || math.IsInf(sxy, 0) || math.IsNaN(sxy) {
		return nil, fmt.Errorf("through origin: sums of squares overflow: %w", ErrNonFinite)
	}
	sxx := lx.sxx0
	b := sxy / sxx
	r := sl.regression(n, 1, 1, false, false)
	var rss, press float64
	for i, xi := range x {
		e := y[i] - b*xi
		if free := 1 - lx.lev0[i]; free < leverageOne {
			press = math.Inf(1)
		} else {
			press += (e / free) * (e / free)
		}
		rss += e * e
	}
	r.RSS = rss
	r.PRESS = press
	r.Coef[0] = b
	r.StdErr[0] = 1 / math.Sqrt(sxx)
	r.gamma[0] = b
	r.factor[0] = 1 / math.Sqrt(sxx)
	r.finishSkipP(ly.syy0, 0)
	return r, nil
}

// CoefTP returns a coefficient's t statistic and two-sided p-value with df
// residual degrees of freedom as every fit of this package computes them:
// t = coef/se; on a perfect fit (se = 0) t = ±Inf and p = 0, or t = 0 and
// p = 1 for a coefficient exactly 0.
func CoefTP(coef, se float64, df int) (t, p float64) {
	switch {
	case se > 0:
		t = coef / se
		return t, twoSidedP(t, float64(df))
	case coef == 0:
		return 0, 1
	default:
		return math.Copysign(math.Inf(1), coef), 0
	}
}
