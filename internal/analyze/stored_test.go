package analyze

import (
	"context"
	"fmt"
	"math/rand/v2"
	"testing"

	"github.com/costdrift/costdrift/internal/costdrift"
)

// Lines gives the straight lines Object fits, with the same corrected
// p-values, flags and ranks, so that explain can list every candidate while
// the store keeps only the best ones (Stored).
func TestLinesAreObjectsLines(t *testing.T) {
	r := rand.New(rand.NewPCG(31, 32))
	for _, class := range []costdrift.Class{costdrift.Fixed, costdrift.Variable, costdrift.Mixed, costdrift.Step, costdrift.Unexplained} {
		for range 10 {
			p := studyPanel(r, class, 36, 0.04)
			res := Object(p, &p.Objects[0], defaults)
			var want []costdrift.Fit
			for _, f := range res.Fits {
				if f.Model == costdrift.ModelLinear {
					fillRecordP(&f) // as Stored keeps it
					want = append(want, f)
				}
			}
			got := Lines(p, &p.Objects[0], defaults)
			if len(got) != len(want) || len(got) == 0 {
				t.Fatalf("%s: Lines gave %d lines, Object %d", class, len(got), len(want))
			}
			for i := range want {
				w, g := want[i], got[i]
				// Object refits the chosen line with its per-period arrays;
				// its numbers are those of the summary fit to rounding.
				if g.Driver != w.Driver || g.Lag != w.Lag || g.N != w.N || g.PlausibleRanked != w.PlausibleRanked ||
					g.Significant != w.Significant || g.Implausible != w.Implausible ||
					!near(g.Slope, w.Slope, 1e-9) || !near(g.SlopeP, w.SlopeP, 1e-9) || !near(g.SlopeAdjustedP, w.SlopeAdjustedP, 1e-9) ||
					!near(g.PRESS, w.PRESS, 1e-9) {
					t.Fatalf("%s: line %d is %+v from Lines, %+v from Object", class, i, g, w)
				}
			}
		}
	}
}

// Stored keeps the constant, the best StoredLines lines in the order
// explain lists them, every fit on the chosen driver and lag, the step and
// two-driver fits and whatever is chosen; not the other candidates.
func TestStoredKeepsTheBestLines(t *testing.T) {
	r := rand.New(rand.NewPCG(33, 34))
	for _, class := range []costdrift.Class{costdrift.Fixed, costdrift.Variable, costdrift.Mixed, costdrift.Step, costdrift.Unexplained} {
		for range 10 {
			p := studyPanel(r, class, 36, 0.04)
			res := Object(p, &p.Objects[0], defaults)
			kept := res.Stored()
			b := res.Behaviour
			lines, chosen, constants := 0, 0, 0
			keptLine := map[[2]any]bool{}
			for _, f := range kept {
				switch {
				case f.Model == costdrift.ModelLinear:
					lines++
					keptLine[[2]any{f.Driver, f.Lag}] = true
				case f.Model == costdrift.ModelConstant:
					constants++
				case f.Model == costdrift.ModelProportional && (f.Driver != b.Driver || f.Lag != b.Lag):
					t.Fatalf("%s: kept the fit through the origin on %s lag %d, not the chosen driver", class, f.Driver, f.Lag)
				}
				if f.Chosen {
					chosen++
				}
			}
			if constants != 1 || chosen == 0 {
				t.Fatalf("%s: kept %d constant and %d chosen fits", class, constants, chosen)
			}
			// Every line ranked better than a kept one that is not on the
			// chosen driver is kept too.
			all := map[[2]any]costdrift.Fit{}
			for _, f := range res.Fits {
				if f.Model == costdrift.ModelLinear {
					all[[2]any{f.Driver, f.Lag}] = f
				}
			}
			extra := 0
			if b.Driver != "" && !isBest(all, b.Driver, b.Lag) {
				extra = 1
			}
			if want := min(StoredLines, len(all)) + extra; lines != want {
				t.Fatalf("%s: kept %d of %d lines, want %d", class, lines, len(all), want)
			}
			for k, f := range all {
				better := 0
				for _, g := range all {
					if lineBefore(&g, &f) {
						better++
					}
				}
				if better < StoredLines && !keptLine[k] {
					t.Fatalf("%s: line %v, number %d in explain's order, not kept", class, k, better+1)
				}
			}
		}
	}
}

// isBest reports whether the line on driver and lag is among the
// StoredLines best.
func isBest(all map[[2]any]costdrift.Fit, driver string, lag int) bool {
	f := all[[2]any{driver, lag}]
	better := 0
	for _, g := range all {
		if lineBefore(&g, &f) {
			better++
		}
	}
	return better < StoredLines
}

// With StoredOnly, Panel returns each object's result with the fits Stored
// gives of the full result, and those are what Stored gives of them again:
// the pipeline may store either.
func TestPanelStoredOnlyKeepsWhatTheStoreKeeps(t *testing.T) {
	p, settings := mixedPanel()
	full, err := Panel(context.Background(), p, settings)
	if err != nil {
		t.Fatal(err)
	}
	trimmed := settings
	trimmed.StoredOnly = true
	kept, err := Panel(context.Background(), p, trimmed)
	if err != nil {
		t.Fatal(err)
	}
	fewer, broken := 0, 0
	for i := range full {
		want := fmt.Sprintf("%+v", full[i].Stored())
		if got := fmt.Sprintf("%+v", kept[i].Fits); got != want {
			t.Fatalf("%s: StoredOnly kept\n%s\nStored gives\n%s", p.Objects[i].Object, got, want)
		}
		if again := fmt.Sprintf("%+v", kept[i].Stored()); again != want {
			t.Fatalf("%s: Stored of the kept fits gives\n%s\nnot\n%s", p.Objects[i].Object, again, want)
		}
		choice := func(b costdrift.Behaviour) string {
			return fmt.Sprintf("%s %s %d %v %v %s %s", b.Class, b.Driver, b.Lag, b.FixedPerPeriod, b.VariableRate, b.Since, b.Reason)
		}
		if g, w := choice(kept[i].Behaviour), choice(full[i].Behaviour); g != w {
			t.Fatalf("%s: the behaviour is %s with StoredOnly, %s without", p.Objects[i].Object, g, w)
		}
		if len(kept[i].Fits) < len(full[i].Fits) {
			fewer++
		}
		if full[i].Unbroken != nil {
			broken++
			want := fmt.Sprintf("%+v", full[i].Unbroken.Stored())
			if kept[i].Unbroken == nil {
				t.Fatalf("%s: StoredOnly lost the analysis without the break", p.Objects[i].Object)
			}
			if got := fmt.Sprintf("%+v", kept[i].Unbroken.Fits); got != want {
				t.Fatalf("%s: StoredOnly kept of the analysis without the break\n%s\nStored gives\n%s", p.Objects[i].Object, got, want)
			}
		}
	}
	if broken < 4 {
		t.Errorf("%d results have a break; the shifted costs should give at least 4", broken)
	}
	if fewer < len(full)/2 {
		t.Errorf("only %d of %d results keep fewer fits than were tried; the panel should try more candidates than are kept", fewer, len(full))
	}
}

// mixedPanel is a panel of costs of every class, and of fixed and mixed
// costs that rise by a third two years in, with the settings that test
// for breaks: every path of an object's analysis is taken.
func mixedPanel() (*costdrift.Panel, Settings) {
	r := rand.New(rand.NewPCG(35, 36))
	const n = 36
	p := &costdrift.Panel{Periods: periods(n), MaxLag: 1, Drivers: studyDrivers(r, n)}
	for _, class := range []costdrift.Class{costdrift.Fixed, costdrift.Variable, costdrift.Mixed, costdrift.Step, costdrift.Unexplained} {
		for range 6 {
			cost, _ := studyCost(r, class, p.Drivers, n, 0.04)
			p.Objects = append(p.Objects, costdrift.ObjectSeries{Object: costdrift.CostObject{Account: fmt.Sprint(6000 + len(p.Objects))}, Cost: cost})
		}
	}
	// Their results carry the analysis without the break too (Unbroken).
	for _, class := range []costdrift.Class{costdrift.Fixed, costdrift.Mixed} {
		for range 3 {
			cost, _ := studyCost(r, class, p.Drivers, n, 0.02)
			for i := 24; i < n; i++ {
				cost[i] *= 1.35
			}
			p.Objects = append(p.Objects, costdrift.ObjectSeries{Object: costdrift.CostObject{Account: fmt.Sprint(6000 + len(p.Objects))}, Cost: cost})
		}
	}
	settings := defaults
	settings.BreakAlpha, settings.Replicates, settings.Seed = 0.01, 199, 1
	return p, settings
}
