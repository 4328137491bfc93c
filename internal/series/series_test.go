package series

import (
	"errors"
	"math"
	"testing"
	"time"

	"github.com/costdrift/costdrift/internal/calendar"
	"github.com/costdrift/costdrift/internal/costdrift"
)

func settings(now string, window int) Settings {
	t, _ := time.Parse("2006-01-02", now)
	scope, _ := costdrift.ParseAccountScope([]string{"5000-6999"})
	return Settings{Grain: costdrift.GrainAccountCostCenter, Scope: scope, Window: window, MaxLag: 1, Minor: 100,
		Calendar: calendar.Monthly(1, 10), Now: t}
}

func TestWindowEndsAtNewestClosedPeriodWithPostings(t *testing.T) {
	costs := []costdrift.CostTotal{
		{Period: "2026-08", Account: "6100", CostCenter: "WELD", AmountMinor: 420000},
		{Period: "2026-09", Account: "6100", CostCenter: "WELD", AmountMinor: 420000},
		{Period: "2026-10", Account: "6100", CostCenter: "WELD", AmountMinor: 420000},
		// November is not closed on 1 December (10 days' grace): left out.
		{Period: "2026-11", Account: "6100", CostCenter: "WELD", AmountMinor: 999900},
	}
	p, err := Build(costs, nil, settings("2026-12-01", 3))
	if err != nil {
		t.Fatal(err)
	}
	want := []string{"2026-08", "2026-09", "2026-10"}
	if len(p.Periods) != 3 || p.Periods[0] != want[0] || p.Periods[2] != want[2] {
		t.Fatalf("window = %v, want %v", p.Periods, want)
	}
	if got := p.Objects[0].Cost; got[0] != 4200 || got[2] != 4200 {
		t.Errorf("cost = %v, want 4200 in currency units", got)
	}

	// An export that stops in June is analysed up to June, whatever today is.
	p, err = Build(costs[:1], nil, settings("2030-01-01", 3))
	if err != nil || p.Periods[2] != "2026-08" {
		t.Fatalf("window = %v (%v), want it to end at 2026-08", p.Periods, err)
	}
	if _, err := Build(costs[3:], nil, settings("2026-12-01", 3)); !errors.Is(err, ErrNoClosedPeriod) {
		t.Errorf("only an open period: got %v, want ErrNoClosedPeriod", err)
	}
}

// A period with no postings for an object is zero cost only when the ledger
// as a whole has postings then (README, The method); otherwise it is unknown.
func TestMissingPeriods(t *testing.T) {
	costs := []costdrift.CostTotal{
		{Period: "2026-07", Account: "6100", AmountMinor: 100},
		{Period: "2026-07", Account: "6600", AmountMinor: 500},
		{Period: "2026-08", Account: "6100", AmountMinor: 100}, // 6600 silent, ledger not
		// 2026-09: the whole ledger silent
		{Period: "2026-10", Account: "6100", AmountMinor: 100},
		{Period: "2026-10", Account: "9100", AmountMinor: 100}, // out of scope
	}
	p, err := Build(costs, nil, settings("2026-12-01", 4))
	if err != nil {
		t.Fatal(err)
	}
	if len(p.Objects) != 2 {
		t.Fatalf("objects = %+v, want 6100 and 6600 (9100 is out of scope)", p.Objects)
	}
	marketing := p.Objects[1]
	if marketing.Object.Account != "6600" || marketing.Cost[0] != 5 || marketing.Cost[1] != 0 || !math.IsNaN(marketing.Cost[2]) || marketing.Cost[3] != 0 {
		t.Errorf("6600 cost = %v, want [5 0 NaN 0]", marketing.Cost)
	}
	if p.PeriodsWithPostings != 3 {
		t.Errorf("periods with postings = %d, want 3", p.PeriodsWithPostings)
	}
}

func TestDriversLeadTheWindow(t *testing.T) {
	costs := []costdrift.CostTotal{{Period: "2026-09", Account: "6200", CostCenter: "WELD", AmountMinor: 1}, {Period: "2026-10", Account: "6200", CostCenter: "WELD", AmountMinor: 1}}
	act := []costdrift.ActivityValue{
		{Period: "2026-08", Driver: "machine_hours", CostCenter: "WELD", Value: 8, Unit: "machine hour"},
		{Period: "2026-09", Driver: "machine_hours", CostCenter: "WELD", Value: 9},
		{Period: "2026-10", Driver: "machine_hours", CostCenter: "WELD", Value: 10},
		{Period: "2026-10", Driver: "machine_hours", CostCenter: "PAINT", Value: 5},
	}
	p, err := Build(costs, act, settings("2026-12-01", 2))
	if err != nil {
		t.Fatal(err)
	}
	if len(p.Drivers) != 2 {
		t.Fatalf("drivers = %+v", p.Drivers)
	}
	weld := p.Drivers[1]
	if weld.CostCenter != "WELD" || weld.Unit != "machine hour" || len(weld.Values) != 3 || weld.Values[0] != 8 || weld.Values[2] != 10 {
		t.Errorf("WELD machine hours = %+v, want [8 9 10] with the lead-in period first", weld)
	}

	// At account grain a driver kept only per cost centre is offered as a
	// company-wide total, unknown where a cost centre did not report.
	s := settings("2026-12-01", 2)
	s.Grain = costdrift.GrainAccount
	p, err = Build(costs, act, s)
	if err != nil {
		t.Fatal(err)
	}
	var total *costdrift.DriverSeries
	for i := range p.Drivers {
		if p.Drivers[i].CostCenter == "" {
			total = &p.Drivers[i]
		}
	}
	if total == nil || !math.IsNaN(total.Values[0]) || !math.IsNaN(total.Values[1]) || total.Values[2] != 15 {
		t.Errorf("company total = %+v, want [NaN NaN 15]", total)
	}
	if p.Objects[0].Object.CostCenter != "" {
		t.Errorf("account grain object = %+v, want no cost centre", p.Objects[0].Object)
	}
}

// A total beyond int64 (lines stored before sync bounded amounts) makes the
// object unusable, naming the periods; its cost there is unknown, and every
// other object is built as usual. At account grain the account's other cost
// centres do not hide it.
func TestTotalBeyondInt64MakesOnlyItsObjectUnusable(t *testing.T) {
	costs := []costdrift.CostTotal{
		{Period: "2026-08", Account: "6100", CostCenter: "WELD", AmountMinor: 420000},
		{Period: "2026-09", Account: "6100", CostCenter: "WELD", Overflow: true},
		{Period: "2026-10", Account: "6100", CostCenter: "WELD", Overflow: true},
		{Period: "2026-08", Account: "6100", CostCenter: "PAINT", AmountMinor: 100},
		{Period: "2026-09", Account: "6100", CostCenter: "PAINT", AmountMinor: 200},
		{Period: "2026-10", Account: "6100", CostCenter: "PAINT", AmountMinor: 300},
		{Period: "2026-07", Account: "6200", CostCenter: "WELD", Overflow: true}, // before the window
		{Period: "2026-10", Account: "6200", CostCenter: "WELD", AmountMinor: 500},
	}
	p, err := Build(costs, nil, settings("2026-12-01", 3))
	if err != nil {
		t.Fatal(err)
	}
	const reason = "its lines in 2026-09, 2026-10 add up to more than an int64 of minor units holds; they include amounts beyond the bound sync enforces"
	// Objects in account, cost centre order; costs in currency units (minor
	// units / 100, by hand).
	want := []struct {
		object   string
		cost     []float64
		unusable string
	}{
		{"6100/PAINT", []float64{1, 2, 3}, ""},
		{"6100/WELD", []float64{4200, math.NaN(), math.NaN()}, reason},
		{"6200/WELD", []float64{0, 0, 5}, ""}, // its overflow lies before the window
	}
	if len(p.Objects) != len(want) {
		t.Fatalf("%d objects, want %d: %+v", len(p.Objects), len(want), p.Objects)
	}
	for i, w := range want {
		o := p.Objects[i]
		if o.Object.String() != w.object || o.Unusable != w.unusable || !sameFloats(o.Cost, w.cost) {
			t.Errorf("object %d: %s %v %q, want %s %v %q", i, o.Object, o.Cost, o.Unusable, w.object, w.cost, w.unusable)
		}
	}

	s := settings("2026-12-01", 3)
	s.Grain = costdrift.GrainAccount
	p, err = Build(costs, nil, s)
	if err != nil {
		t.Fatal(err)
	}
	if len(p.Objects) != 2 || p.Objects[0].Unusable != reason || !sameFloats(p.Objects[0].Cost, []float64{4201, math.NaN(), math.NaN()}) ||
		p.Objects[1].Unusable != "" {
		t.Errorf("account grain: %+v", p.Objects)
	}
}

// sameFloats compares exactly, NaN equal to NaN.
func sameFloats(a, b []float64) bool {
	if len(a) != len(b) {
		return false
	}
	for i := range a {
		if a[i] != b[i] && !(math.IsNaN(a[i]) && math.IsNaN(b[i])) {
			return false
		}
	}
	return true
}

// A window built from more periods than the ledger holds (a period whose
// lines all moved to another) does not match the ledger as it is read; one
// built from the ledger's own periods does, out-of-window periods aside.
func TestPostingsCheckTheWindowsPeriods(t *testing.T) {
	s := settings("2026-12-01", 3)
	costs := []costdrift.CostTotal{
		{Period: "2026-08", Account: "6100", CostCenter: "WELD", AmountMinor: 100},
		{Period: "2026-10", Account: "6100", CostCenter: "WELD", AmountMinor: 100},
		{Period: "2026-10", Account: "9100", AmountMinor: 100},                     // out of scope, yet the ledger posted then
		{Period: "2026-05", Account: "6100", CostCenter: "WELD", AmountMinor: 100}, // before the window
	}
	cases := []struct {
		name   string
		listed []string
		match  bool
	}{
		{"the ledger's periods", []string{"2026-05", "2026-08", "2026-10"}, true},
		{"a period without lines in the window", []string{"2026-05", "2026-08", "2026-09", "2026-10"}, false},
		{"a newer period without lines", []string{"2026-05", "2026-08", "2026-10", "2026-11", "2026-12"}, true}, // neither is closed on 1 December
		{"a closed newer period without lines", []string{"2026-08", "2026-10", "2026-11"}, false},
		{"a period missing from the list", []string{"2026-10"}, false},
		{"an older period without lines", []string{"2026-01", "2026-08", "2026-10"}, true},
	}
	for _, c := range cases {
		now := s.Now
		if c.name == "a closed newer period without lines" {
			s.Now = now.AddDate(0, 1, 0) // November closed on 1 January
		}
		w, err := NewWindow(c.listed, s)
		s.Now = now
		if err != nil {
			t.Fatalf("%s: %v", c.name, err)
		}
		p := w.Postings()
		for _, cost := range costs {
			p.Note([]costdrift.CostTotal{cost})
		}
		if got := p.Match(); got != c.match {
			t.Errorf("%s: window %v, match = %v, want %v", c.name, w.Periods, got, c.match)
		}
	}
}
