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
const Version = 5

// InputHashes returns, per object of the panel, a hash of everything its
// analysis depends on: the method version, the settings, the window, its
// cost series and the driver series it would be fitted against (a cost
// centre's own series, else the company-wide one). Equal hashes mean the
// analysis would come out the same, so the object can be skipped.
func InputHashes(p *costdrift.Panel, settings string) map[string]string {
	seriesHash := make([]uint64, len(p.Drivers))
	for i, d := range p.Drivers {
		h := fnv.New64a()
		h.Write([]byte(d.Name + "\x00" + d.CostCenter + "\x00" + d.Unit + "\x00"))
		writeFloats(h, d.Values)
		seriesHash[i] = h.Sum64()
	}
	out := make(map[string]string, len(p.Objects))
	for _, o := range p.Objects {
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
		h.Write([]byte(settings + "\x00"))
		for _, period := range p.Periods {
			h.Write([]byte(period))
		}
		writeFloats(h, o.Cost)
		for _, n := range names {
			binary.LittleEndian.PutUint64(buf[:], seriesHash[chosen[n]])
			h.Write(buf[:])
		}
		out[o.Object.String()] = hex.EncodeToString(h.Sum(nil))
	}
	return out
}

type writer interface{ Write([]byte) (int, error) }

func writeFloats(h writer, v []float64) {
	var buf [8]byte
	for _, x := range v {
		binary.LittleEndian.PutUint64(buf[:], math.Float64bits(x))
		h.Write(buf[:])
	}
}
