package analyze

import (
	"errors"
	"fmt"
	"math"
	"slices"
	"sort"
	"strings"

	"github.com/costdrift/costdrift/internal/costdrift"
	"github.com/costdrift/costdrift/internal/fit"
	"github.com/costdrift/costdrift/internal/present"
)

// Settings are the method settings (the README's method defaults in brackets).
type Settings struct {
	MinPeriods int     // fewer observations than this: insufficient_data [12]
	Lags       []int   // periods a driver may lead the cost [0, 1]
	Alpha      float64 // significance level after correction [0.05]

	// BreakAlpha is the level at which a break in the window counts; 0
	// turns the break test off. [0.01]
	BreakAlpha float64
	// Replicates of the residual bootstrap of the sup-F p-value [999], and
	// its seed (mixed with each object's name, so that an object's p-value
	// does not depend on which other objects were analysed).
	Replicates int
	Seed       uint64

	// shared holds what every object of a panel computes alike (screen.go);
	// Panel sets it, and Object without it computes the same itself.
	shared *shared

	// Prior holds each object's behaviour before this analysis, by object
	// name. A cost near a boundary between two classes or two drivers would
	// otherwise flip between them as noise moves it; with a prior, the
	// analysis keeps it unless the new evidence is clearly better
	// (hysteresis.go).
	Prior map[string]costdrift.Behaviour

	// StoredOnly: Panel keeps of each result only the fits the store keeps
	// (Result.Stored), dropping every other candidate's as soon as the
	// object is analysed, so that a batch waiting to be stored holds a few
	// fits an object rather than a hundred or more.
	StoredOnly bool

	// fits, set by Panel with StoredOnly, is a worker's record of every
	// fit of its current object: the top analysis of an object (objectOn
	// from Object) writes its hundred-odd fits there instead of into a
	// slice of its own, and Panel copies out the few the store keeps
	// before the worker's next object reuses it.
	fits *[]costdrift.Fit

	// scratch, set by Panel, is a worker's room for the candidates of its
	// current object and their screens, taken back before its next object.
	scratch *scratch
}

// scratch hands out candidates, and the regressions of their screens, from
// blocks a worker reuses object after object: an object has some sixty
// candidates, each with two screens, and nothing of them outlives its
// analysis (a Result holds copies: Fits, Behaviour, Terms).
type scratch struct {
	screens fit.Slab
	cands   [][]candidate // blocks of scratchCandidates
	n       int           // candidates handed out
}

const scratchCandidates = 64

// candidate returns a zero candidate: from the scratch, or a new one
// without (sc nil).
func (sc *scratch) candidate() *candidate {
	if sc == nil {
		return &candidate{}
	}
	b, i := sc.n/scratchCandidates, sc.n%scratchCandidates
	if b == len(sc.cands) {
		sc.cands = append(sc.cands, make([]candidate, scratchCandidates))
	}
	sc.n++
	c := &sc.cands[b][i]
	*c = candidate{}
	return c
}

// slab is the slab the screens are taken from; nil without a scratch.
func (sc *scratch) slab() *fit.Slab {
	if sc == nil {
		return nil
	}
	return &sc.screens
}

// reset takes back everything handed out, for the worker's next object.
func (sc *scratch) reset() {
	sc.n = 0
	sc.screens.Reset()
}

// Thresholds of the classification, as fractions. They are common practice
// in cost accounting rather than statistics, which is why they are fixed
// here and named in every reason.
const (
	FixedMaxCV       = 0.10 // a cost with no driver that varies at most this much around its mean is fixed
	MinorShare       = 0.10 // a fixed or variable part below this share of cost at mean activity is ignored
	OutlierStdResid  = 2.5  // |studentised residual| above this marks a high-low end as an outlier
	outlierCookScale = 4.0  // Cook's distance above 4/n marks an outlier
)

// Result is the analysis of one cost object: every fit tried and the
// behaviour chosen.
type Result struct {
	// Fits are every fit tried. A candidate line's p-values that the
	// choice did not need are NaN (the screen leaves them out); Stored
	// computes them for the fits it keeps.
	Fits      []costdrift.Fit
	Behaviour costdrift.Behaviour

	// Err is set when the object cannot be analysed: the panel marks it
	// Unusable (Err is then the reason), or its analysis panicked (set by
	// Panel, with Stack where the panic happened, for the log). Fits and
	// Behaviour are then empty but for the object, which the caller skips.
	Err   error
	Stack string

	// BreakTested: the break test ran on the object (it has a class and
	// enough periods), so that it counts among the tests a portfolio-wide
	// control weighs (ControlBreaks).
	BreakTested bool
	// Unbroken is the analysis over the whole window when a break was found
	// (Behaviour.Break set): the object's result should the break not stand
	// once the whole portfolio's breaks are weighed (ControlBreaks); nil
	// otherwise.
	Unbroken *Result

	// The data the behaviour rests on, for the break test: the chosen
	// driver's values (nil without a driver), the costs and their window
	// positions.
	x, y  []float64
	index []int
	// stepResiduals are a step cost's costs less the level of their step,
	// in the order of y: its break test runs on them (breaks.go).
	stepResiduals []float64
}

// candidate is one driver at one lag, aligned with the cost.
type candidate struct {
	driver    *costdrift.DriverSeries
	lag       int
	x, y      []float64
	periods   []string
	index     []int // position of each observation in the panel's window
	linear    *fit.Regression
	origin    *fit.Regression
	linearIdx int // index into Result.Fits
	adjustedP float64
	plausible bool // significant positive slope after correction
	negative  bool // significant negative slope after correction
	meanX     float64
	rangeMin  float64
	rangeMax  float64
	rank      int
	stepIdx   int // index into Result.Fits of its step fit
}

// Object analyses one cost object of the panel: the behaviour over the
// window, then a test for a break in it; with a significant break, the
// behaviour is fitted again from the break on (see breaks.go).
func Object(p *costdrift.Panel, obj *costdrift.ObjectSeries, s Settings) Result {
	if obj.Unusable != "" {
		return Result{Behaviour: costdrift.Behaviour{Object: obj.Object}, Err: errors.New(obj.Unusable)}
	}
	res := objectOn(p, obj, s)
	s.fits = nil // the analyses below keep fits of their own
	if res.Behaviour.Cadence != nil {
		if s.BreakAlpha > 0 {
			res = cadenceBreak(p, obj, res, s)
		}
		return res
	}
	if s.BreakAlpha > 0 {
		broken := withBreak(p, obj, res, s)
		if shifted, ok := fixedShiftFirst(p, obj, res, s); ok {
			broken = shifted
		}
		broken.BreakTested = testable(res)
		if broken.Behaviour.Break != nil {
			whole := res
			whole.BreakTested = broken.BreakTested
			broken.Unbroken = &whole
		}
		res = broken
	}
	return res
}

// fixedShiftFirst tests a cost that was fixed and now takes a driver for a
// shift of its level first. A fixed cost whose level rose while activity
// happened to rise too correlates with the activity, and the new driver
// would absorb the rise, hiding the break its fixed model shows: so the
// fixed model over the whole window is tested for a break (withBreak), and
// when it has one the cost stays fixed up to it and is analysed afresh from
// it. It reports false when the prior was not fixed, the new behaviour has
// no driver, or the fixed model has no break.
func fixedShiftFirst(p *costdrift.Panel, obj *costdrift.ObjectSeries, res Result, s Settings) (Result, bool) {
	prior, ok := s.Prior[obj.Object.String()]
	if !ok || prior.Class != costdrift.Fixed || res.Behaviour.Driver == "" {
		return Result{}, false
	}
	bare := *p
	bare.Drivers = nil
	asBefore := objectOn(&bare, obj, s)
	if asBefore.Behaviour.Class != costdrift.Fixed {
		return Result{}, false
	}
	broken := withBreak(p, obj, asBefore, s)
	if broken.Behaviour.Break == nil {
		return Result{}, false
	}
	return broken, true
}

// objectOn analyses one cost object over the panel's whole window.
func objectOn(p *costdrift.Panel, obj *costdrift.ObjectSeries, s Settings) Result {
	var res Result
	if s.fits != nil {
		res.Fits = (*s.fits)[:0]
		defer func() { *s.fits = res.Fits[:0] }()
	}
	b := &res.Behaviour
	b.Object = obj.Object

	var y []float64
	var periods []string
	for i, v := range obj.Cost {
		if !math.IsNaN(v) {
			y = append(y, v)
			periods = append(periods, p.Periods[i])
			res.index = append(res.index, i)
		}
	}
	res.y = y
	b.N = len(y)
	if len(periods) > 0 {
		b.Since, b.Until = periods[0], periods[len(periods)-1]
	}
	if len(y) < s.MinPeriods {
		b.Class = costdrift.InsufficientData
		b.Reason = fmt.Sprintf("only %d closed periods with ledger data; at least %d are needed", len(y), s.MinPeriods)
		if len(y) > 0 {
			b.MeanCost = meanOf(y)
			b.FixedPerPeriod = b.MeanCost
		}
		return res
	}

	constant, err := fit.Constant(y)
	if err != nil {
		b.Class = costdrift.InsufficientData
		b.Reason = "cannot fit a constant: " + err.Error()
		return res
	}
	b.MeanCost = constant.Coef[0]
	sd := constant.ResidualSE
	b.CV = math.Inf(1)
	if b.MeanCost != 0 {
		b.CV = sd / math.Abs(b.MeanCost)
	}
	res.Fits = append(res.Fits, fitRecord(obj.Object, "", 0, costdrift.ModelConstant, constant, 0, 0))
	if found, ok := findCadence(p.Periods, obj.Cost); ok {
		classifyCadence(p, &res, found)
		cadenceSpending(p, &res)
		return res
	}

	cands := candidates(p, obj, s)
	// Room for every fit the object gets: two per candidate, then the step
	// fits and a two-driver fit, without growing the slice as they come.
	res.Fits = slices.Grow(res.Fits, 2*len(cands)+StepCandidates+1)
	for _, c := range cands {
		c.linearIdx = len(res.Fits)
		f := fitRecord(obj.Object, c.driver.Name, c.lag, costdrift.ModelLinear, c.linear, c.rangeMin, c.rangeMax)
		res.Fits = append(res.Fits, f)
		if c.origin != nil {
			res.Fits = append(res.Fits, fitRecord(obj.Object, c.driver.Name, c.lag, costdrift.ModelProportional, c.origin, c.rangeMin, c.rangeMax))
		}
	}
	adjust(cands, s.Alpha)
	ranked := rank(cands)
	prior, hasPrior := s.Prior[obj.Object.String()]
	if hasPrior {
		ranked = stickyRanking(ranked, cands, prior, s.Alpha)
		ranked = preferPrior(ranked, prior)
	}
	for _, c := range cands {
		f := &res.Fits[c.linearIdx]
		f.SlopeT, f.SlopeP = c.linear.T[1], c.linear.P[1] // NaN where adjust needed no p-value
		f.SlopeAdjustedP = c.adjustedP
		f.Significant = c.plausible
		f.Implausible = c.negative
		f.PlausibleRanked = c.rank
	}
	// The behaviour rests on one of the ranked candidates, whose fits
	// need every p-value.
	for _, c := range ranked {
		fillP(c.linear)
		fillP(c.origin)
		fillRecordP(&res.Fits[c.linearIdx])
		if c.origin != nil {
			fillRecordP(&res.Fits[c.linearIdx+1])
		}
	}
	classify(&res, cands, ranked, y, periods, s)
	spending(p, &res, s)
	return res
}

// candidates fits every driver series that applies to the object at every
// lag. A cost centre's own series wins over the company-wide one of the
// same name. The fits are screens (fit.LineX.Screen): their intercept's
// p-value, and the slope's through the origin, are left NaN until a fit is
// kept (fillP).
func candidates(p *costdrift.Panel, obj *costdrift.ObjectSeries, s Settings) []*candidate {
	sh := s.shared
	if sh != nil && sh.panel != p {
		sh = nil // a panel of its own (a window cut at a break)
	}
	var drivers []*costdrift.DriverSeries
	if sh != nil {
		drivers = sh.driversOf(obj.Object.CostCenter)
	} else {
		drivers = driversFor(p, obj.Object.CostCenter)
	}

	costComplete := complete(obj.Cost)
	var identity []int
	var ly *fit.LineY
	if sh != nil {
		identity = sh.identity
	} else {
		identity = make([]int, len(obj.Cost))
		for i := range identity {
			identity[i] = i
		}
	}
	out := make([]*candidate, 0, len(drivers)*len(s.Lags))
	for _, d := range drivers {
		for li, lag := range s.Lags {
			c := s.scratch.candidate()
			c.driver, c.lag = d, lag
			start := p.MaxLag - lag
			var xs *xSide
			if costComplete && sh != nil {
				xs = sh.xOf(d, li)
			}
			if xs == nil && costComplete && complete(d.Values[start:start+len(obj.Cost)]) {
				xs = newXSide(d.Values[start : start+len(obj.Cost)])
			}
			var cy *fit.LineY
			if xs != nil {
				// The usual case, no gap anywhere: the candidate's data are
				// views of the panel's, and nothing is copied.
				c.x, c.y, c.periods, c.index = xs.x, obj.Cost, p.Periods, identity
				if ly == nil {
					ly = fit.NewLineY(obj.Cost)
				}
				cy = ly
			} else {
				c.x = make([]float64, 0, len(obj.Cost))
				c.y = make([]float64, 0, len(obj.Cost))
				c.periods = make([]string, 0, len(obj.Cost))
				c.index = make([]int, 0, len(obj.Cost))
				for i, v := range obj.Cost {
					xv := d.Values[i+start]
					if math.IsNaN(v) || math.IsNaN(xv) {
						continue
					}
					c.x = append(c.x, xv)
					c.y = append(c.y, v)
					c.periods = append(c.periods, p.Periods[i])
					c.index = append(c.index, i)
				}
				if len(c.x) < s.MinPeriods {
					continue
				}
				xs, cy = newXSide(c.x), fit.NewLineY(c.y)
			}
			if len(c.x) < s.MinPeriods {
				continue
			}
			// Summary fits, without per-period arrays: only the chosen
			// driver's are needed, and full() computes them.
			lin, err := xs.line.ScreenOn(cy, s.scratch.slab())
			if err != nil {
				continue // a constant driver explains nothing
			}
			c.linear = lin
			if orig, err := xs.line.ScreenOriginOn(cy, s.scratch.slab()); err == nil {
				c.origin = orig
			}
			c.meanX, c.rangeMin, c.rangeMax = xs.mean, xs.min, xs.max
			out = append(out, c)
		}
	}
	return out
}

// driversFor lists the driver series that apply to a cost centre, by name:
// its own, and the company-wide ones it has none of its own for.
func driversFor(p *costdrift.Panel, centre string) []*costdrift.DriverSeries {
	chosen := map[string]*costdrift.DriverSeries{}
	for i := range p.Drivers {
		d := &p.Drivers[i]
		switch {
		case d.CostCenter == centre:
			chosen[d.Name] = d
		case d.CostCenter == "":
			if _, ok := chosen[d.Name]; !ok {
				chosen[d.Name] = d
			}
		}
	}
	names := make([]string, 0, len(chosen))
	for n := range chosen {
		names = append(names, n)
	}
	sort.Strings(names)
	out := make([]*costdrift.DriverSeries, len(names))
	for i, n := range names {
		out[i] = chosen[n]
	}
	return out
}

// fillP computes the p-values a screen left out (candidates), for a fit
// that is kept or used.
func fillP(r *fit.Regression) {
	if r == nil {
		return
	}
	for j := range r.P {
		if math.IsNaN(r.P[j]) {
			r.T[j], r.P[j] = fit.CoefTP(r.Coef[j], r.StdErr[j], r.DF)
		}
	}
	if len(r.P) == 2 && r.Intercept && math.IsNaN(r.FP) {
		r.FP = r.P[1] // one slope: the F test is the slope's t test
	}
}

// slopeP is the candidate's slope p-value, computed when first asked for.
func (c *candidate) slopeP() float64 {
	if math.IsNaN(c.linear.P[1]) {
		c.linear.T[1], c.linear.P[1] = fit.CoefTP(c.linear.Coef[1], c.linear.StdErr[1], c.linear.DF)
	}
	return c.linear.P[1]
}

// fillRecordP is fillP on a stored fit: the intercept's p-value of a
// straight line, the slope's of a fit through the origin.
func fillRecordP(f *costdrift.Fit) {
	switch f.Model {
	case costdrift.ModelLinear:
		if math.IsNaN(f.InterceptP) && !math.IsNaN(f.Intercept) {
			_, f.InterceptP = fit.CoefTP(f.Intercept, f.InterceptSE, f.N-2)
		}
		if math.IsNaN(f.SlopeP) && !math.IsNaN(f.Slope) {
			_, f.SlopeP = fit.CoefTP(f.Slope, f.SlopeSE, f.N-2)
		}
	case costdrift.ModelProportional:
		if math.IsNaN(f.SlopeP) && !math.IsNaN(f.Slope) {
			_, f.SlopeP = fit.CoefTP(f.Slope, f.SlopeSE, f.N-1)
		}
	}
}

// complete reports whether no value is missing (NaN).
func complete(v []float64) bool {
	for _, x := range v {
		if math.IsNaN(x) {
			return false
		}
	}
	return true
}

// full gives the candidate's line its per-period arrays (residuals,
// leverage, Cook's distance), which the chosen driver's diagnostics need.
func (c *candidate) full() {
	if c.linear.Residuals != nil {
		return
	}
	if r, err := fit.Line(c.x, c.y); err == nil {
		c.linear = r
	}
}

// candidateKey is a candidate with the key adjust orders it by.
type candidateKey struct {
	key float64
	c   *candidate
}

// adjust applies Holm's step-down correction to the slopes' p-values over
// all candidates of the object, so that a driver counts as significant only
// when it would also survive the number of drivers and lags tried (Holm
// 1979; it controls the family-wise error rate like Bonferroni, with more
// power).
//
// The p-values are computed only as far as they matter: with the same
// residual degrees of freedom everywhere (the usual case) the order by
// p-value is the order by |t|, and once an adjusted p-value reaches 1 every
// later one is 1, whatever its p-value.
func adjust(cands []*candidate, alpha float64) {
	m := len(cands)
	order := make([]*candidate, m)
	copy(order, cands)
	sameDF := true
	for _, c := range cands {
		sameDF = sameDF && c.linear.DF == cands[0].linear.DF
	}
	if sameDF {
		// 2·Pr(T > |t|) falls as |t| grows: ties in |t| are ties in p.
		// The keys are taken once, and the sort is sort.SliceStable's
		// algorithm without its reflection (slices.SortStableFunc).
		keyed := make([]candidateKey, m)
		for i, c := range cands {
			keyed[i] = candidateKey{math.Abs(c.linear.T[1]), c}
		}
		slices.SortStableFunc(keyed, func(a, b candidateKey) int {
			switch {
			case a.key > b.key:
				return -1
			case b.key > a.key:
				return 1
			}
			return 0
		})
		for i, k := range keyed {
			order[i] = k.c
		}
	} else {
		slices.SortStableFunc(order, func(a, b *candidate) int {
			switch {
			case a.slopeP() < b.slopeP():
				return -1
			case b.slopeP() < a.slopeP():
				return 1
			}
			return 0
		})
	}
	running := 0.0
	for i, c := range order {
		if running >= 1 {
			c.adjustedP = 1
			continue
		}
		adj := math.Min(1, float64(m-i)*c.slopeP())
		running = math.Max(running, adj) // adjusted p-values never decrease along the order
		c.adjustedP = running
		if c.adjustedP < alpha {
			if c.linear.Coef[1] > 0 {
				c.plausible = true
			} else {
				c.negative = true
			}
		}
	}
}

// rank orders the plausible candidates by leave-one-out error (PRESS per
// observation, since candidates may differ in n), not by R² alone.
func rank(cands []*candidate) []*candidate {
	var ranked []*candidate
	for _, c := range cands {
		if c.plausible {
			ranked = append(ranked, c)
		}
	}
	sort.SliceStable(ranked, func(i, j int) bool {
		return ranked[i].linear.PRESS/float64(ranked[i].linear.N) < ranked[j].linear.PRESS/float64(ranked[j].linear.N)
	})
	for i, c := range ranked {
		c.rank = i + 1
	}
	return ranked
}

// fitRecord turns a regression into a stored fit.
func fitRecord(o costdrift.CostObject, driver string, lag int, model costdrift.Model, r *fit.Regression, lo, hi float64) costdrift.Fit {
	f := costdrift.Fit{
		Object: o, Driver: driver, Lag: lag, Model: model, N: r.N,
		R2: r.R2, ResidualSE: r.ResidualSE, PRESS: r.PRESS, AICc: r.AICc,
		Intercept: math.NaN(), InterceptSE: math.NaN(), InterceptP: math.NaN(),
		Slope: math.NaN(), SlopeSE: math.NaN(), SlopeT: math.NaN(), SlopeP: math.NaN(), SlopeAdjustedP: math.NaN(),
		RangeMin: math.NaN(), RangeMax: math.NaN(),
	}
	switch model {
	case costdrift.ModelConstant:
		f.Intercept, f.InterceptSE, f.InterceptP = r.Coef[0], r.StdErr[0], r.P[0]
	case costdrift.ModelLinear:
		f.Intercept, f.InterceptSE, f.InterceptP = r.Coef[0], r.StdErr[0], r.P[0]
		f.Slope, f.SlopeSE, f.SlopeT, f.SlopeP = r.Coef[1], r.StdErr[1], r.T[1], r.P[1]
	case costdrift.ModelProportional:
		f.Slope, f.SlopeSE, f.SlopeT, f.SlopeP = r.Coef[0], r.StdErr[0], r.T[0], r.P[0]
	}
	if driver != "" {
		f.RangeMin, f.RangeMax = lo, hi
	}
	return f
}

func meanOf(v []float64) float64 {
	s := 0.0
	for _, x := range v {
		s += x
	}
	return s / float64(len(v))
}

// minMax returns the smallest and largest value, NaN when any is NaN. It
// runs for every candidate of every object, where math.Min and math.Max,
// which also order −0 below +0, took a twentieth of the analysis.
func minMax(v []float64) (float64, float64) {
	lo, hi := math.Inf(1), math.Inf(-1)
	for _, x := range v {
		if x != x {
			return math.NaN(), math.NaN()
		}
		if x < lo {
			lo = x
		}
		if x > hi {
			hi = x
		}
	}
	return lo, hi
}

// driverLabel is how a reason names a driver and lag.
func driverLabel(c *candidate) string {
	name := strings.ReplaceAll(c.driver.Name, "_", " ")
	switch c.lag {
	case 0:
		return name
	case 1:
		return name + " of the period before"
	default:
		return fmt.Sprintf("%s of %d periods before", name, c.lag)
	}
}

// pText writes a p-value the way a reason shows it.
func pText(p float64) string {
	if p < present.AnalyticResolution {
		return "p " + present.PValue(p, present.AnalyticResolution)
	}
	return "p = " + present.PValue(p, present.AnalyticResolution)
}
