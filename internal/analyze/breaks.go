package analyze

import (
	"fmt"
	"hash/fnv"

	"github.com/costdrift/costdrift/internal/costdrift"
	"github.com/costdrift/costdrift/internal/drift"
	"github.com/costdrift/costdrift/internal/fit"
)

// BreakScreenLevel: a sup-F below Andrews' critical value at this level
// cannot reach BreakAlpha, so its bootstrap p-value is not computed. Andrews'
// asymptotic values are reached early or late in small samples, never by an
// order of magnitude, so a 10 % screen for a 1 % test loses nothing in
// practice while sparing most objects the bootstrap.
const BreakScreenLevel = 0.10

// withBreak tests the behaviour's own model for a break at an unknown period
// (sup-F with 15 % trimming, residual-bootstrap p-value; drift.SupFLine) and,
// with a break significant at s.BreakAlpha, fits the behaviour again on the
// periods from the break on. When fewer than s.MinPeriods follow the break,
// the new behaviour is provisional: it keeps the class and driver it had
// before and is refitted on the periods since (PRODUCT §5).
func withBreak(p *costdrift.Panel, obj *costdrift.ObjectSeries, res Result, s Settings) Result {
	b := res.Behaviour
	if b.Class == costdrift.InsufficientData || len(res.y) < 2*StepMinPerLevel+2 {
		return res
	}
	fs, err := drift.SupFLine(res.x, res.y, drift.DefaultTrim)
	if err != nil {
		return res // a driver constant on one side: no test
	}
	k := 1
	if res.x != nil {
		k = 2
	}
	critical, err := drift.AndrewsCritical(k, drift.DefaultTrim, BreakScreenLevel)
	if err != nil || fs.SupF < critical {
		return res
	}
	var columns [][]float64
	if res.x != nil {
		columns = [][]float64{res.x}
	}
	test, err := drift.SupFPValue(columns, res.y, true, drift.DefaultTrim, drift.Bootstrap, s.Replicates, seedFor(s.Seed, obj.Object))
	if err != nil || test.P >= s.BreakAlpha {
		return res
	}

	at := res.index[fs.Break] // window position of the first period after the break
	brk := &costdrift.Break{
		Period: p.Periods[at], LastBefore: p.Periods[res.index[fs.Break-1]], WindowFrom: p.Periods[res.index[0]], Test: "sup-F (Quandt–Andrews, 15 % trimming), residual bootstrap",
		Statistic: fs.SupF, P: test.P, Replicates: s.Replicates, Driver: b.Driver, Lag: b.Lag,
		Periods: len(res.y) - fs.Break,
	}
	brk.FixedBefore, brk.RateBefore = sideFormula(res.x, res.y, 0, fs.Break)
	brk.FixedAfter, brk.RateAfter = sideFormula(res.x, res.y, fs.Break, len(res.y))

	after := subPanel(p, obj, at)
	next := objectOn(after, &after.Objects[0], s)
	if next.Behaviour.Class != costdrift.InsufficientData {
		next.Behaviour.Break = brk
		next.Behaviour.Reason = fmt.Sprintf("since %s (break: sup-F %s, p %s): %s", brk.Period, statText(brk.Statistic), pValueText(test.P, s.Replicates), next.Behaviour.Reason)
		return next
	}
	// Too few periods since the break to choose a driver: keep the one from
	// before and refit on what there is.
	brk.Provisional = true
	prov := res
	pb := &prov.Behaviour
	pb.Break = brk
	pb.Since = brk.Period
	pb.N = brk.Periods
	post := res.y[fs.Break:]
	switch pb.Class {
	case costdrift.Variable:
		if r, err := fit.ThroughOrigin(res.x[fs.Break:], post); err == nil {
			pb.VariableRate = r.Coef[0]
		}
	case costdrift.Mixed:
		pb.FixedPerPeriod, pb.VariableRate = brk.FixedAfter, brk.RateAfter
	default:
		pb.MeanCost = meanOf(post)
		pb.FixedPerPeriod = pb.MeanCost
	}
	pb.Reason = fmt.Sprintf("provisional since %s (break: sup-F %s, p %s): only %d periods since the break, fewer than %d, so the driver and class from before are kept and refitted on them",
		brk.Period, statText(brk.Statistic), pValueText(test.P, s.Replicates), brk.Periods, s.MinPeriods)
	return prov
}

// sideFormula fits one side of a break: a line on the driver, or the mean.
func sideFormula(x, y []float64, lo, hi int) (fixed, rate float64) {
	if x != nil {
		if r, err := fit.Line(x[lo:hi], y[lo:hi]); err == nil {
			return r.Coef[0], r.Coef[1]
		}
	}
	return meanOf(y[lo:hi]), 0
}

// subPanel is the panel from window position at on, for one object; driver
// values keep their lead-in periods before it.
func subPanel(p *costdrift.Panel, obj *costdrift.ObjectSeries, at int) *costdrift.Panel {
	sub := &costdrift.Panel{Periods: p.Periods[at:], MaxLag: p.MaxLag,
		Objects: []costdrift.ObjectSeries{{Object: obj.Object, Cost: obj.Cost[at:]}}}
	sub.Drivers = make([]costdrift.DriverSeries, len(p.Drivers))
	for i, d := range p.Drivers {
		d.Values = d.Values[at:]
		sub.Drivers[i] = d
	}
	return sub
}

// seedFor gives each object its own bootstrap seed, fixed by the settings'
// seed and the object's name.
func seedFor(seed uint64, o costdrift.CostObject) uint64 {
	h := fnv.New64a()
	h.Write([]byte(o.String()))
	return seed ^ h.Sum64()
}

// pValueText writes a bootstrap p-value; the smallest one B replicates can
// give is 1/(B+1).
func pValueText(p float64, replicates int) string {
	if p <= 1/float64(replicates+1) {
		return fmt.Sprintf("<= %.4g", 1/float64(replicates+1))
	}
	return fmt.Sprintf("%.3f", p)
}

func statText(v float64) string {
	if v >= 1e6 {
		return fmt.Sprintf("%.3g", v)
	}
	return fmt.Sprintf("%.1f", v)
}
