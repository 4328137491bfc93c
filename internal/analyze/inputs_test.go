package analyze

import (
	"encoding/binary"
	"encoding/hex"
	"hash/fnv"
	"math"
	"sort"
	"testing"

	"github.com/costdrift/costdrift/internal/costdrift"
)

// referenceHash is the input hash as its definition (Hash) reads, computed
// afresh for every object with hash/fnv: the stores keep these values, so
// a hasher that computes the same thing faster must give the same ones,
// or every object would be refitted after an upgrade.
func referenceHash(p *costdrift.Panel, settings string, o *costdrift.ObjectSeries) string {
	chosen := map[string]int{}
	for i, d := range p.Drivers {
		switch {
		case d.CostCenter == o.Object.CostCenter:
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
	floats := func(h interface{ Write([]byte) (int, error) }, v []float64) {
		var buf [8]byte
		for _, x := range v {
			binary.LittleEndian.PutUint64(buf[:], math.Float64bits(x))
			h.Write(buf[:])
		}
	}
	h := fnv.New64a()
	var buf [8]byte
	binary.LittleEndian.PutUint64(buf[:], Version)
	h.Write(buf[:])
	h.Write([]byte(settings + "\x00"))
	for _, period := range p.Periods {
		h.Write([]byte(period))
	}
	floats(h, o.Cost)
	for _, n := range names {
		d := p.Drivers[chosen[n]]
		s := fnv.New64a()
		s.Write([]byte(d.Name + "\x00" + d.CostCenter + "\x00" + d.Unit + "\x00"))
		floats(s, d.Values)
		binary.LittleEndian.PutUint64(buf[:], s.Sum64())
		h.Write(buf[:])
	}
	return hex.EncodeToString(h.Sum(nil))
}

// Objects in a cost centre with a series of its own are hashed with that
// series, the others with the company-wide one, as the reference does, and
// the hashes follow the costs.
func TestInputHashesAsDefined(t *testing.T) {
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
	const settings = `{"window":36}`
	got := InputHashes(p, settings)
	seen := map[string]string{}
	for i := range p.Objects {
		o := &p.Objects[i]
		name := o.Object.String()
		if want := referenceHash(p, settings, o); got[name] != want {
			t.Errorf("%s: hash %s, want %s", name, got[name], want)
		}
		seen[got[name]] += name + " "
	}
	// Same costs in PLANT and OFFICE (other hours series), and in 6100 and
	// 6400 of PLANT (the same inputs: the hash leaves the name out).
	if got["6100/PLANT"] == got["6100/OFFICE"] {
		t.Errorf("6100/PLANT and 6100/OFFICE share a hash, though their hours series differ")
	}
	if got["6100/PLANT"] != got["6400/PLANT"] {
		t.Errorf("6100/PLANT and 6400/PLANT have the same inputs but hashes %s and %s", got["6100/PLANT"], got["6400/PLANT"])
	}
	if len(seen) != 4 {
		t.Errorf("%d distinct hashes for 5 objects, two of them alike: %v", len(seen), seen)
	}
}
