package study

import (
	"fmt"
	"io"
	"runtime"
	"sort"
	"strings"
	"sync"

	"github.com/costdrift/costdrift/internal/alerts"
	"github.com/costdrift/costdrift/internal/analyze"
	"github.com/costdrift/costdrift/internal/costdrift"
)

// Settings are the analysis settings of the study: the method defaults of
// the README (a window of 36 months, lags 0 and 1, alpha 0.05, breaks at
// 0.01 with 999 bootstrap replicates).
func Settings() analyze.Settings {
	return analyze.Settings{MinPeriods: 12, Lags: []int{0, 1}, Alpha: 0.05, BreakAlpha: 0.01, Replicates: 999, Seed: 0x636f737464726966}
}

// Alerted is one object's behaviour alerts that reached warning or critical
// at one analysis: new ones, or watches escalated.
type Alerted struct {
	Object   string
	Kinds    []costdrift.AlertKind
	Messages []string
	Period   string // the period the first alert concerns (the break, or the new behaviour's start)
}

// Analysis is what one month-end's analysis raised.
type Analysis struct {
	Newest  int       // history month of the window's newest period
	Alerted []Alerted // objects with a new warning or critical behaviour alert
	Watched []string  // objects with only an info-level behaviour alert
}

// Roll analyses the portfolio at each of the 13 month-ends of its last year
// (windows ending at history months 35 to 47), each time with every
// object's current behaviour as the prior and the breaks of the whole
// portfolio weighed together at false-discovery rate q (analyze.ControlBreaks;
// 0: not weighed), keeps each object's behaviour
// history as the store does (history), and raises the behaviour alerts of
// each analysis from the current behaviour against the one it replaced.
func Roll(companies []Company, s analyze.Settings, q float64) []Analysis {
	store := map[string]*history{}
	warned := map[string]bool{} // fingerprints of the alerts raised at warning or above so far
	var out []Analysis
	for k := 0; k <= Rolls; k++ {
		end := Window + k
		s.Prior = map[string]costdrift.Behaviour{}
		for name, h := range store {
			s.Prior[name] = h.open
		}
		results := analyseAll(companies, end, s)
		analyze.ControlBreaks(results, q)
		current := make([]costdrift.Behaviour, 0, len(results))
		previous := map[string]costdrift.Behaviour{}
		for _, r := range results {
			name := r.Behaviour.Object.String()
			h := store[name]
			if h == nil {
				h = &history{}
				store[name] = h
			}
			h.save(r.Behaviour)
			current = append(current, h.open)
			if h.closed != nil {
				previous[name] = *h.closed
			}
		}
		a := Analysis{Newest: end - 1}
		at := map[string]int{} // object -> index into a.Alerted
		watched := map[string]bool{}
		for _, al := range alerts.Behaviour(current, previous, nil, "") {
			// The store keeps one alert per fingerprint while its condition
			// lasts: what reaches the accountant is a new alert, or one
			// escalated from a watch to a warning.
			if al.Severity.Rank() < costdrift.SeverityWarning.Rank() {
				watched[al.Object] = true
				continue
			}
			if warned[al.Fingerprint] {
				continue
			}
			warned[al.Fingerprint] = true
			i, ok := at[al.Object]
			if !ok {
				i = len(a.Alerted)
				at[al.Object] = i
				a.Alerted = append(a.Alerted, Alerted{Object: al.Object, Period: al.Period})
			}
			a.Alerted[i].Kinds = append(a.Alerted[i].Kinds, al.Kind)
			a.Alerted[i].Messages = append(a.Alerted[i].Messages, al.Message)
		}
		for name := range watched {
			if _, ok := at[name]; !ok {
				a.Watched = append(a.Watched, name)
			}
		}
		out = append(out, a)
	}
	return out
}

// history is one object's behaviour as the store keeps it (README, Drift):
// the open behaviour, the one it replaced, and a change of class, driver or
// lag without a break seen once and waiting for the next analysis.
type history struct {
	open     costdrift.Behaviour
	openFrom string               // the period the open behaviour was first stored from
	closed   *costdrift.Behaviour // the store's previous behaviour: class, driver, lag, formula, start
	pending  *costdrift.Behaviour
}

// save applies one analysis's behaviour as the store does: the first opens
// the history (with a break, the periods before it close at once, in the
// class of the formula fitted on them); a break after the open behaviour
// began replaces it; the same class, driver and lag refresh it; another
// without a break replaces it only when the next analysis sees it again.
func (h *history) save(b costdrift.Behaviour) {
	first := h.open.Class == ""
	switch {
	case first && b.Break != nil:
		before := costdrift.Behaviour{Object: b.Object, Class: b.Class, Driver: b.Driver, Lag: b.Lag,
			FixedPerPeriod: b.Break.FixedBefore, VariableRate: b.Break.RateBefore, Since: b.Break.WindowFrom}
		if b.Break.Driver == "" {
			before.Driver, before.VariableRate = "", 0
			if b.Class != costdrift.Fixed && b.Class != costdrift.Unexplained {
				before.Class = costdrift.Fixed
			}
		}
		h.closed, h.open, h.openFrom = &before, b, b.Since
	case first:
		h.open, h.openFrom = b, b.Since
	case b.Break != nil && h.open.Since < b.Break.Period:
		h.replace(b)
	case b.Class == h.open.Class && b.Driver == h.open.Driver && b.Lag == h.open.Lag:
		h.open, h.pending = b, nil
	case h.pending != nil && h.pending.Class == b.Class && h.pending.Driver == b.Driver && h.pending.Lag == b.Lag:
		h.replace(b)
	default:
		h.pending = &b
	}
}

// replace closes the open behaviour and opens b.
func (h *history) replace(b costdrift.Behaviour) {
	o := h.open
	h.closed = &costdrift.Behaviour{Object: o.Object, Class: o.Class, Driver: o.Driver, Lag: o.Lag,
		FixedPerPeriod: o.FixedPerPeriod, VariableRate: o.VariableRate, Since: h.openFrom}
	h.open, h.openFrom, h.pending = b, b.Since, nil
}

// analyseAll analyses every object of every company on the window ending
// before history month end, spread over the machine's cores; results come
// back in portfolio order.
func analyseAll(companies []Company, end int, s analyze.Settings) []analyze.Result {
	type job struct {
		p     *costdrift.Panel
		i, at int
	}
	total := 0
	for _, c := range companies {
		total += len(c.Objects)
	}
	results := make([]analyze.Result, total)
	work := make(chan job)
	var wg sync.WaitGroup
	for range runtime.GOMAXPROCS(0) {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for j := range work {
				results[j.at] = analyze.Object(j.p, &j.p.Objects[j.i], s)
			}
		}()
	}
	at := 0
	for ci := range companies {
		p := companies[ci].panel(end)
		for i := range p.Objects {
			work <- job{p, i, at}
			at++
		}
	}
	close(work)
	wg.Wait()
	return results
}

// Tally counts objects by class.
type Tally map[costdrift.Class]int

// StableFigures are the false alerts of a stable portfolio.
type StableFigures struct {
	Objects  Tally
	PerRoll  []Tally // objects alerted on each analysis, by class
	Year     Tally   // objects alerted on at least one analysis
	Kinds    map[costdrift.AlertKind]int
	Watched  []int // objects with only an info-level alert, per analysis
	MaxShare float64
	MaxClass map[costdrift.Class]float64 // the largest share of a class alerted on one analysis
}

// Stable counts the objects of a stable portfolio alerted per analysis and
// over the year.
func Stable(companies []Company, rolls []Analysis) StableFigures {
	class := classes(companies)
	f := StableFigures{Objects: Tally{}, Year: Tally{}, Kinds: map[costdrift.AlertKind]int{}, MaxClass: map[costdrift.Class]float64{}}
	for _, c := range class {
		f.Objects[c]++
	}
	total := len(class)
	ever := map[string]bool{}
	for _, a := range rolls {
		t := Tally{}
		for _, al := range a.Alerted {
			if _, ok := class[al.Object]; !ok {
				continue // an object of another portfolio analysed alongside
			}
			t[class[al.Object]]++
			if !ever[al.Object] {
				ever[al.Object] = true
				f.Year[class[al.Object]]++
			}
			for _, k := range al.Kinds {
				f.Kinds[k]++
			}
		}
		f.PerRoll = append(f.PerRoll, t)
		watched := 0
		for _, name := range a.Watched {
			if _, ok := class[name]; ok {
				watched++
			}
		}
		f.Watched = append(f.Watched, watched)
		n := 0
		for _, v := range t {
			n += v
		}
		f.MaxShare = max(f.MaxShare, float64(n)/float64(total))
		for c, n := range t {
			f.MaxClass[c] = max(f.MaxClass[c], float64(n)/float64(f.Objects[c]))
		}
	}
	return f
}

// YearShare is the share of objects alerted over the year, of all or of
// one class.
func (f StableFigures) YearShare(c costdrift.Class) float64 {
	if c == "" {
		n, all := 0, 0
		for k, v := range f.Year {
			n += v
			_ = k
		}
		for _, v := range f.Objects {
			all += v
		}
		return float64(n) / float64(all)
	}
	return float64(f.Year[c]) / float64(f.Objects[c])
}

// ShiftFigures are the detections of a shifted portfolio, by class.
type ShiftFigures struct {
	Objects Tally
	Within3 Tally // alerted at one of the first 3 month-ends from the change on
	Within6 Tally
	Dated   Tally // the first alert dates the change within one month
	Early   Tally // alerted before the change
	Latency map[costdrift.Class][]int
}

// Shifted counts, per class, the objects of a shifted portfolio alerted
// within 3 and within 6 month-ends of their change (the month-end of the
// changed month is the first), and whether the first alert dates the change
// within one month.
func Shifted(companies []Company, rolls []Analysis) ShiftFigures {
	f := ShiftFigures{Objects: Tally{}, Within3: Tally{}, Within6: Tally{}, Dated: Tally{}, Early: Tally{}, Latency: map[costdrift.Class][]int{}}
	for _, c := range companies {
		for _, o := range c.Objects {
			name := o.Name.String()
			f.Objects[o.Class]++
			early := false
			for _, a := range rolls {
				var hit *Alerted
				for i := range a.Alerted {
					if a.Alerted[i].Object == name {
						hit = &a.Alerted[i]
					}
				}
				if hit == nil {
					continue
				}
				if a.Newest < o.Change {
					early = true
					continue
				}
				ends := a.Newest - o.Change + 1
				f.Latency[o.Class] = append(f.Latency[o.Class], ends)
				if ends <= 3 {
					f.Within3[o.Class]++
				}
				if ends <= 6 {
					f.Within6[o.Class]++
				}
				if d := monthIndex(hit.Period) - o.Change; d >= -1 && d <= 1 {
					f.Dated[o.Class]++
				}
				break
			}
			if early {
				f.Early[o.Class]++
			}
		}
	}
	return f
}

// classes maps each object's name to its true class.
func classes(companies []Company) map[string]costdrift.Class {
	out := map[string]costdrift.Class{}
	for _, c := range companies {
		for _, o := range c.Objects {
			out[o.Name.String()] = o.Class
		}
	}
	return out
}

// WriteStable prints the false-alert figures of a stable portfolio.
func WriteStable(w io.Writer, f StableFigures) {
	total := 0
	for _, v := range f.Objects {
		total += v
	}
	fmt.Fprintf(w, "stable portfolio: %d objects, %d analyses (a 36-month window rolled forward %d month-ends)\n", total, len(f.PerRoll), Rolls)
	fmt.Fprintf(w, "  %-10s %8s %22s %14s\n", "class", "objects", "max on one analysis", "over the year")
	for _, c := range Classes {
		fmt.Fprintf(w, "  %-10s %8d %21.2f%% %13.2f%%\n", c, f.Objects[c], 100*f.MaxClass[c], 100*f.YearShare(c))
	}
	fmt.Fprintf(w, "  %-10s %8d %21.2f%% %13.2f%%\n", "all", total, 100*f.MaxShare, 100*f.YearShare(""))
	var per []string
	for _, t := range f.PerRoll {
		n := 0
		for _, v := range t {
			n += v
		}
		per = append(per, fmt.Sprint(n))
	}
	fmt.Fprintf(w, "  objects alerted per analysis: %s\n", strings.Join(per, " "))
	fmt.Fprintf(w, "  objects with only an info-level watch per analysis: %v\n", f.Watched)
	var kinds []string
	for k, n := range f.Kinds {
		kinds = append(kinds, fmt.Sprintf("%s %d", k, n))
	}
	sort.Strings(kinds)
	fmt.Fprintf(w, "  alerts by kind (summed over analyses): %s\n", strings.Join(kinds, ", "))
}

// WriteShifted prints the detection figures of a shifted portfolio.
func WriteShifted(w io.Writer, f ShiftFigures) {
	fmt.Fprintf(w, "shifted portfolio: the fixed part rises at a known month\n")
	fmt.Fprintf(w, "  %-10s %8s %10s %10s %18s %14s\n", "class", "objects", "within 3", "within 6", "dated within 1", "before change")
	for _, c := range Classes {
		n := f.Objects[c]
		if n == 0 {
			continue
		}
		pct := func(v int) float64 { return 100 * float64(v) / float64(n) }
		fmt.Fprintf(w, "  %-10s %8d %9.1f%% %9.1f%% %17.1f%% %13.1f%%\n", c, n, pct(f.Within3[c]), pct(f.Within6[c]), pct(f.Dated[c]), pct(f.Early[c]))
	}
}
