package analyze

import (
	"fmt"
	"math"
	"math/rand/v2"
	"sort"
	"strings"
	"testing"

	"github.com/costdrift/costdrift/internal/costdrift"
)

// Ground-truth recovery on invented data: objects of every class with 2–8 %
// noise against a set of realistically correlated drivers (a volume series
// with seasonality and trend, and drivers that follow it with their own
// month-to-month mix). Targets: class accuracy at least 95 % per class, the
// right driver at least 90 % where there is one, random costs pinned on a
// driver at most 5 %.

type studyCase struct {
	class  costdrift.Class
	driver string
	lag    int
}

// studyDrivers draws the drivers of one synthetic company: n periods plus
// one lead-in.
func studyDrivers(r *rand.Rand, n int) []costdrift.DriverSeries {
	m := n + 1
	volume := make([]float64, m)
	for i := range volume {
		season := 1 + 0.25*math.Sin(2*math.Pi*float64(i)/12)
		volume[i] = 1000 * season * (1 + 0.01*float64(i-m/2)) * (1 + 0.08*r.NormFloat64())
	}
	follow := func(scale, spread float64) []float64 {
		v := make([]float64, m)
		for i := range v {
			v[i] = volume[i] * scale * (1 + spread*(2*r.Float64()-1))
		}
		return v
	}
	independent := func(level float64) []float64 {
		v := make([]float64, m)
		for i := range v {
			v[i] = level * (1 + 0.3*(2*r.Float64()-1))
		}
		return v
	}
	return []costdrift.DriverSeries{
		{Name: "units", Unit: "unit", Values: volume},
		{Name: "machine_hours", Unit: "machine hour", Values: follow(0.8, 0.25)},
		{Name: "labour_hours", Unit: "labour hour", Values: follow(1.5, 0.2)},
		{Name: "shipments", Unit: "shipment", Values: follow(0.5, 0.3)},
		{Name: "orders", Unit: "order", Values: independent(400)},
		{Name: "kwh", Unit: "kWh", Values: independent(9000)},
	}
}

func driverValues(ds []costdrift.DriverSeries, name string) []float64 {
	for _, d := range ds {
		if d.Name == name {
			return d.Values
		}
	}
	panic("no driver " + name)
}

// studyCost draws a cost of the given class on the drivers, with noise cv.
func studyCost(r *rand.Rand, class costdrift.Class, ds []costdrift.DriverSeries, n int, cv float64) ([]float64, studyCase) {
	names := []string{"units", "machine_hours", "labour_hours", "shipments"}
	name := names[r.IntN(len(names))]
	lag := 0
	if r.IntN(4) == 0 {
		lag = 1
	}
	x := driverValues(ds, name)
	at := func(i int) float64 { return x[i+1-lag] } // Values[0] is the lead-in period
	meanX := 0.0
	for i := 0; i < n; i++ {
		meanX += at(i) / float64(n)
	}
	cost := make([]float64, n)
	c := studyCase{class: class, driver: name, lag: lag}
	switch class {
	case costdrift.Fixed:
		c.driver, c.lag = "", 0
		level := 1000 + 9000*r.Float64()
		for i := range cost {
			cost[i] = level * (1 + cv*r.NormFloat64())
		}
	case costdrift.Variable:
		rate := 1 + 20*r.Float64()
		for i := range cost {
			cost[i] = rate * at(i) * (1 + cv*r.NormFloat64())
		}
	case costdrift.Mixed:
		rate := 1 + 20*r.Float64()
		share := 0.3 + 0.4*r.Float64() // fixed share of cost at mean activity
		fixed := rate * meanX * share / (1 - share)
		for i := range cost {
			cost[i] = (fixed + rate*at(i)) * (1 + cv*r.NormFloat64())
		}
	case costdrift.Step:
		// Two or three levels at quantiles of the driver, each a clear step.
		sorted := make([]float64, n)
		for i := range sorted {
			sorted[i] = at(i)
		}
		sort.Float64s(sorted)
		levels := 2 + r.IntN(2)
		base := 3000 + 5000*r.Float64()
		for i := range cost {
			k := 0
			for j := 1; j < levels; j++ {
				if at(i) >= sorted[n*j/levels] {
					k = j
				}
			}
			cost[i] = base * (1 + 0.5*float64(k)) * (1 + cv*r.NormFloat64())
		}
	case costdrift.Unexplained:
		c.driver, c.lag = "", 0
		base := 2000 + 3000*r.Float64()
		for i := range cost {
			cost[i] = base * math.Exp(0.3*r.NormFloat64())
		}
	}
	return cost, c
}

func TestGroundTruthStudy(t *testing.T) {
	const perClass, n = 1000, 36
	classes := []costdrift.Class{costdrift.Fixed, costdrift.Variable, costdrift.Mixed, costdrift.Step, costdrift.Unexplained}
	r := rand.New(rand.NewPCG(20261201, 5))
	confusion := map[costdrift.Class]map[costdrift.Class]int{}
	rightDriver := map[costdrift.Class]int{}
	withDriver := map[costdrift.Class]int{}
	for _, class := range classes {
		confusion[class] = map[costdrift.Class]int{}
		for k := 0; k < perClass; k++ {
			ds := studyDrivers(r, n)
			cv := 0.02 + 0.06*r.Float64()
			cost, want := studyCost(r, class, ds, n, cv)
			p := &costdrift.Panel{Periods: periods(n), MaxLag: 1,
				Objects: []costdrift.ObjectSeries{{Object: costdrift.CostObject{Account: "6000"}, Cost: cost}}, Drivers: ds}
			b := Object(p, &p.Objects[0], defaults).Behaviour
			confusion[class][b.Class]++
			if want.driver != "" && b.Class == class {
				withDriver[class]++
				if b.Driver == want.driver && b.Lag == want.lag {
					rightDriver[class]++
				}
			}
			if class == costdrift.Unexplained && b.Driver != "" {
				withDriver[costdrift.InsufficientData]++ // counts random costs pinned on a driver
			}
		}
	}
	var table strings.Builder
	fmt.Fprintf(&table, "%-12s", "designed")
	for _, c := range classes {
		fmt.Fprintf(&table, "%12s", c)
	}
	fmt.Fprintf(&table, "%12s\n", "right driver")
	for _, want := range classes {
		fmt.Fprintf(&table, "%-12s", want)
		for _, got := range classes {
			fmt.Fprintf(&table, "%12d", confusion[want][got])
		}
		if withDriver[want] > 0 {
			fmt.Fprintf(&table, "%11.1f%%", 100*float64(rightDriver[want])/float64(withDriver[want]))
		}
		table.WriteString("\n")
	}
	t.Logf("confusion matrix (%d objects per class, n = %d, noise 2–8 %%):\n%s", perClass, n, table.String())
	for _, c := range classes {
		if acc := float64(confusion[c][c]) / perClass; acc < 0.95 {
			t.Errorf("%s: %.1f %% classified right, want at least 95 %%", c, 100*acc)
		}
		if withDriver[c] > 0 {
			if share := float64(rightDriver[c]) / float64(withDriver[c]); share < 0.90 {
				t.Errorf("%s: right driver and lag in %.1f %%, want at least 90 %%", c, 100*share)
			}
		}
	}
	if pinned := float64(withDriver[costdrift.InsufficientData]) / perClass; pinned > 0.05 {
		t.Errorf("random costs pinned on a driver: %.1f %%, want at most 5 %%", 100*pinned)
	}
}

// A second driver must be found when the cost really has two, and almost
// never adopted when it has one (ground truth on invented data).
func TestSecondDriver(t *testing.T) {
	r := rand.New(rand.NewPCG(3, 4))
	found, spurious := 0, 0
	const trials = 300
	for k := 0; k < trials; k++ {
		ds := studyDrivers(r, 36)
		hours, orders := driverValues(ds, "machine_hours"), driverValues(ds, "orders")
		two := make([]float64, 36)
		for i := range two {
			two[i] = (1500 + 2.5*hours[i+1] + 4*orders[i+1]) * (1 + 0.02*r.NormFloat64())
		}
		p := &costdrift.Panel{Periods: periods(36), MaxLag: 1,
			Objects: []costdrift.ObjectSeries{{Object: costdrift.CostObject{Account: "6000"}, Cost: two}}, Drivers: ds}
		b := Object(p, &p.Objects[0], defaults).Behaviour
		if b.Driver2 != "" && ((b.Driver == "machine_hours" && b.Driver2 == "orders") || (b.Driver == "orders" && b.Driver2 == "machine_hours")) && b.Lag == 0 && b.Lag2 == 0 {
			found++
		}
		one, _ := studyCost(r, costdrift.Mixed, ds, 36, 0.02+0.06*r.Float64())
		p.Objects[0].Cost = one
		if Object(p, &p.Objects[0], defaults).Behaviour.Driver2 != "" {
			spurious++
		}
	}
	t.Logf("two-driver costs found: %d of %d; one-driver costs given a second: %d of %d", found, trials, spurious, trials)
	if found < trials*90/100 {
		t.Errorf("found the two drivers in %d of %d, want at least 90 %%", found, trials)
	}
	if spurious > trials*2/100 {
		t.Errorf("a spurious second driver in %d of %d, want at most 2 %%", spurious, trials)
	}
}
