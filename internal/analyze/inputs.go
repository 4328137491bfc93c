package analyze

import (
	"encoding/binary"
	"encoding/hex"
	"hash/fnv"
	"math"

	"github.com/costdrift/costdrift/internal/costdrift"
)

// Version is the method's version: it enters every input hash, so that an
// upgrade that changes how objects are fitted refits all of them.
const Version = 7

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
// window and drivers, whose hashes it computes once, as it does the part
// every object shares (version, settings, window) and the driver series of
// each cost centre. Not for use by several goroutines at once.
type InputHasher struct {
	p          *costdrift.Panel
	seriesHash map[*costdrift.DriverSeries]uint64
	prefix     uint64            // the FNV-1a state after the version, the settings and the window
	centres    map[string][]byte // by cost centre: the hashes of the series its objects are fitted against
}

// NewInputHasher hashes the panel's driver series; the panel's objects
// need not be set.
func NewInputHasher(p *costdrift.Panel, settings string) *InputHasher {
	seriesHash := make(map[*costdrift.DriverSeries]uint64, len(p.Drivers))
	for i := range p.Drivers {
		d := &p.Drivers[i]
		h := fnv.New64a()
		h.Write([]byte(d.Name + "\x00" + d.CostCenter + "\x00" + d.Unit + "\x00"))
		writeFloats(h, d.Values)
		seriesHash[d] = h.Sum64()
	}
	prefix := fnv.New64a()
	var buf [8]byte
	binary.LittleEndian.PutUint64(buf[:], Version)
	prefix.Write(buf[:])
	prefix.Write([]byte(settings + "\x00"))
	for _, period := range p.Periods {
		prefix.Write([]byte(period))
	}
	return &InputHasher{p: p, seriesHash: seriesHash, prefix: prefix.Sum64(), centres: map[string][]byte{}}
}

// Hash is the input hash of one object over the hasher's panel: FNV-1a
// (64 bits, in hex) of the method's version, the settings, the window's
// periods, the object's costs and the hashes of the driver series it is
// fitted against, in the order of their names.
func (ih *InputHasher) Hash(o *costdrift.ObjectSeries) string {
	h := ih.prefix
	var buf [8]byte
	for _, x := range o.Cost {
		binary.LittleEndian.PutUint64(buf[:], math.Float64bits(x))
		h = fnv1a(h, buf[:])
	}
	h = fnv1a(h, ih.driversOf(o.Object.CostCenter))
	binary.BigEndian.PutUint64(buf[:], h)
	return hex.EncodeToString(buf[:])
}

// driversOf is the hashes of the driver series an object of the cost
// centre is fitted against (driversFor), in the order of their names.
func (ih *InputHasher) driversOf(centre string) []byte {
	if b, ok := ih.centres[centre]; ok {
		return b
	}
	ds := driversFor(ih.p, centre)
	b := make([]byte, 0, 8*len(ds))
	for _, d := range ds {
		b = binary.LittleEndian.AppendUint64(b, ih.seriesHash[d])
	}
	ih.centres[centre] = b
	return b
}

// fnv1a continues an FNV-1a hash of 64 bits (hash/fnv's New64a) from state
// h over b.
func fnv1a(h uint64, b []byte) uint64 {
	const prime = 1099511628211
	for _, c := range b {
		h ^= uint64(c)
		h *= prime
	}
	return h
}

type writer interface{ Write([]byte) (int, error) }

func writeFloats(h writer, v []float64) {
	var buf [8]byte
	for _, x := range v {
		binary.LittleEndian.PutUint64(buf[:], math.Float64bits(x))
		h.Write(buf[:])
	}
}
