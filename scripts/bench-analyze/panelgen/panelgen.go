package panelgen

import (
	"fmt"
	"math"
	"math/rand/v2"
	"sort"

	"github.com/costdrift/costdrift/internal/costdrift"
)

// Config sizes the generated panel. Every object sees Shared + Local
// drivers: the Shared company-wide series and the Local series of its own
// cost centre.
type Config struct {
	Objects int    // cost objects (expense account × cost centre)
	Centres int    // cost centres; objects are spread over them in turn
	Shared  int    // company-wide driver series
	Local   int    // driver series per cost centre
	Periods int    // periods in the analysis window (months)
	MaxLag  int    // driver periods before the window
	Seed    uint64 // same seed, same panel
}

// Default is the benchmark's size: 10,000 objects in 50 cost centres (200
// expense accounts each), 20 company-wide and 10 cost-centre drivers (30 per
// object), 36 months, drivers reaching one month before the window.
func Default() Config {
	return Config{Objects: 10_000, Centres: 50, Shared: 20, Local: 10, Periods: 36, MaxLag: 1, Seed: 20_260_301}
}

// Kind is the behaviour an object's cost was generated with.
type Kind int

const (
	Mixed    Kind = iota // cost = a + b·x + noise
	Variable             // cost = b·x·(1 + noise)
	Fixed                // cost = a·(1 + small noise), sometimes one step up
	Random               // cost = a·exp(large noise), no driver
)

// KindNames are the names of the kinds, by Kind.
var KindNames = [...]string{"mixed", "variable", "fixed", "random"}

// Truth is how one object's cost was generated: its kind and, for mixed and
// variable costs, the driver series (index into Panel.Drivers) and lag.
type Truth struct {
	Kind   Kind
	Series int // -1 for fixed and random
	Lag    int
}

// driverNames name the series; names past the list get a number.
var driverNames = []string{
	"orders", "invoices", "shipments", "machine_hours", "labour_hours",
	"units_produced", "kwh", "headcount", "deliveries", "returns",
	"calls_handled", "service_tickets", "km_driven", "batches", "setups",
	"inspections", "purchase_orders", "active_customers", "pallets_stored", "web_sessions",
	"cc_machine_hours", "cc_labour_hours", "cc_units", "cc_setups", "cc_batches",
	"cc_kwh", "cc_headcount", "cc_overtime_hours", "cc_scrap_kg", "cc_maintenance_jobs",
}

func driverName(i int) string {
	if i < len(driverNames) {
		return driverNames[i]
	}
	return fmt.Sprintf("driver_%03d", i)
}

// Build generates the panel and the truth per object. With T = Periods +
// MaxLag months of driver history:
//
// Drivers. Three company-wide factors G_k(t) and one factor H_c(t) per cost
// centre are AR(1) series with unit variance (φ = 0.8, 0.6, 0.4 and 0.6). A
// driver series d is
//
//	x_d(t) = L_d · exp(g_d·t/12 + A_d·sin(2π(t + φ_d)/12) + 0.08·Σ_k λ_dk·G_k(t) [+ 0.08·λ_dc·H_c(t)] + u_d(t))
//
// with level L_d log-uniform in [50, 50,000], growth g_d uniform in
// [−3 %, +12 %] a year, seasonal amplitude A_d uniform in [0, 0.25] and phase
// φ_d in [0, 12), loadings λ ~ N(0, 1), the centre factor only for a cost
// centre's own series, and idiosyncratic noise u_d an AR(1) (φ = 0.3) with
// standard deviation uniform in [0.02, 0.12]. Shared trends, seasons and
// factors make the drivers correlated with one another, as real activity
// measures are. A third of the series are counts (rounded to whole units).
//
// Costs. Each object draws a kind: mixed 35 %, variable 25 %, fixed 25 %,
// random 15 %; mixed and variable costs draw one of the object's 30 drivers
// and lag 1 with probability 0.3 (else 0). With a cost level M log-uniform in
// [500, 50,000] currency units a period, x̄ the driver's mean over the window
// and ε_t ~ N(0, 1):
//
//	mixed     y_t = M·(s + (1 − s)·x_{t−lag}/x̄ + σ·ε_t),  s ~ U[0.2, 0.8], σ ~ U[0.02, 0.15]
//	variable  y_t = M·x_{t−lag}/x̄·(1 + σ·ε_t),             σ ~ U[0.03, 0.20]
//	fixed     y_t = M·(1 + σ·ε_t)·(1 + j·[t ≥ t_j]),        σ ~ U[0.005, 0.06]; a step j ~ U[3 %, 10 %] at a random month in 30 % of them
//	random    y_t = M·exp(σ·ε_t),                         σ ~ U[0.2, 0.6]
//
// rounded to cents, as ledger amounts are. Every period has a value: no
// object opens or closes inside the window.
func Build(cfg Config) (*costdrift.Panel, []Truth) {
	if cfg.Objects < 1 || cfg.Centres < 1 || cfg.Shared+cfg.Local < 1 || cfg.Periods < 3 || cfg.MaxLag < 0 {
		panic(fmt.Sprintf("panelgen: bad config %+v", cfg))
	}
	r := rand.New(rand.NewPCG(cfg.Seed, 0x636f737464726966))
	T := cfg.Periods + cfg.MaxLag

	p := &costdrift.Panel{MaxLag: cfg.MaxLag, PeriodsWithPostings: cfg.Periods}
	for i := range cfg.Periods {
		p.Periods = append(p.Periods, fmt.Sprintf("%04d-%02d", 2023+i/12, i%12+1))
	}

	global := [3][]float64{ar1(r, T, 0.8, 1), ar1(r, T, 0.6, 1), ar1(r, T, 0.4, 1)}
	series := func(name, centre string, local []float64) costdrift.DriverSeries {
		level := logUniform(r, 50, 50_000)
		growth := uniform(r, -0.03, 0.12)
		amp := uniform(r, 0, 0.25)
		phase := uniform(r, 0, 12)
		var load [3]float64
		for k := range load {
			load[k] = 0.08 * r.NormFloat64()
		}
		loadLocal := 0.08 * r.NormFloat64()
		noise := ar1(r, T, 0.3, uniform(r, 0.02, 0.12))
		count := r.IntN(3) == 0
		unit := "unit"
		if count {
			unit = "count"
		}
		v := make([]float64, T)
		for t := range T {
			z := growth*float64(t)/12 + amp*math.Sin(2*math.Pi*(float64(t)+phase)/12) + noise[t]
			for k := range load {
				z += load[k] * global[k][t]
			}
			if local != nil {
				z += loadLocal * local[t]
			}
			v[t] = level * math.Exp(z)
			if count {
				v[t] = math.Round(v[t])
			}
		}
		return costdrift.DriverSeries{Name: name, CostCenter: centre, Unit: unit, Values: v}
	}
	for i := range cfg.Shared {
		p.Drivers = append(p.Drivers, series(driverName(i), "", nil))
	}
	centreSeries := make([][]int, cfg.Centres) // series visible to each centre
	shared := make([]int, cfg.Shared)
	for i := range shared {
		shared[i] = i
	}
	for c := range cfg.Centres {
		h := ar1(r, T, 0.6, 1)
		centreSeries[c] = append(centreSeries[c], shared...)
		for i := range cfg.Local {
			centreSeries[c] = append(centreSeries[c], len(p.Drivers))
			p.Drivers = append(p.Drivers, series(driverName(cfg.Shared+i), centreName(c), h))
		}
	}

	truth := make([]Truth, cfg.Objects)
	p.Objects = make([]costdrift.ObjectSeries, cfg.Objects)
	for o := range cfg.Objects {
		c := o % cfg.Centres
		obj := costdrift.CostObject{Account: fmt.Sprintf("%d", 6000+o/cfg.Centres), CostCenter: centreName(c)}
		y := make([]float64, cfg.Periods)
		level := logUniform(r, 500, 50_000)
		tr := Truth{Series: -1}
		switch u := r.Float64(); {
		case u < 0.35:
			tr.Kind = Mixed
		case u < 0.60:
			tr.Kind = Variable
		case u < 0.85:
			tr.Kind = Fixed
		default:
			tr.Kind = Random
		}
		if tr.Kind == Mixed || tr.Kind == Variable {
			vis := centreSeries[c]
			tr.Series = vis[r.IntN(len(vis))]
			if r.Float64() < 0.3 && cfg.MaxLag >= 1 {
				tr.Lag = 1
			}
		}
		var x []float64
		var xbar float64
		if tr.Series >= 0 {
			x = p.Drivers[tr.Series].Values[cfg.MaxLag-tr.Lag : cfg.MaxLag-tr.Lag+cfg.Periods]
			for _, v := range x {
				xbar += v
			}
			xbar /= float64(len(x))
		}
		switch tr.Kind {
		case Mixed:
			share, sigma := uniform(r, 0.2, 0.8), uniform(r, 0.02, 0.15)
			for t := range y {
				y[t] = level * (share + (1-share)*x[t]/xbar + sigma*r.NormFloat64())
			}
		case Variable:
			sigma := uniform(r, 0.03, 0.20)
			for t := range y {
				y[t] = level * x[t] / xbar * (1 + sigma*r.NormFloat64())
			}
		case Fixed:
			sigma := uniform(r, 0.005, 0.06)
			jumpAt, jump := cfg.Periods, 0.0
			if r.Float64() < 0.3 {
				jumpAt, jump = 1+r.IntN(cfg.Periods-1), uniform(r, 0.03, 0.10)
			}
			for t := range y {
				y[t] = level * (1 + sigma*r.NormFloat64())
				if t >= jumpAt {
					y[t] *= 1 + jump
				}
			}
		case Random:
			sigma := uniform(r, 0.2, 0.6)
			for t := range y {
				y[t] = level * math.Exp(sigma*r.NormFloat64())
			}
		}
		for t := range y {
			y[t] = math.Round(y[t]*100) / 100
		}
		p.Objects[o] = costdrift.ObjectSeries{Object: obj, Cost: y}
		truth[o] = tr
	}
	return p, truth
}

// Candidates returns, for every object, the driver series analyze fits it
// on, in the order it fits them: the object's own cost centre's series of a
// name before the company-wide one, names in sorted order. The Python
// comparisons read this table so that they fit the same pairs.
func Candidates(p *costdrift.Panel) [][]int {
	out := make([][]int, len(p.Objects))
	for o := range p.Objects {
		centre := p.Objects[o].Object.CostCenter
		chosen := map[string]int{}
		for i := range p.Drivers {
			d := &p.Drivers[i]
			switch {
			case d.CostCenter == centre:
				chosen[d.Name] = i
			case d.CostCenter == "":
				if _, ok := chosen[d.Name]; !ok {
					chosen[d.Name] = i
				}
			}
		}
		names := make([]string, 0, len(chosen))
		for n := range chosen {
			names = append(names, n)
		}
		sort.Strings(names)
		for _, n := range names {
			out[o] = append(out[o], chosen[n])
		}
	}
	return out
}

func centreName(c int) string { return fmt.Sprintf("CC%03d", c+1) }

// ar1 returns n values of z_t = φ·z_{t−1} + e_t scaled to standard deviation
// sd, started from the stationary distribution.
func ar1(r *rand.Rand, n int, phi, sd float64) []float64 {
	innov := sd * math.Sqrt(1-phi*phi)
	z := make([]float64, n)
	z[0] = sd * r.NormFloat64()
	for t := 1; t < n; t++ {
		z[t] = phi*z[t-1] + innov*r.NormFloat64()
	}
	return z
}

func uniform(r *rand.Rand, lo, hi float64) float64 { return lo + (hi-lo)*r.Float64() }

func logUniform(r *rand.Rand, lo, hi float64) float64 {
	return math.Exp(uniform(r, math.Log(lo), math.Log(hi)))
}
