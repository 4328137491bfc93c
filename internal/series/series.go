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
//
// Build holds every object at once; an analysis of a large ledger reads the
// same panel object by object with Window, Drivers and Objects.
func Build(costs []costdrift.CostTotal, activity []costdrift.ActivityValue, s Settings) (costdrift.Panel, error) {
	var ledger []string
	seen := map[string]bool{}
	for _, c := range costs {
		if !seen[c.Period] {
			seen[c.Period] = true
			ledger = append(ledger, c.Period)
		}
	}
	w, err := NewWindow(ledger, s)
	if err != nil {
		return costdrift.Panel{}, err
	}
	// Objects wants each object's totals together, in the order the store
	// hands them out.
	sorted := slices.Clone(costs)
	slices.SortStableFunc(sorted, func(a, b costdrift.CostTotal) int {
		if c := strings.Compare(a.Account, b.Account); c != 0 {
			return c
		}
		if s.Grain == costdrift.GrainAccountCostCenter {
			return strings.Compare(a.CostCenter, b.CostCenter)
		}
		return 0
	})
	objects := make([]costdrift.ObjectSeries, 0)
	var one []costdrift.CostTotal
	flush := func() {
		if o, ok := w.Object(one); ok {
			objects = append(objects, o)
		}
		one = one[:0]
	}
	for _, c := range sorted {
		if len(one) > 0 && (c.Account != one[0].Account || (s.Grain == costdrift.GrainAccountCostCenter && c.CostCenter != one[0].CostCenter)) {
			flush()
		}
		one = append(one, c)
	}
	flush()
	return w.Panel(objects, Drivers(activity, w.Periods, s)), nil
}

// Window is the analysis window: its periods, the periods in which the
// ledger as a whole has postings, and the settings that turn an object's
// cost totals into its series.
type Window struct {
	Periods []string
	// WithPostings counts the window's periods in which the ledger has
	// postings.
	WithPostings int
	index        map[string]int
	ledger       []bool // by window position: the ledger has postings then
	s            Settings
}

// NewWindow finds the window from the periods in which the ledger has
// postings (in any order): it ends at the newest closed one and reaches
// back Window periods.
func NewWindow(ledgerPeriods []string, s Settings) (*Window, error) {
	end := ""
	for _, p := range ledgerPeriods {
		if p > end && s.Calendar.Closed(p, s.Now) {
			end = p
		}
	}
	if end == "" {
		return nil, ErrNoClosedPeriod
	}
	return WindowOf(s.Calendar.Shift(end, -(s.Window-1)), end, ledgerPeriods, s), nil
}

// WindowOf is the window from one period to another, such as the window of
// an analysis run stored earlier.
func WindowOf(from, to string, ledgerPeriods []string, s Settings) *Window {
	w := &Window{Periods: s.Calendar.Between(from, to), s: s}
	w.index = make(map[string]int, len(w.Periods))
	w.ledger = make([]bool, len(w.Periods))
	for i, p := range w.Periods {
		w.index[p] = i
	}
	for _, p := range ledgerPeriods {
		if i, ok := w.index[p]; ok && !w.ledger[i] {
			w.ledger[i] = true
			w.WithPostings++
		}
	}
	return w
}

// From and To are the window's first and last periods.
func (w *Window) From() string { return w.Periods[0] }
func (w *Window) To() string   { return w.Periods[len(w.Periods)-1] }

// Object makes one object's series from its cost totals: every total of
// one account (at account grain) or one account and cost centre, in any
// period. It reports false when the object is out of scope or posted
// nothing in the window.
func (w *Window) Object(totals []costdrift.CostTotal) (costdrift.ObjectSeries, bool) {
	if len(totals) == 0 || !w.s.Scope.Contains(totals[0].Account) {
		return costdrift.ObjectSeries{}, false
	}
	o := costdrift.CostObject{Account: totals[0].Account}
	if w.s.Grain == costdrift.GrainAccountCostCenter {
		o.CostCenter = totals[0].CostCenter
	}
	var v []float64
	var overflow []string
	for _, c := range totals {
		i, ok := w.index[c.Period]
		if !ok {
			continue
		}
		if v == nil {
			v = make([]float64, len(w.Periods))
		}
		if c.Overflow {
			v[i] = math.NaN() // and stays NaN whatever else the object adds
			overflow = append(overflow, c.Period)
			continue
		}
		v[i] += float64(c.AmountMinor) / float64(w.s.Minor)
	}
	if v == nil {
		return costdrift.ObjectSeries{}, false
	}
	for i := range v {
		if !w.ledger[i] {
			v[i] = math.NaN()
		}
	}
	object := costdrift.ObjectSeries{Object: o, Cost: v}
	if len(overflow) > 0 {
		// At account grain, several cost centres may overflow in one period.
		slices.Sort(overflow)
		object.Unusable = fmt.Sprintf("its lines in %s add up to more than an int64 of minor units holds; they include amounts beyond the bound sync enforces",
			strings.Join(slices.Compact(overflow), ", "))
	}
	return object, true
}

// Panel is the window's panel of the objects given, which share drivers.
func (w *Window) Panel(objects []costdrift.ObjectSeries, drivers []costdrift.DriverSeries) costdrift.Panel {
	return costdrift.Panel{Periods: w.Periods, MaxLag: w.s.MaxLag, Objects: objects, Drivers: drivers, PeriodsWithPostings: w.WithPostings}
}

// Drivers lays each activity series over the window's periods and the
// MaxLag periods before them.
func Drivers(activity []costdrift.ActivityValue, periods []string, s Settings) []costdrift.DriverSeries {
	return drivers(activity, periods, s)
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

// Postings notes, of cost totals read from the ledger, the window's
// periods they fall in, so that a window built from a list of periods that
// may hold more than the ledger does (the periods the loads recorded, which
// keep a period whose lines all moved elsewhere) can be checked against the
// ledger as it was read.
type Postings struct {
	w    *Window
	seen []bool
}

// Postings starts a check of the window's periods with postings.
func (w *Window) Postings() *Postings {
	return &Postings{w: w, seen: make([]bool, len(w.Periods))}
}

// Note notes the periods of totals in the window.
func (p *Postings) Note(totals []costdrift.CostTotal) {
	for _, c := range totals {
		if i, ok := p.w.index[c.Period]; ok {
			p.seen[i] = true
		}
	}
}

// Match reports whether the periods noted are exactly the window's periods
// with postings. For a window built from a list that holds every period of
// the ledger, and the totals of every line in the window noted, that means
// it is the ledger's own window: the window ends at the newest closed period
// of the list, which the ledger then has postings in, and the ledger has
// none newer that the list lacks.
func (p *Postings) Match() bool {
	for i, seen := range p.seen {
		if seen != p.w.ledger[i] {
			return false
		}
	}
	return true
}
