package series

import (
	"fmt"
	"math"
	"strings"

	"github.com/costdrift/costdrift/internal/costdrift"
)

// PriceIndex is a company-wide price index series read from the activity
// data (analysis.deflator), by period. Costs are restated at one period's
// price level, the base, as cost accountants restate them before they
// estimate a cost formula (common practice):
//
//	restated cost_t = cost_t × index_base / index_t
//
// so that a cost that only follows the price level is constant once
// restated, and a formula fitted on restated costs is at the base's prices.
type PriceIndex struct {
	Series string
	Values map[string]float64
}

// PriceIndexOf gathers the series' company-wide values (those without a
// cost centre) from the activity data; a period given twice adds up, as a
// driver's values do.
func PriceIndexOf(activity []costdrift.ActivityValue, name string) PriceIndex {
	p := PriceIndex{Series: name, Values: map[string]float64{}}
	for _, a := range activity {
		if a.Driver == name && a.CostCenter == "" {
			p.Values[a.Period] += a.Value
		}
	}
	return p
}

// IndexError is a period for which a price index cannot restate costs:
// the series has no value then, or one that is zero, negative or not a
// number.
type IndexError struct {
	Series  string
	Period  string
	Value   float64 // NaN when the series has no value for Period
	Missing bool
}

func (e *IndexError) Error() string {
	if e.Missing {
		return fmt.Sprintf("price index %q has no value for %s, so costs of %s cannot be restated", e.Series, e.Period, e.Period)
	}
	return fmt.Sprintf("price index %q is %v in %s; an index must be above zero to restate costs by it", e.Series, e.Value, e.Period)
}

// Check returns an *IndexError for the first of periods whose costs the
// index cannot restate, nil when it can restate them all.
func (p PriceIndex) Check(periods []string) error {
	for _, q := range periods {
		v, ok := p.Values[q]
		switch {
		case !ok:
			return &IndexError{Series: p.Series, Period: q, Value: math.NaN(), Missing: true}
		case !(v > 0) || math.IsInf(v, 0):
			return &IndexError{Series: p.Series, Period: q, Value: v}
		}
	}
	return nil
}

// Factor is index_base / index_period, the factor that restates a cost of
// period at base's prices; false when either has no usable value.
func (p PriceIndex) Factor(period, base string) (float64, bool) {
	from, okFrom := p.Values[period]
	to, okTo := p.Values[base]
	if !okFrom || !okTo || !(from > 0) || !(to > 0) || math.IsInf(from, 0) || math.IsInf(to, 0) {
		return math.NaN(), false
	}
	return to / from, true
}

// Restate multiplies each cost by index_base / index_t of its period (the
// costs are by position in periods); an unknown cost (NaN), such as one of
// a period the ledger has no postings in, stays unknown and needs no index.
// The index must pass Check for base and the periods of known costs.
func (p PriceIndex) Restate(cost []float64, periods []string, base string) {
	for i, q := range periods {
		if math.IsNaN(cost[i]) {
			continue
		}
		f, ok := p.Factor(q, base)
		if !ok {
			panic(fmt.Sprintf("series: price index %q cannot restate %s at %s's prices", p.Series, q, base))
		}
		cost[i] *= f
	}
}

// Exempt is the objects and accounts whose costs stay as posted
// (analysis.deflator_exempt): an entry ACCOUNT/COSTCENTRE names one object,
// an entry without "/" every object of the account.
type Exempt map[string]bool

// ExemptOf reads the config's list.
func ExemptOf(entries []string) Exempt {
	e := Exempt{}
	for _, x := range entries {
		e[strings.TrimSpace(x)] = true
	}
	return e
}

// Has reports whether o's costs stay as posted.
func (e Exempt) Has(o costdrift.CostObject) bool {
	return e[o.String()] || e[o.Account]
}
