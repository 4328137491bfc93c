package fit

import (
	"errors"
	"math"
	"math/rand/v2"
	"strings"
	"testing"
)

// welfordSSE is Σ(y − ȳ)² of v by Welford's running update on y − v[0], the
// definition Step documents for its segment costs, written out again here.
func welfordSSE(v []float64) float64 {
	var mean, c float64
	for m, y := range v {
		u := y - v[0]
		d := u - mean
		mean += d / float64(m+1)
		c += d * (u - mean)
	}
	return c
}

// exhaustive enumerates every partition of the sorted observations into
// contiguous groups (each subset of the n − 1 gaps is a set of cuts), keeps
// those that split no tie and give every group at least minPerLevel
// observations, and returns for each number of groups k the smallest RSS (the
// group sums added left to right, as the recursion adds them), the partition
// reaching it (as group sizes) and how many partitions reach it. rss[k] is
// +Inf when no admissible partition has k groups.
func exhaustive(xs, ys []float64, minPerLevel int) (rss map[int]float64, sizes map[int][]int, ties map[int]int) {
	n := len(xs)
	rss, sizes, ties = map[int]float64{}, map[int][]int{}, map[int]int{}
	for mask := 0; mask < 1<<(n-1); mask++ {
		var bounds []int
		ok := true
		for gap := 1; gap < n; gap++ {
			if mask&(1<<(gap-1)) != 0 {
				if xs[gap-1] == xs[gap] {
					ok = false
					break
				}
				bounds = append(bounds, gap)
			}
		}
		if !ok {
			continue
		}
		bounds = append(append([]int{0}, bounds...), n)
		var total float64
		var sz []int
		for g := 0; g+1 < len(bounds); g++ {
			lo, hi := bounds[g], bounds[g+1]
			if hi-lo < minPerLevel {
				ok = false
				break
			}
			total += welfordSSE(ys[lo:hi])
			sz = append(sz, hi-lo)
		}
		if !ok {
			continue
		}
		k := len(sz)
		best, seen := rss[k]
		switch {
		case !seen || total < best:
			rss[k], sizes[k], ties[k] = total, sz, 1
		case total == best:
			ties[k]++
		}
	}
	return rss, sizes, ties
}

// TestStepExhaustive: on random small cases (n <= 14, activity drawn from a
// few integers so that ties are common) the dynamic programme must find, for
// every number of levels, a partition whose RSS equals exactly the smallest
// over all admissible partitions enumerated one by one. The seeds are fixed;
// the data are random draws, not a model of anything.
func TestStepExhaustive(t *testing.T) {
	rng := rand.New(rand.NewPCG(2024, 6))
	cases := 0
	for trial := 0; trial < 400; trial++ {
		n := 4 + rng.IntN(11) // 4..14
		distinct := 2 + rng.IntN(n)
		maxLevels := 2 + rng.IntN(3)   // 2..4
		minPerLevel := 1 + rng.IntN(3) // 1..3
		x := make([]float64, n)
		y := make([]float64, n)
		for i := range x {
			x[i] = float64(10 * rng.IntN(distinct))
			y[i] = 100*float64(int(x[i])/20) + 30*rng.NormFloat64()
		}
		order := sortedOrder(x)
		xs, ys := make([]float64, n), make([]float64, n)
		for r, i := range order {
			xs[r], ys[r] = x[i], y[i]
		}
		want, sizes, ties := exhaustive(xs, ys, minPerLevel)

		s, err := Step(x, y, maxLevels, minPerLevel)
		if _, possible := want[2]; !possible {
			if err == nil {
				t.Fatalf("trial %d: Step found %d models, exhaustive search found no 2-level partition", trial, len(s.Models))
			}
			wantErr := ErrIllConditioned
			if n < 2*minPerLevel {
				wantErr = ErrTooFewObservations
			}
			if !errors.Is(err, wantErr) {
				t.Fatalf("trial %d: err = %v, want %v", trial, err, wantErr)
			}
			continue
		}
		if err != nil {
			t.Fatalf("trial %d: %v", trial, err)
		}
		cases++
		feasible := 0
		for k := 2; k <= maxLevels; k++ {
			if _, ok := want[k]; ok {
				feasible++
			}
		}
		if len(s.Models) != feasible {
			t.Fatalf("trial %d: %d models, %d numbers of levels admissible", trial, len(s.Models), feasible)
		}
		for mi, m := range s.Models {
			k := mi + 2
			if m.RSS != want[k] {
				t.Errorf("trial %d, %d levels: RSS = %.17g, exhaustive minimum %.17g", trial, k, m.RSS, want[k])
			}
			if ties[k] == 1 {
				for g, l := range m.Levels {
					if l.N != sizes[k][g] {
						t.Errorf("trial %d, %d levels: group sizes differ from the unique optimum %v", trial, k, sizes[k])
						break
					}
				}
			}
			checkStepModel(t, x, y, minPerLevel, m)
		}
		best := 0
		for mi, m := range s.Models {
			if m.AICc < s.Models[best].AICc {
				best = mi
			}
		}
		if s.Best != best {
			t.Errorf("trial %d: Best = %d, lowest AICc at %d", trial, s.Best, best)
		}
	}
	if cases < 200 {
		t.Errorf("only %d of 400 trials had a 2-level partition", cases)
	}
}

// checkStepModel checks what every StepModel promises, from its definition:
// levels in increasing, non-overlapping activity (a tie is never split), each
// with at least minPerLevel observations, From/To the extremes of its group,
// Mean the group mean, residuals y − level in the caller's order summing in
// squares to RSS, and the information criteria with m = 2k parameters.
func checkStepModel(t *testing.T, x, y []float64, minPerLevel int, m StepModel) {
	t.Helper()
	k := len(m.Levels)
	total := 0
	var rss float64
	for g, l := range m.Levels {
		if l.N < minPerLevel {
			t.Errorf("%d levels: level %d has %d observations, minimum %d", k, g, l.N, minPerLevel)
		}
		if g > 0 && !(m.Levels[g-1].To < l.From) {
			t.Errorf("%d levels: level %d ends at %g, level %d starts at %g", k, g-1, m.Levels[g-1].To, g, l.From)
		}
		var members []float64
		lo, hi := math.Inf(1), math.Inf(-1)
		for i := range x {
			if x[i] >= l.From && x[i] <= l.To {
				members = append(members, y[i])
				lo, hi = math.Min(lo, x[i]), math.Max(hi, x[i])
				if math.Abs(m.Residuals[i]-(y[i]-l.Mean)) > 1e-12*math.Max(1, math.Abs(y[i])) {
					t.Errorf("%d levels: residual %d = %g, want %g", k, i, m.Residuals[i], y[i]-l.Mean)
				}
				rss += m.Residuals[i] * m.Residuals[i]
			}
		}
		if len(members) != l.N || lo != l.From || hi != l.To {
			t.Errorf("%d levels: level %d [%g, %g] with N = %d holds %d observations from %g to %g",
				k, g, l.From, l.To, l.N, len(members), lo, hi)
		}
		var sum float64
		for _, v := range members {
			sum += v
		}
		if mean := sum / float64(len(members)); math.Abs(l.Mean-mean) > 1e-12*math.Max(1, math.Abs(mean)) {
			t.Errorf("%d levels: level %d mean %.15g, want %.15g", k, g, l.Mean, mean)
		}
		total += l.N
	}
	if total != len(x) {
		t.Errorf("%d levels hold %d observations, want %d", k, total, len(x))
	}
	if math.Abs(rss-m.RSS) > 1e-10*math.Max(m.RSS, 1e-300) && !(rss < 1e-20 && m.RSS < 1e-20) {
		t.Errorf("%d levels: Σ residual² = %.15g, RSS = %.15g", k, rss, m.RSS)
	}
	n := float64(len(x))
	p := float64(2 * k)
	aic := n*(math.Log(2*math.Pi)+1+math.Log(m.RSS/n)) + 2*p
	if math.Abs(m.AIC-aic) > 1e-9*math.Max(1, math.Abs(aic)) && !(math.IsInf(aic, -1) && math.IsInf(m.AIC, -1)) {
		t.Errorf("%d levels: AIC = %.15g, want %.15g", k, m.AIC, aic)
	}
	if n-p-1 > 0 && !math.IsInf(aic, -1) {
		if want := aic + 2*p*(p+1)/(n-p-1); math.Abs(m.AICc-want) > 1e-9*math.Max(1, math.Abs(want)) {
			t.Errorf("%d levels: AICc = %.15g, want %.15g", k, m.AICc, want)
		}
	} else if n-p-1 <= 0 && !math.IsInf(m.AICc, 1) {
		t.Errorf("%d levels: AICc = %g with N − m − 1 = %g, want +Inf", k, m.AICc, n-p-1)
	}
}

// TestStepByHand: x = 1..6, y = (10, 11, 10, 20, 21, 20), levels of at least
// 2, worked by hand. Two levels: {10, 11, 10} and {20, 21, 20}, means 31/3
// and 61/3, RSS = 2·(2/3) = 4/3 (no other split of 2+4, 4+2 comes close).
// Three levels of 2 must be (10, 11), (10, 20), (21, 20): RSS 0.5 + 50 + 0.5.
// N = 6 leaves AICc finite only for 2 levels (m = 4, N − m − 1 = 1), so the
// 2-level model is best; its AICc is AIC + 2·4·5/1.
func TestStepByHand(t *testing.T) {
	x := []float64{4, 1, 6, 2, 5, 3} // shuffled: Step sorts
	y := []float64{20, 10, 20, 11, 21, 10}
	s, err := Step(x, y, 3, 2)
	if err != nil {
		t.Fatal(err)
	}
	const tol = 1e-12
	if len(s.Models) != 2 || s.Best != 0 {
		t.Fatalf("%d models, best %d; want 2 and 0", len(s.Models), s.Best)
	}
	two, three := s.Models[0], s.Models[1]
	want := []StepLevel{{From: 1, To: 3, Mean: 31.0 / 3, N: 3}, {From: 4, To: 6, Mean: 61.0 / 3, N: 3}}
	for g, l := range two.Levels {
		if l.From != want[g].From || l.To != want[g].To || l.N != want[g].N || math.Abs(l.Mean-want[g].Mean) > tol {
			t.Errorf("level %d = %+v, want %+v", g, l, want[g])
		}
	}
	aic := 6*(math.Log(2*math.Pi)+1+math.Log(4.0/3/6)) + 2*4
	for _, c := range []struct {
		name      string
		got, want float64
	}{
		{"RSS 2 levels", two.RSS, 4.0 / 3},
		{"RSS 3 levels", three.RSS, 51},
		{"AIC 2 levels", two.AIC, aic},
		{"AICc 2 levels", two.AICc, aic + 40},
		{"BIC 2 levels", two.BIC, aic - 2*4 + math.Log(6)*4},
		{"residual of x = 5", two.Residuals[4], 21 - 61.0/3},
	} {
		if math.Abs(c.got-c.want) > tol*math.Max(1, math.Abs(c.want)) {
			t.Errorf("%s = %.15g, want %.15g", c.name, c.got, c.want)
		}
	}
	if !math.IsInf(three.AICc, 1) {
		t.Errorf("AICc 3 levels = %g, want +Inf (N − m − 1 = −1)", three.AICc)
	}
}

// TestStepTiesNeverSplit: x = (1, 1, 2, 2, 2, 2), y = (0, 0, 0, 0, 10, 10).
// Splitting inside the x = 2 group would fit exactly (RSS 0); the only split
// that keeps equal activity together is 1 | 2, giving levels 0 and 5 with
// RSS 4·5² = 100 (by hand). Three levels are impossible.
func TestStepTiesNeverSplit(t *testing.T) {
	x := []float64{1, 2, 1, 2, 2, 2}
	y := []float64{0, 0, 0, 10, 0, 10}
	s, err := Step(x, y, 4, 1)
	if err != nil {
		t.Fatal(err)
	}
	if len(s.Models) != 1 {
		t.Fatalf("%d models, want 1 (only one admissible split)", len(s.Models))
	}
	m := s.Models[0]
	if m.RSS != 100 || m.Levels[0].N != 2 || m.Levels[0].Mean != 0 || m.Levels[1].Mean != 5 {
		t.Errorf("model %+v, want levels 0 (N 2) and 5 with RSS 100", m)
	}
	if _, err := Step([]float64{3, 3, 3, 3}, []float64{1, 2, 3, 4}, 2, 1); !errors.Is(err, ErrIllConditioned) {
		t.Errorf("all x equal: err = %v, want ErrIllConditioned", err)
	}
}

// TestStepMinPerLevel: x = 1..8, y = (0, 0, 0, 0, 0, 0, 0, 50). Isolating the
// last period would fit exactly, but levels need 3 periods: the best split is
// 1..5 | 6..8 with levels 0 and 50/3 and RSS 2·(50/3)² + (100/3)² = 5000/3;
// the next best, 1..4 | 5..8, has RSS 3·12.5² + 37.5² = 1875 (by hand).
func TestStepMinPerLevel(t *testing.T) {
	x := []float64{1, 2, 3, 4, 5, 6, 7, 8}
	y := []float64{0, 0, 0, 0, 0, 0, 0, 50}
	s, err := Step(x, y, 2, 3)
	if err != nil {
		t.Fatal(err)
	}
	m := s.Models[0]
	if m.Levels[0].N != 5 || m.Levels[1].N != 3 || math.Abs(m.RSS-5000.0/3) > 1e-9 {
		t.Errorf("levels %+v, RSS %g; want 5 + 3 observations, RSS 5000/3", m.Levels, m.RSS)
	}
	if _, err := Step(x[:5], y[:5], 2, 3); !errors.Is(err, ErrTooFewObservations) {
		t.Errorf("5 observations, levels of 3: err = %v, want ErrTooFewObservations", err)
	}
	if _, err := Step([]float64{1, 2, math.NaN(), 4}, []float64{1, 2, 3, 4}, 2, 1); !errors.Is(err, ErrNonFinite) {
		t.Errorf("NaN activity: err = %v, want ErrNonFinite", err)
	}
	if _, err := Step([]float64{1, 2, 3, 4}, []float64{1e308, -1e308, 1e308, -1e308}, 2, 1); !errors.Is(err, ErrNonFinite) {
		t.Errorf("costs whose squares overflow: err = %v, want ErrNonFinite", err)
	}
}

// TestSegmentCosts: the cost table agrees with the two-pass definition
// Σ(y − ȳ)², taken here on y − 1e9 (exact for these values), to 1e-12, on
// costs near 1e9 that vary by units: there the one-pass Σy² − (Σy)²/m loses
// every digit and Welford's update without the shift about 8 of them. The
// table is made in one a larger fit left behind, full of NaN: nothing of it
// may show (Step checks every cell is finite).
func TestSegmentCosts(t *testing.T) {
	ys := []float64{1e9 + 1, 1e9 + 4, 1e9 + 2, 1e9 + 8, 1e9 + 5, 1e9 + 3}
	n := len(ys)
	table := make([]float64, 100)
	for i := range table {
		table[i] = math.NaN()
	}
	cost := segmentCosts(ys, &table)
	if len(cost) != (n+1)*(n+1) {
		t.Fatalf("table of %d cells, want %d", len(cost), (n+1)*(n+1))
	}
	for i, c := range cost {
		if math.IsNaN(c) {
			t.Fatalf("cell %d is NaN: the table kept what was in it", i)
		}
	}
	for i := 0; i < n; i++ {
		for j := i + 1; j <= n; j++ {
			var s float64
			for _, v := range ys[i:j] {
				s += v - 1e9
			}
			mean := s / float64(j-i)
			var want float64
			for _, v := range ys[i:j] {
				want += (v - 1e9 - mean) * (v - 1e9 - mean)
			}
			if got := cost[i*(n+1)+j]; math.Abs(got-want) > 1e-12*math.Max(1, want) {
				t.Errorf("C(%d, %d) = %.15g, want %.15g", i, j, got, want)
			}
		}
	}
}

func TestStepMisusePanics(t *testing.T) {
	for _, tt := range []struct {
		name string
		call func()
	}{
		{"length mismatch", func() { _, _ = Step([]float64{1, 2, 3}, []float64{1, 2}, 2, 1) }},
		{"one level", func() { _, _ = Step([]float64{1, 2, 3}, []float64{1, 2, 3}, 1, 1) }},
		{"empty levels allowed", func() { _, _ = Step([]float64{1, 2, 3}, []float64{1, 2, 3}, 2, 0) }},
	} {
		t.Run(tt.name, func(t *testing.T) {
			defer func() {
				msg, _ := recover().(string)
				if !strings.HasPrefix(msg, "fit: ") {
					t.Fatalf("recovered %q, want a panic starting with \"fit: \"", msg)
				}
			}()
			tt.call()
		})
	}
}
