package analyze

import (
	"encoding/binary"
	"encoding/hex"
	"hash/fnv"
	"math"
	"sort"

	"github.com/costdrift/costdrift/internal/costdrift"
)

// Version is the method's version: it enters every input hash, so that an
// upgrade that changes how objects are fitted refits all of them.
const Version = 6

// InputHashes returns, per object of the panel, a hash of everything its
// analysis depends on: the method version, the settings, the window, its
// cost series and the driver series it would be fitted against (a cost
// centre's own series, else the company-wide one). Equal hashes mean the
// analysis would come out the same, so the object can be skipped.
func InputHashes(p *costdrift.Panel, settings string) map[string]string {
	h := NewInputHasher(p, settings)
	out := make(map[string]string, len(p.Objects))
	for i := range p.Objects {
		out[p.Objects[i].Object.String()] = h.Hash(&p.Objects[i])
	}
	return out
}

// InputHasher hashes objects' inputs (InputHashes) against one panel's
// window and drivers, whose hashes it computes once.
type InputHasher struct {
	p          *costdrift.Panel
	settings   string
	seriesHash []uint64
}

// NewInputHasher hashes the panel's driver series; the panel's objects
// need not be set.
func NewInputHasher(p *costdrift.Panel, settings string) *InputHasher {
	seriesHash := make([]uint64, len(p.Drivers))
	for i, d := range p.Drivers {
		h := fnv.New64a()
		h.Write([]byte(d.Name + "\x00" + d.CostCenter + "\x00" + d.Unit + "\x00"))
		writeFloats(h, d.Values)
		seriesHash[i] = h.Sum64()
	}
	return &InputHasher{p: p, settings: settings, seriesHash: seriesHash}
}

// Hash is the input hash of one object over the hasher's panel.
func (ih *InputHasher) Hash(o *costdrift.ObjectSeries) string {
	p := ih.p
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
	h := fnv.New64a()
	var buf [8]byte
	binary.LittleEndian.PutUint64(buf[:], Version)
	h.Write(buf[:])
	h.Write([]byte(ih.settings + "\x00"))
	for _, period := range p.Periods {
		h.Write([]byte(period))
	}
	writeFloats(h, o.Cost)
	for _, n := range names {
		binary.LittleEndian.PutUint64(buf[:], ih.seriesHash[chosen[n]])
		h.Write(buf[:])
	}
	return hex.EncodeToString(h.Sum(nil))
}

type writer interface{ Write([]byte) (int, error) }

func writeFloats(h writer, v []float64) {
	var buf [8]byte
	for _, x := range v {
		binary.LittleEndian.PutUint64(buf[:], math.Float64bits(x))
		h.Write(buf[:])
	}
}
