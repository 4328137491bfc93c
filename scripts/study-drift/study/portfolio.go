package study

import (
	"fmt"
	"math"
	"math/rand/v2"
	"sort"

	"github.com/costdrift/costdrift/internal/costdrift"
)

// Months of history a portfolio is drawn over: a 36-month window rolled
// forward 12 month-ends (13 analyses), and one lead-in month for a driver
// lagged by a period.
const (
	Window   = 36
	Rolls    = 12
	Months   = Window + Rolls
	leadIn   = 1
	groupLen = 50 // objects sharing one set of drivers (one invented company)
)

// Noise is how a cost's noise scales.
type Noise string

const (
	// Additive noise has the same spread every month: a share of the mean cost.
	Additive Noise = "additive"
	// Proportional noise is a share of each month's cost: it grows with the level.
	Proportional Noise = "proportional"
)

// Object is one invented cost object: its costs month by month over the
// history, and what it truly is.
type Object struct {
	Name   costdrift.CostObject
	Class  costdrift.Class
	Driver string // "" for a fixed cost
	Lag    int
	Noise  Noise
	CV     float64 // the noise as a share of cost
	Cost   []float64
	// Change is the history month from which the fixed part is higher by
	// Rise (a share of the fixed part); -1 for a stable object.
	Change int
	Rise   float64
}

// Company is one set of drivers and the objects on them.
type Company struct {
	Drivers []costdrift.DriverSeries // Months+leadIn values each; Values[0] is the lead-in month
	Objects []Object
}

// driverSpec is one invented activity: its name, unit, mean level, and how
// strongly it follows the shared business cycle.
type driverSpec struct {
	name, unit string
	level      float64
	load       float64
}

var driverSpecs = []driverSpec{
	{"press_hours", "press hour", 1800, 1.0},
	{"parcels", "parcel", 9500, 0.8},
	{"work_orders", "work order", 640, 0.6},
	{"crew_hours", "crew hour", 4200, 0.9},
	{"fleet_km", "km", 31000, 0.5},
}

// drivers draws five correlated activity series: each is its level times
// exp(load·cycle + own), where cycle is an AR(1) business cycle with a
// yearly season shared by all five and own an AR(1) of the driver's own.
func drivers(r *rand.Rand) []costdrift.DriverSeries {
	n := Months + leadIn
	cycle := make([]float64, n)
	phase := 2 * math.Pi * r.Float64()
	ar := 0.0
	for i := range cycle {
		ar = 0.6*ar + 0.07*r.NormFloat64()
		cycle[i] = ar + 0.10*math.Sin(2*math.Pi*float64(i)/12+phase) + 0.002*float64(i)
	}
	out := make([]costdrift.DriverSeries, len(driverSpecs))
	for k, sp := range driverSpecs {
		v := make([]float64, n)
		own := 0.0
		for i := range v {
			own = 0.4*own + 0.06*r.NormFloat64()
			v[i] = sp.level * math.Exp(sp.load*cycle[i]+own)
		}
		out[k] = costdrift.DriverSeries{Name: sp.name, Unit: sp.unit, Values: v}
	}
	return out
}

// Mix is how many objects of each class a portfolio holds.
type Mix map[costdrift.Class]int

// Classes is the order classes are reported in.
var Classes = []costdrift.Class{costdrift.Fixed, costdrift.Variable, costdrift.Mixed, costdrift.Step}

// Shift describes a shifted portfolio: the fixed part of every object rises
// by Rise from a month drawn in [From, To] (history months); fixed costs get
// FixedCV noise.
type Shift struct {
	Rise     float64
	From, To int
	FixedCV  float64
}

// Generate draws a portfolio: the objects of mix, in companies of up to 50
// objects that share five drivers, their cost centres named prefix and a
// number. Without a shift every object is stable,
// with 2–5 % noise, additive or proportional half and half (a fixed cost's
// noise is the same either way).
func Generate(seed uint64, prefix string, mix Mix, shift *Shift) []Company {
	r := rand.New(rand.NewPCG(seed, 0x5eed))
	var classes []costdrift.Class
	for _, c := range Classes {
		for range mix[c] {
			classes = append(classes, c)
		}
	}
	r.Shuffle(len(classes), func(i, j int) { classes[i], classes[j] = classes[j], classes[i] })
	var out []Company
	for start := 0; start < len(classes); start += groupLen {
		end := min(start+groupLen, len(classes))
		co := Company{Drivers: drivers(r)}
		for i, class := range classes[start:end] {
			name := costdrift.CostObject{Account: fmt.Sprintf("%d", 5000+i), CostCenter: fmt.Sprintf("%s%03d", prefix, len(out))}
			co.Objects = append(co.Objects, drawObject(r, name, class, co.Drivers, shift))
		}
		out = append(out, co)
	}
	return out
}

// drawObject draws one object's true formula and its noisy costs.
func drawObject(r *rand.Rand, name costdrift.CostObject, class costdrift.Class, ds []costdrift.DriverSeries, shift *Shift) Object {
	o := Object{Name: name, Class: class, Change: -1, CV: 0.02 + 0.03*r.Float64(), Noise: Additive}
	if r.IntN(2) == 0 {
		o.Noise = Proportional
	}
	if shift != nil {
		o.Change = shift.From + r.IntN(shift.To-shift.From+1)
		o.Rise = shift.Rise
		if class == costdrift.Fixed {
			o.CV = shift.FixedCV
		}
	}
	// x(i) is the driver in history month i at the object's lag.
	var x func(i int) float64
	meanX := 0.0
	if class != costdrift.Fixed {
		d := ds[r.IntN(len(ds))]
		o.Driver = d.Name
		if r.IntN(4) == 0 {
			o.Lag = 1
		}
		x = func(i int) float64 { return d.Values[i+leadIn-o.Lag] }
		for i := range Months {
			meanX += x(i) / Months
		}
	}
	scale := math.Exp(math.Log(2000) + r.Float64()*math.Log(40)) // 2,000 to 80,000 a month
	var truth func(i int, fixedFactor float64) float64
	switch class {
	case costdrift.Fixed:
		truth = func(_ int, f float64) float64 { return scale * f }
	case costdrift.Variable:
		rate := scale / meanX
		truth = func(i int, _ float64) float64 { return rate * x(i) }
	case costdrift.Mixed:
		share := 0.3 + 0.4*r.Float64() // fixed share at mean activity
		if shift != nil {
			share = 0.45 + 0.1*r.Float64() // a 15 % rise is then about 7.5 % of the cost
		}
		fixed, rate := share*scale, (1-share)*scale/meanX
		truth = func(i int, f float64) float64 { return fixed*f + rate*x(i) }
	case costdrift.Step:
		// Crews or machines added as activity passes thresholds: 2–4
		// levels, each 20–40 % above the one below, the thresholds at
		// quantiles of the driver's own history so that every level is
		// reached for several months.
		levels := 2 + r.IntN(3)
		xs := make([]float64, Months)
		for i := range xs {
			xs[i] = x(i)
		}
		sort.Float64s(xs)
		cuts := make([]float64, levels-1)
		for j := range cuts {
			cuts[j] = xs[(j+1)*Months/levels]
		}
		heights := make([]float64, levels)
		heights[0] = scale
		for j := 1; j < levels; j++ {
			heights[j] = heights[j-1] * (1.2 + 0.2*r.Float64())
		}
		truth = func(i int, f float64) float64 {
			j := sort.SearchFloat64s(cuts, x(i)+1e-9)
			return heights[j] * f
		}
	}
	level := 0.0
	for i := range Months {
		level += truth(i, 1) / Months
	}
	o.Cost = make([]float64, Months)
	for i := range o.Cost {
		f := 1.0
		if o.Change >= 0 && i >= o.Change {
			f = 1 + o.Rise
		}
		v := truth(i, f)
		sd := o.CV * level
		if o.Noise == Proportional {
			sd = o.CV * v
		}
		o.Cost[i] = math.Round(100*(v+sd*r.NormFloat64())) / 100
	}
	return o
}

// panel is the 36-month window of a company ending before history month
// end (exclusive), as the store would build it.
func (c *Company) panel(end int) *costdrift.Panel {
	p := &costdrift.Panel{MaxLag: leadIn, PeriodsWithPostings: Window}
	for i := end - Window; i < end; i++ {
		p.Periods = append(p.Periods, month(i))
	}
	for _, o := range c.Objects {
		p.Objects = append(p.Objects, costdrift.ObjectSeries{Object: o.Name, Cost: o.Cost[end-Window : end]})
	}
	for _, d := range c.Drivers {
		d.Values = d.Values[end-Window : end+leadIn]
		p.Drivers = append(p.Drivers, d)
	}
	return p
}

// month names history month i: month 0 is January 2022.
func month(i int) string {
	return fmt.Sprintf("%04d-%02d", 2022+i/12, 1+i%12)
}

// monthIndex is the history month a period names; -1 if none.
func monthIndex(period string) int {
	var y, m int
	if _, err := fmt.Sscanf(period, "%d-%d", &y, &m); err != nil {
		return -1
	}
	return (y-2022)*12 + m - 1
}
