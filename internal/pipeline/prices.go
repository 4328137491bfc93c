package pipeline

import (
	"errors"
	"fmt"
	"math"
	"slices"
	"sort"
	"strings"

	"github.com/costdrift/costdrift/internal/costdrift"
	"github.com/costdrift/costdrift/internal/series"
)

// deflation is how an analysis restates costs at one price level (README,
// Prices and inflation): the index series (analysis.deflator), the period
// whose prices the costs are restated at (the newest analysed) and the
// objects left as posted (analysis.deflator_exempt).
type deflation struct {
	index  series.PriceIndex
	base   string
	exempt series.Exempt
}

// deflationOf checks the deflator the config names against the activity
// data over the periods given, the window's periods with postings, the
// newest last; nil without one. A series that is not
// company-wide, or lacks a usable value for a period, is an error naming
// the series and the period: analysing the costs as posted instead would
// give formulas at mixed price levels without a word.
func deflationOf(name string, exempt []string, activity []costdrift.ActivityValue, periods []string, file string) (*deflation, error) {
	if name == "" {
		return nil, nil
	}
	index := series.PriceIndexOf(activity, name)
	if len(index.Values) == 0 {
		perCostCenter := slices.ContainsFunc(activity, func(a costdrift.ActivityValue) bool { return a.Driver == name })
		if perCostCenter {
			return nil, fmt.Errorf("analysis.deflator in %s: the price index %q is kept per cost centre only; give it company-wide (without a cost centre) in its activity source and run costdrift sync",
				file, name)
		}
		return nil, fmt.Errorf("analysis.deflator in %s: no activity series %q in the store (series read: %s); add the price index to an activity source and run costdrift sync",
			file, name, seriesNames(activity))
	}
	if err := index.Check(periods); err != nil {
		var ie *series.IndexError
		if errors.As(err, &ie) {
			return nil, fmt.Errorf("analysis.deflator in %s: %w; nothing was analysed: correct the series in its activity source and run costdrift sync",
				file, err)
		}
		return nil, err
	}
	return &deflation{index: index, base: periods[len(periods)-1], exempt: series.ExemptOf(exempt)}, nil
}

// postedPeriods are the window's periods in which the ledger has postings:
// the others' costs are unknown, and need no index to restate them.
func postedPeriods(window, ledger []string) []string {
	posted := make(map[string]bool, len(ledger))
	for _, p := range ledger {
		posted[p] = true
	}
	return slices.DeleteFunc(slices.Clone(window), func(p string) bool { return !posted[p] })
}

// seriesNames lists the activity series' names, sorted, at most ten.
func seriesNames(activity []costdrift.ActivityValue) string {
	seen := map[string]bool{}
	for _, a := range activity {
		seen[a.Driver] = true
	}
	names := make([]string, 0, len(seen))
	for n := range seen {
		names = append(names, n)
	}
	sort.Strings(names)
	if len(names) > 10 {
		names = append(names[:10], "…")
	}
	return strings.Join(names, ", ")
}

// restate restates an object's costs over periods at the base's prices,
// unless it is exempt; it returns the price base, "" for costs left as
// posted.
func (d *deflation) restate(o *costdrift.ObjectSeries, periods []string) string {
	if d == nil || d.exempt.Has(o.Object) {
		return ""
	}
	d.index.Restate(o.Cost, periods, d.base)
	return d.base
}

// withoutSeries leaves the named series out of the drivers: a price index
// restates costs and is no driver of them.
func withoutSeries(drivers []costdrift.DriverSeries, name string) []costdrift.DriverSeries {
	return slices.DeleteFunc(drivers, func(d costdrift.DriverSeries) bool { return d.Name == name })
}

// priceFactor is index_to / index_from from the stored index; NaN when
// either period has no usable value.
func priceFactor(index series.PriceIndex, from, to string) float64 {
	f, ok := index.Factor(from, to)
	if !ok {
		return math.NaN()
	}
	return f
}
