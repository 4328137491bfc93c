package analyze

import (
	"github.com/costdrift/costdrift/internal/costdrift"
	"github.com/costdrift/costdrift/internal/fit"
)

// shared is what every object of one panel computes alike: the driver
// series that apply to each cost centre, and for every driver and lag over
// the whole window the part of its fits that depends on the driver alone.
// Panel builds it before the objects are analysed; it is only read after.
type shared struct {
	panel    *costdrift.Panel
	identity []int // 0, 1, …: the window positions of a complete series
	centres  map[string][]*costdrift.DriverSeries
	index    map[*costdrift.DriverSeries]int
	// xs[driver index][lag index] is nil when the driver has a gap there.
	xs [][]*xSide
}

// xSide is one driver at one lag over the window: its values, what a line
// fit takes from them, and their mean and range.
type xSide struct {
	x        []float64
	line     *fit.LineX
	mean     float64
	min, max float64
}

func newXSide(x []float64) *xSide {
	xs := &xSide{x: x, line: fit.NewLineX(x), mean: meanOf(x)}
	xs.min, xs.max = minMax(x)
	return xs
}

func newShared(p *costdrift.Panel, s Settings) *shared {
	n := len(p.Periods)
	sh := &shared{panel: p, identity: make([]int, n), centres: map[string][]*costdrift.DriverSeries{}}
	for i := range sh.identity {
		sh.identity[i] = i
	}
	for i := range p.Objects {
		c := p.Objects[i].Object.CostCenter
		if _, ok := sh.centres[c]; !ok {
			sh.centres[c] = driversFor(p, c)
		}
	}
	sh.xs = make([][]*xSide, len(p.Drivers))
	sh.index = make(map[*costdrift.DriverSeries]int, len(p.Drivers))
	for i := range p.Drivers {
		d := &p.Drivers[i]
		sh.index[d] = i
		sh.xs[i] = make([]*xSide, len(s.Lags))
		for li, lag := range s.Lags {
			start := p.MaxLag - lag
			if start < 0 || start+n > len(d.Values) {
				continue
			}
			if x := d.Values[start : start+n]; complete(x) {
				sh.xs[i][li] = newXSide(x)
			}
		}
	}
	return sh
}

// driversOf is driversFor, computed once per cost centre.
func (sh *shared) driversOf(centre string) []*costdrift.DriverSeries {
	if d, ok := sh.centres[centre]; ok {
		return d
	}
	return driversFor(sh.panel, centre)
}

// xOf is the driver's xSide at the lag with index li; nil when it has a gap
// or is not one of the panel's drivers.
func (sh *shared) xOf(d *costdrift.DriverSeries, li int) *xSide {
	if i, ok := sh.index[d]; ok {
		return sh.xs[i][li]
	}
	return nil
}
