package series

import (
	"errors"
	"fmt"
	"math"
	"slices"
	"sort"
	"strings"
	"time"

	"github.com/costdrift/costdrift/internal/calendar"
	"github.com/costdrift/costdrift/internal/costdrift"
)

// Settings choose the window and the objects.
type Settings struct {
	Grain    costdrift.Grain
	Scope    costdrift.AccountScope
	Window   int   // periods in the window
	MaxLag   int   // largest lag the analysis will try
	Minor    int64 // minor units per currency unit (100 for EUR)
	Calendar calendar.Calendar
	Now      time.Time
}

// ErrNoClosedPeriod means the ledger has no postings in any closed period.
var ErrNoClosedPeriod = errors.New("the ledger has no postings in a closed period yet")

// Build makes the panel. The window ends at the newest closed period with
// any ledger postings (not at today's date, so an export that stops in
// December is analysed up to December) and reaches back Window periods.
// Within it, a period in which an object has no postings counts as zero cost
// only when the ledger as a whole has postings in that period; otherwise it
// is unknown (NaN). Objects are the accounts in scope (with the cost centre
// at account_cost_center grain) that posted anything in the window. A total
// beyond int64 (CostTotal.Overflow) is unknown too, and makes its object
// Unusable, naming the periods; the other objects are built as usual.
func Build(costs []costdrift.CostTotal, activity []costdrift.ActivityValue, s Settings) (costdrift.Panel, error) {
	ledgerPeriods := map[string]bool{}
	end := ""
	for _, c := range costs {
		ledgerPeriods[c.Period] = true
		if c.Period > end && s.Calendar.Closed(c.Period, s.Now) {
			end = c.Period
		}
	}
	if end == "" {
		return costdrift.Panel{}, ErrNoClosedPeriod
	}
	periods := s.Calendar.Between(s.Calendar.Shift(end, -(s.Window-1)), end)
	index := make(map[string]int, len(periods))
	withPostings := 0
	for i, p := range periods {
		index[p] = i
		if ledgerPeriods[p] {
			withPostings++
		}
	}

	series := map[costdrift.CostObject][]float64{}
	overflow := map[costdrift.CostObject][]string{}
	for _, c := range costs {
		i, ok := index[c.Period]
		if !ok || !s.Scope.Contains(c.Account) {
			continue
		}
		o := costdrift.CostObject{Account: c.Account}
		if s.Grain == costdrift.GrainAccountCostCenter {
			o.CostCenter = c.CostCenter
		}
		v, ok := series[o]
		if !ok {
			v = make([]float64, len(periods))
			series[o] = v
		}
		if c.Overflow {
			v[i] = math.NaN() // and stays NaN whatever else the object adds
			overflow[o] = append(overflow[o], c.Period)
			continue
		}
		v[i] += float64(c.AmountMinor) / float64(s.Minor)
	}
	objects := make([]costdrift.ObjectSeries, 0, len(series))
	for o, v := range series {
		for i, p := range periods {
			if !ledgerPeriods[p] {
				v[i] = math.NaN()
			}
		}
		object := costdrift.ObjectSeries{Object: o, Cost: v}
		if ps := overflow[o]; len(ps) > 0 {
			// At account grain, several cost centres may overflow in one period.
			slices.Sort(ps)
			object.Unusable = fmt.Sprintf("its lines in %s add up to more than an int64 of minor units holds; they include amounts beyond the bound sync enforces",
				strings.Join(slices.Compact(ps), ", "))
		}
		objects = append(objects, object)
	}
	sort.Slice(objects, func(i, j int) bool {
		a, b := objects[i].Object, objects[j].Object
		if a.Account != b.Account {
			return a.Account < b.Account
		}
		return a.CostCenter < b.CostCenter
	})

	return costdrift.Panel{
		Periods:             periods,
		MaxLag:              s.MaxLag,
		Objects:             objects,
		Drivers:             drivers(activity, periods, s),
		PeriodsWithPostings: withPostings,
	}, nil
}

// drivers lays each activity series over the window and its lead-in. At
// account grain a driver kept only per cost centre is also offered as a
// company-wide total, for the periods in which every one of its cost centres
// reported.
func drivers(activity []costdrift.ActivityValue, periods []string, s Settings) []costdrift.DriverSeries {
	first := s.Calendar.Shift(periods[0], -s.MaxLag)
	all := s.Calendar.Between(first, periods[len(periods)-1])
	index := make(map[string]int, len(all))
	for i, p := range all {
		index[p] = i
	}
	type key struct{ name, cc string }
	byKey := map[key]*costdrift.DriverSeries{}
	var order []key
	for _, a := range activity {
		i, ok := index[a.Period]
		if !ok {
			continue
		}
		k := key{a.Driver, a.CostCenter}
		d, ok := byKey[k]
		if !ok {
			d = &costdrift.DriverSeries{Name: a.Driver, CostCenter: a.CostCenter, Values: nanSlice(len(all))}
			byKey[k] = d
			order = append(order, k)
		}
		if math.IsNaN(d.Values[i]) {
			d.Values[i] = 0
		}
		d.Values[i] += a.Value
		if d.Unit == "" {
			d.Unit = a.Unit
		}
	}
	if s.Grain == costdrift.GrainAccount {
		totals := map[string]*costdrift.DriverSeries{}
		var names []string
		for _, k := range order {
			if k.cc == "" {
				continue
			}
			if _, ok := byKey[key{k.name, ""}]; ok {
				continue
			}
			t, ok := totals[k.name]
			if !ok {
				t = &costdrift.DriverSeries{Name: k.name, Unit: byKey[k].Unit, Values: make([]float64, len(all))}
				totals[k.name] = t
				names = append(names, k.name)
			}
			for i, v := range byKey[k].Values {
				t.Values[i] += v // NaN from any cost centre makes the total unknown
			}
		}
		for _, n := range names {
			byKey[key{n, ""}] = totals[n]
			order = append(order, key{n, ""})
		}
	}
	sort.Slice(order, func(i, j int) bool {
		if order[i].name != order[j].name {
			return order[i].name < order[j].name
		}
		return order[i].cc < order[j].cc
	})
	out := make([]costdrift.DriverSeries, len(order))
	for i, k := range order {
		out[i] = *byKey[k]
	}
	return out
}

func nanSlice(n int) []float64 {
	v := make([]float64, n)
	for i := range v {
		v[i] = math.NaN()
	}
	return v
}
