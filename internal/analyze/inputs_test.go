package analyze

import (
	"math"
	"testing"

	"github.com/costdrift/costdrift/internal/costdrift"
)

// The stores keep input hashes, and an object whose hash changes is
// refitted: a hasher that computes them faster must give the values the
// release before gave (recorded here from f476db0's InputHashes on this
// panel, with its Version set to the method's 7). Objects in a cost centre with a series of its own are hashed
// with it, the others with the company-wide one; two objects with the same
// inputs share a hash (it leaves the name out).
func TestInputHashesKeepTheirValues(t *testing.T) {
	p := &costdrift.Panel{Periods: []string{"2025-01", "2025-02", "2025-03"}, Drivers: []costdrift.DriverSeries{
		{Name: "units", Unit: "unit", Values: []float64{10, 12, 11}},
		{Name: "hours", Unit: "hour", Values: []float64{100, 110, 90}},
		{Name: "hours", CostCenter: "PLANT", Unit: "hour", Values: []float64{40, 45, 38}},
	}}
	object := func(account, centre string, cost ...float64) costdrift.ObjectSeries {
		return costdrift.ObjectSeries{Object: costdrift.CostObject{Account: account, CostCenter: centre}, Cost: cost}
	}
	p.Objects = []costdrift.ObjectSeries{
		object("6100", "PLANT", 500, 520, math.NaN()),
		object("6100", "OFFICE", 500, 520, math.NaN()),
		object("6200", "PLANT", 700, 710, 690),
		object("6300", "", 300, 300, 300),
		object("6400", "PLANT", 500, 520, math.NaN()),
	}
	want := map[string]string{
		"6100/PLANT":  "8e2797f229dd20f9",
		"6100/OFFICE": "4d3452b610f2766b",
		"6200/PLANT":  "98e698a7a39005cc",
		"6300":        "3675b4e3dc484ed2",
		"6400/PLANT":  "8e2797f229dd20f9",
	}
	got := InputHashes(p, `{"window":36}`)
	for name, w := range want {
		if got[name] != w {
			t.Errorf("%s: hash %s, want %s", name, got[name], w)
		}
	}
}
