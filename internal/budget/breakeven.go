package budget

// Break-even and contribution from the cost formulas (common practice):
//
//	profit(Q) = p·Q − F − v·Q,   m = p − v,   Q* = F / m,   R* = p·Q*,
//	margin of safety at Q₀ = Q₀ − Q*, its ratio 1 − Q*/Q₀,
//	degree of operating leverage at Q₀ = m·Q₀ / (m·Q₀ − F) = 1 / (1 − Q*/Q₀),
//
// where F is the fixed cost per period and v the variable cost per unit of
// the volume driver, summed over the formulas in scope. Each formula's
// expected cost is linear in Q (a cost on another driver through the
// fitted relation of that driver to the volume), and the variance of its
// estimate, S²·rᵀ·Cov·r from its prediction terms, is quadratic in Q. The
// break-even volume's interval is Fieller's: the volumes at which the
// estimated profit is not distinguishable from zero,
//
//	(m·Q − F)² ≤ t²·V(Q),   V(Q) = Σ_i S_i²·r_i(Q)ᵀ·Cov_i·r_i(Q),
//
// with t at the Welch–Satterthwaite degrees of freedom of V at Q*. The
// intervals are those of the formulas (what the data say the cost is at a
// volume), not of one period's cost, which also scatters around them.

import (
	"errors"
	"fmt"
	"math"
	"sort"
	"strings"

	"github.com/costdrift/costdrift/internal/costdrift"
	"github.com/costdrift/costdrift/internal/fit"
	"github.com/costdrift/costdrift/internal/present"
)

// Range is a figure with its 95 % interval; a bound the data cannot set is
// NaN (JSON null).
type Range struct {
	Value float64 `json:"value"`
	Low   float64 `json:"low95"`
	High  float64 `json:"high95"`
}

// BreakEvenPart is one formula's share of the costs: its fixed cost per
// period and its cost per unit of the volume driver, and how it was
// brought onto the volume.
type BreakEvenPart struct {
	Object  costdrift.CostObject `json:"-"`
	Class   costdrift.Class      `json:"class"`
	Driver  string               `json:"driver"`
	Fixed   float64              `json:"fixed_per_period"`
	PerUnit float64              `json:"per_unit"`
	How     string               `json:"how"`
}

// BreakEven is the break-even and contribution analysis of the formulas in
// scope at one price per unit of the volume driver.
type BreakEven struct {
	Driver string  `json:"volume_driver"`
	Price  float64 `json:"price"`

	Fixed        Range `json:"fixed_per_period"`
	Variable     Range `json:"variable_per_unit"`
	Contribution Range `json:"contribution_per_unit"`
	Ratio        Range `json:"contribution_ratio"`
	Volume       Range `json:"break_even_volume"`
	Revenue      Range `json:"break_even_revenue"`

	// At the reference volume (planned or actual); NaN without one.
	ReferenceVolume float64 `json:"reference_volume"`
	Income          Range   `json:"operating_income"`
	Safety          Range   `json:"margin_of_safety"`
	SafetyRatio     Range   `json:"margin_of_safety_ratio"`
	Leverage        Range   `json:"operating_leverage"`

	// The volumes inside every volume-driven formula's relevant range.
	RangeLow  float64 `json:"relevant_range_low"`
	RangeHigh float64 `json:"relevant_range_high"`
	DF        float64 `json:"df"`

	Parts []BreakEvenPart `json:"-"`
	Notes []string        `json:"notes"`
}

// BreakEvenInput is what BreakEvenOf needs: the effective formulas in
// scope, the price, and lookups into the activity.
type BreakEvenInput struct {
	Driver     string
	Price      float64
	Behaviours []costdrift.Behaviour
	// Reference is the volume the margin of safety is taken at (NaN for
	// none).
	Reference float64
	// Pairs returns, for a formula on another driver, that driver's values
	// beside the volume's over the formula's periods.
	Pairs func(b *costdrift.Behaviour, other string) (volume, values []float64)
	// Held is another driver's figure at the reference, for a cost counted
	// as fixed.
	Held func(b *costdrift.Behaviour, other string) (float64, bool)
}

// ErrNoBreakEven is returned when the price does not cover the variable
// cost per unit.
var ErrNoBreakEven = errors.New("no break-even")

// linear is a + b·Q with a variance A + 2B·Q + C·Q² on DF degrees of
// freedom.
type linear struct {
	a, b    float64
	va, vb  float64 // A and B
	vc      float64 // C
	df      float64
	present bool
}

func (l linear) variance(q float64) float64 { return l.va + 2*l.vb*q + l.vc*q*q }

// quadForm returns the variance pieces of S²·r(Q)ᵀ·Cov·r(Q) for r(Q) =
// r0 + Q·d.
func quadForm(t fit.Terms, r0, d []float64) (va, vb, vc float64) {
	k := len(t.Coef)
	s2 := t.S * t.S
	for i := 0; i < k; i++ {
		for j := 0; j < k; j++ {
			c := t.Cov[i*k+j] * s2
			va += r0[i] * c * r0[j]
			vb += r0[i] * c * d[j]
			vc += d[i] * c * d[j]
		}
	}
	return va, vb, vc
}

// fullRow is the regressor row Terms.Predict builds for x0: a leading 1
// and centred values with an intercept.
func fullRow(t fit.Terms, x0 []float64) []float64 {
	var row []float64
	if t.Intercept {
		row = append(row, 1)
	}
	for j, v := range x0 {
		if t.Intercept {
			v -= t.Centre[j]
		}
		row = append(row, v)
	}
	return row
}

// termsLinear is a formula's estimate, when each regressor is linear in Q
// (x_j = c_j + s_j·Q), as a linear.
func termsLinear(t fit.Terms, c, s []float64) linear {
	r0 := fullRow(t, c)
	r1 := fullRow(t, addScaled(c, s))
	d := make([]float64, len(r0))
	for i := range d {
		d[i] = r1[i] - r0[i]
	}
	l := linear{df: float64(t.DF), present: true}
	for i := range t.Coef {
		l.a += t.Coef[i] * r0[i]
		l.b += t.Coef[i] * d[i]
	}
	l.va, l.vb, l.vc = quadForm(t, r0, d)
	return l
}

func addScaled(c, s []float64) []float64 {
	out := make([]float64, len(c))
	for i := range c {
		out[i] = c[i] + s[i]
	}
	return out
}

// stretches returns a volume inside each stretch between the changes of
// level of the step costs on the volume, lowest first (one, 0, without
// such costs).
func stretches(in BreakEvenInput) []float64 {
	var cuts []float64
	for i := range in.Behaviours {
		b := &in.Behaviours[i]
		if b.Class != costdrift.Step || b.Driver != in.Driver {
			continue
		}
		for g := 1; g < len(b.Steps); g++ {
			cuts = append(cuts, (b.Steps[g-1].To+b.Steps[g].From)/2)
		}
	}
	sort.Float64s(cuts)
	out := []float64{0}
	for i, c := range cuts {
		if i > 0 && c == cuts[i-1] {
			continue
		}
		next := 2 * c
		if i+1 < len(cuts) {
			next = (c + cuts[i+1]) / 2
		}
		out = append(out, next)
	}
	return out
}

// collection is the formulas' estimates with step costs at their levels
// at one volume.
type collection struct {
	ls       []linear
	parts    []BreakEvenPart
	notes    []string
	lo, hi   float64 // the relevant range
	fixed, v float64
}

func collect(in BreakEvenInput, at float64) (collection, error) {
	c := collection{lo: math.Inf(-1), hi: math.Inf(1)}
	for i := range in.Behaviours {
		b := &in.Behaviours[i]
		ls, part, err := breakEvenPart(in, b, at, &c)
		if err != nil {
			return c, err
		}
		if ls == nil {
			continue
		}
		for _, l := range ls {
			part.Fixed += l.a
			part.PerUnit += l.b
		}
		c.ls = append(c.ls, ls...)
		c.parts = append(c.parts, part)
	}
	sort.SliceStable(c.parts, func(i, j int) bool { return c.parts[i].Object.String() < c.parts[j].Object.String() })
	for _, l := range c.ls {
		c.fixed += l.a
		c.v += l.b
	}
	return c, nil
}

// fieller is the break-even volume F/m of c at price p and its 95 %
// interval (NaN bounds when the data cannot bound it), and the degrees of
// freedom of V at it.
func (c collection) fieller(p float64) (r Range, df float64) {
	m := p - c.v
	q := c.fixed / m
	_, df = sumAt(c.ls, q)
	tq := t95(df)
	var A, B, C float64
	for _, l := range c.ls {
		A, B, C = A+l.va, B+l.vb, C+l.vc
	}
	r = Range{q, math.NaN(), math.NaN()}
	if a2 := m*m - tq*tq*C; a2 > 0 {
		a1 := -2 * (m*c.fixed + tq*tq*B)
		a0 := c.fixed*c.fixed - tq*tq*A
		disc := math.Sqrt(math.Max(a1*a1-4*a2*a0, 0))
		r.Low, r.High = math.Max((-a1-disc)/(2*a2), 0), (-a1+disc)/(2*a2)
	}
	return r, df
}

// BreakEvenOf computes the break-even analysis. It fails when no formula
// uses the volume driver, when a formula in scope has no usable
// prediction terms, and (ErrNoBreakEven) when the price does not exceed
// the variable cost per unit or the formulas hold no fixed cost. A step
// cost on the volume counts at its level at the break-even volume (found
// by moving to the level there until it holds); the figures at the
// reference volume count its level there.
func BreakEvenOf(in BreakEvenInput) (BreakEven, error) {
	res := BreakEven{Driver: in.Driver, Price: in.Price, ReferenceVolume: in.Reference}
	uses := false
	for i := range in.Behaviours {
		b := &in.Behaviours[i]
		if (b.Driver == in.Driver || b.Driver2 == in.Driver) && needsDriver(b) {
			uses = true
		}
	}
	if !uses {
		return res, fmt.Errorf("no cost formula in scope uses %s: break-even needs the costs that vary with the volume", in.Driver)
	}
	// With step costs on the volume the profit is linear between the
	// steps' changes, and may cross zero in more than one stretch: each
	// stretch's break-even counts when it falls inside the stretch. The
	// highest is the break-even (above it every volume makes a profit);
	// the others are said.
	var found []collection
	var c collection
	for _, at := range stretches(in) {
		s, err := collect(in, at)
		if err != nil {
			return res, err
		}
		if c.ls == nil {
			c = s // for the errors below when none breaks even
		}
		if s.v >= in.Price || s.fixed <= 0 {
			continue
		}
		q := s.fixed / (in.Price - s.v)
		there, err := collect(in, q)
		if err != nil {
			return res, err
		}
		if there.fixed == s.fixed && there.v == s.v {
			found = append(found, there)
		}
	}
	if len(found) > 0 {
		c = found[len(found)-1]
		for _, o := range found[:len(found)-1] {
			c.notes = append(c.notes, fmt.Sprintf("with the step costs at lower levels the profit also crosses zero at %s, and falls below it again where they step up",
				num(o.fixed/(in.Price-o.v))))
		}
	}
	res.Parts, res.Notes, res.RangeLow, res.RangeHigh = c.parts, c.notes, c.lo, c.hi
	F, v := c.fixed, c.v
	m := in.Price - v
	if m <= 0 {
		return res, fmt.Errorf("%w: the price %s does not exceed the variable cost of %s per unit of %s, so every unit adds to the loss",
			ErrNoBreakEven, money(in.Price), money(v), in.Driver)
	}
	if F <= 0 {
		return res, fmt.Errorf("%w: the formulas in scope hold no fixed cost (%s a period), so every volume above zero makes a profit",
			ErrNoBreakEven, money(F))
	}
	vF, dfF := sumAt(c.ls, 0)
	res.Fixed = around(F, vF, dfF)
	vC, dfC := slopeVariance(c.ls)
	res.Variable = around(v, vC, dfC)
	res.Contribution = Range{m, in.Price - res.Variable.High, in.Price - res.Variable.Low}
	res.Ratio = Range{m / in.Price, res.Contribution.Low / in.Price, res.Contribution.High / in.Price}
	res.Volume, res.DF = c.fieller(in.Price)
	q := res.Volume.Value
	if math.IsNaN(res.Volume.Low) {
		res.Notes = append(res.Notes, "the data do not show the contribution per unit above zero at 95 %: they cannot bound the break-even volume")
	}
	res.Revenue = Range{in.Price * q, in.Price * res.Volume.Low, in.Price * res.Volume.High}
	if q < res.RangeLow || q > res.RangeHigh {
		res.Notes = append(res.Notes, fmt.Sprintf("the break-even volume %s lies outside the relevant range %s to %s: no formula was observed there, so it is an extrapolation",
			num(q), num(res.RangeLow), num(res.RangeHigh)))
	}
	nan := Range{math.NaN(), math.NaN(), math.NaN()}
	res.Income, res.Safety, res.SafetyRatio, res.Leverage = nan, nan, nan, nan
	if q0 := in.Reference; q0 > 0 && !math.IsInf(q0, 0) {
		ref, err := collect(in, q0)
		if err != nil {
			return res, err
		}
		if ref.fixed != c.fixed {
			res.Notes = append(res.Notes, fmt.Sprintf("a step cost is at another level at the reference volume: the operating income and leverage there count %s of fixed cost, the break-even %s",
				money(ref.fixed), money(c.fixed)))
		}
		vI, dfI := sumAt(ref.ls, q0)
		res.Income = around((in.Price-ref.v)*q0-ref.fixed, vI, dfI)
		res.Safety = Range{q0 - q, q0 - res.Volume.High, q0 - res.Volume.Low}
		res.SafetyRatio = Range{res.Safety.Value / q0, res.Safety.Low / q0, res.Safety.High / q0}
		// Leverage = contribution / operating income = q0 / (q0 − Q'),
		// Q' the break-even with the levels in force at q0; falling in Q'.
		qr, _ := ref.fieller(in.Price)
		if res.Income.Value > 0 {
			res.Leverage.Value = q0 / (q0 - qr.Value)
			if !math.IsNaN(qr.Low) {
				res.Leverage.Low = q0 / (q0 - qr.Low)
			}
			if qr.High < q0 {
				res.Leverage.High = q0 / (q0 - qr.High)
			}
		} else {
			res.Notes = append(res.Notes, fmt.Sprintf("at the reference volume %s the formulas give a loss: operating leverage has no meaning there", num(q0)))
		}
		if q0 < res.RangeLow || q0 > res.RangeHigh {
			res.Notes = append(res.Notes, fmt.Sprintf("the reference volume %s lies outside the relevant range %s to %s", num(q0), num(res.RangeLow), num(res.RangeHigh)))
		}
	}
	if math.IsInf(res.RangeLow, 0) || math.IsInf(res.RangeHigh, 0) {
		res.RangeLow, res.RangeHigh = math.NaN(), math.NaN()
	}
	res.Notes = append(res.Notes, "valid only inside the relevant range, where the formulas were observed; "+
		"intervals are 95 % for the formulas, not for one period's cost, and assume the objects' estimates independent")
	return res, nil
}

// breakEvenPart is b's estimate as linears in Q (nil for a formula left
// out, with a note) and its part.
func breakEvenPart(in BreakEvenInput, b *costdrift.Behaviour, at float64, res *collection) ([]linear, BreakEvenPart, error) {
	part := BreakEvenPart{Object: b.Object, Class: b.Class, Driver: b.Driver}
	if b.Class == costdrift.InsufficientData {
		res.notes = append(res.notes, fmt.Sprintf("%s left out: %s", b.Object, "too few periods for a formula"))
		return nil, part, nil
	}
	if b.Prediction == nil || b.Prediction.Check() != nil {
		return nil, part, fmt.Errorf("%s has no prediction terms: run `costdrift analyze --all`", b.Object)
	}
	t := fit.Terms(*b.Prediction)
	switch {
	case b.Class == costdrift.Fixed || b.Class == costdrift.Unexplained:
		part.How = "fixed"
		if b.Class == costdrift.Unexplained {
			part.How = "no driver explains it: counted as fixed at its mean"
		}
		return []linear{termsLinear(t, nil, nil)}, part, nil
	case b.Class == costdrift.Step:
		x, how := at, "the volume"
		if b.Driver != in.Driver {
			v, ok := in.Held(b, b.Driver)
			if !ok {
				v = math.NaN()
			}
			x, how = v, b.Driver
		}
		if !t.Levels || len(b.Steps) != len(t.Coef) || math.IsNaN(x) {
			part.How = "step cost counted as fixed at its present level"
			return []linear{termsLinear(t, make([]float64, t.Regressors()), make([]float64, t.Regressors()))}, part, nil
		}
		g := stepLevel(b.Steps, x)
		if b.Driver == in.Driver {
			res.lo, res.hi = math.Max(res.lo, b.Steps[0].From), math.Min(res.hi, b.Steps[len(b.Steps)-1].To)
		}
		part.How = fmt.Sprintf("step cost counted as fixed at its level at %s %s", how, num(x))
		return []linear{termsLinear(t, fit.StepRow(g, len(b.Steps)), make([]float64, len(b.Steps)))}, part, nil
	}
	drivers := []string{b.Driver}
	if b.Driver2 != "" {
		drivers = append(drivers, b.Driver2)
	}
	if t.Regressors() != len(drivers) {
		return nil, part, fmt.Errorf("%s: its prediction terms do not match its formula: run `costdrift analyze --all`", b.Object)
	}
	c, s := make([]float64, len(drivers)), make([]float64, len(drivers))
	var hows []string
	var extra []linear
	rates := []float64{b.VariableRate, b.VariableRate2}
	for j, d := range drivers {
		if d == in.Driver {
			s[j] = 1
			hows = append(hows, "on the volume")
			if b.Class == costdrift.Variable || b.Class == costdrift.Mixed {
				res.lo, res.hi = math.Max(res.lo, b.RangeMin), math.Min(res.hi, b.RangeMax)
			}
			continue
		}
		vol, other := in.Pairs(b, d)
		if r, err := fit.Line(vol, other); err == nil {
			rt := r.Terms()
			// other = a + b·Q, its estimate's own variance scaled by the
			// cost's rate (delta method, the two estimates taken as
			// independent).
			rl := termsLinear(rt, []float64{0}, []float64{1})
			c[j], s[j] = rl.a, rl.b
			rate := rates[j]
			rl.a, rl.b = 0, 0
			rl.va, rl.vb, rl.vc = rate*rate*rl.va, rate*rate*rl.vb, rate*rate*rl.vc
			extra = append(extra, rl)
			hows = append(hows, fmt.Sprintf("through %s = %s + %s per unit of volume (fitted on %d periods)", d, num4(c[j]), num4(s[j]), r.N))
			lo, hi := minMax(vol)
			res.lo, res.hi = math.Max(res.lo, lo), math.Min(res.hi, hi)
			continue
		}
		v, ok := in.Held(b, d)
		if !ok {
			return nil, part, fmt.Errorf("%s uses %s, which neither follows the volume on the data nor has a figure at the reference period", b.Object, d)
		}
		c[j] = v
		hows = append(hows, fmt.Sprintf("counted as fixed at %s %s (too few periods beside the volume to relate them)", d, num(v)))
	}
	part.How = strings.Join(hows, "; ")
	return append([]linear{termsLinear(t, c, s)}, extra...), part, nil
}

func minMax(v []float64) (lo, hi float64) {
	lo, hi = math.Inf(1), math.Inf(-1)
	for _, x := range v {
		lo, hi = math.Min(lo, x), math.Max(hi, x)
	}
	return lo, hi
}

// sumAt is the variance of the summed estimate at Q and its
// Welch–Satterthwaite degrees of freedom.
func sumAt(parts []linear, q float64) (variance, df float64) {
	var den float64
	for _, l := range parts {
		v := math.Max(l.variance(q), 0)
		variance += v
		den += v * v / l.df
	}
	return variance, welch(variance, den)
}

// slopeVariance is the variance of the summed cost per unit and its
// degrees of freedom.
func slopeVariance(parts []linear) (variance, df float64) {
	var den float64
	for _, l := range parts {
		variance += l.vc
		den += l.vc * l.vc / l.df
	}
	return variance, welch(variance, den)
}

func welch(variance, den float64) float64 {
	if den == 0 {
		return math.Inf(1)
	}
	return variance * variance / den
}

// around is value ± t(df)·sqrt(variance).
func around(value, variance, df float64) Range {
	if variance <= 0 {
		return Range{value, value, value}
	}
	h := t95(df) * math.Sqrt(variance)
	return Range{value, value - h, value + h}
}

// t95 is the two-sided 95 % critical value of Student's t with df degrees
// of freedom, the normal one's for infinite df.
func t95(df float64) float64 {
	if math.IsInf(df, 1) {
		return 1.959963984540054 // Φ⁻¹(0.975), from memory
	}
	return tQuantile(0.05, df)
}

// money writes an amount with two decimals and thousands separators.
func money(v float64) string { return present.Amount(v) }

// num4 writes a relation's coefficient in four significant digits.
func num4(v float64) string { return present.Significant(v, 4) }
