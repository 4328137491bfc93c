package fit

import (
	"fmt"
	"math"
	"slices"
	"sync"
)

// StepLevel is one level of a step cost: the observations whose activity
// lies in [From, To] and the mean of their costs.
type StepLevel struct {
	From, To float64 // smallest and largest activity in the group
	Mean     float64 // the fitted level, the mean cost of the group
	N        int     // observations in the group
}

// StepModel is the least-squares step function with len(Levels) levels.
type StepModel struct {
	Levels []StepLevel // in increasing activity; Levels[g].To < Levels[g+1].From
	// RSS = Σ_g Σ_{i in g} (y_i − ȳ_g)², the smallest over every admissible
	// partition into len(Levels) groups.
	RSS float64
	// AIC, AICc and BIC use Regression's Gaussian likelihood convention,
	//
	//	logL = −N/2 · (ln(2π) + 1 + ln(RSS/N)),   m = 2k,
	//	AIC  = −2·logL + 2m,   AICc = AIC + 2m(m+1)/(N − m − 1),   BIC = −2·logL + ln(N)·m,
	//
	// counting for k levels the k means, the k − 1 breakpoints (each chosen
	// from the data, so each costs a degree of freedom) and the error
	// variance. AICc is +Inf when N − m − 1 <= 0; a perfect fit gives −Inf.
	// A straight line (Regression, m = 3) and a two-level step (m = 4) are
	// compared on the same scale.
	AIC, AICc, BIC float64
	// Residuals holds y_i minus the level of observation i's group, in the
	// caller's order.
	Residuals []float64
}

// StepFit holds the best step function for each number of levels from 2 up
// to the largest that an admissible partition allows (at most maxLevels).
type StepFit struct {
	Models []StepModel // Models[i] has i + 2 levels
	Best   int         // index into Models of the lowest AICc (fewest levels on a tie)
}

// Step fits a piecewise-constant cost in the activity x,
//
//	y_i = μ_g + e_i   for x_i in group g,   g = 1..k,
//
// for every k from 2 to maxLevels. Observations are sorted by x and split
// into k contiguous groups; observations with equal x always fall in the same
// group, and every group holds at least minPerLevel observations. For each k
// the partition minimising RSS is found exactly by dynamic programming over
// the sorted observations (Bellman 1961, "On the approximation of curves by
// line segments using dynamic programming", CACM 4, from memory; the scheme
// Bai & Perron 2003 use for breaks in a mean):
//
//	C(i, j)    = Σ_{i<=t<j} (y_t − ȳ_{i..j})²                (Welford's update on y − y_i, per start i)
//	D_1(j)     = C(0, j)
//	D_k(j)     = min over admissible i of D_{k−1}(i) + C(i, j)
//
// where i is admissible when x_(i−1) < x_(i) (no tie split), i >= (k−1)·minPerLevel
// and j − i >= minPerLevel. The cost table takes O(N²) time and memory, the
// recursion O(N²·maxLevels). On equal sums the earliest breakpoint wins.
//
// Step panics when len(x) != len(y), maxLevels < 2 or minPerLevel < 1. It
// returns an error wrapping ErrNonFinite for NaN or ±Inf input,
// ErrTooFewObservations when N < 2·minPerLevel, and ErrIllConditioned when
// ties in x leave no admissible split into two groups (all x equal, say).
// Numbers of levels beyond the largest admissible one are left out of Models.
func Step(x, y []float64, maxLevels, minPerLevel int) (*StepFit, error) {
	n := len(x)
	if len(y) != n {
		panic(fmt.Sprintf("fit: Step x has %d values, y has %d", n, len(y)))
	}
	if maxLevels < 2 || minPerLevel < 1 {
		panic(fmt.Sprintf("fit: Step(maxLevels %d, minPerLevel %d): need maxLevels >= 2 and minPerLevel >= 1",
			maxLevels, minPerLevel))
	}
	if err := checkFinite(x, "x"); err != nil {
		return nil, fmt.Errorf("step: %w", err)
	}
	if err := checkFinite(y, "y"); err != nil {
		return nil, fmt.Errorf("step: %w", err)
	}
	if n < 2*minPerLevel {
		return nil, fmt.Errorf("step: %d observations for 2 levels of at least %d: %w", n, minPerLevel, ErrTooFewObservations)
	}

	order := sortedOrder(x)
	xs := make([]float64, n)
	ys := make([]float64, n)
	for r, i := range order {
		xs[r], ys[r] = x[i], y[i]
	}
	table := costTables.Get().(*[]float64)
	defer costTables.Put(table)
	cost := segmentCosts(ys, table)
	for _, c := range cost {
		if !isFinite(c) {
			return nil, fmt.Errorf("step: sum of squares overflows: %w", ErrNonFinite)
		}
	}
	// cut[i]: a group may start at sorted position i (0 < i < n).
	cut := make([]bool, n)
	for i := 1; i < n; i++ {
		cut[i] = xs[i-1] < xs[i]
	}

	// best[k][j] = D_{k+1}(j), from[k][j] the start of its last group.
	stride := n + 1
	best := make([]float64, maxLevels*stride)
	from := make([]int, maxLevels*stride)
	for i := range best {
		best[i] = math.Inf(1)
	}
	for j := minPerLevel; j <= n; j++ {
		best[j] = cost[j]
	}
	fit := &StepFit{}
	for k := 2; k <= maxLevels; k++ {
		prev, cur := best[(k-2)*stride:(k-1)*stride], best[(k-1)*stride:k*stride]
		start := from[(k-1)*stride : k*stride]
		for j := k * minPerLevel; j <= n; j++ {
			for i := (k - 1) * minPerLevel; i <= j-minPerLevel; i++ {
				if !cut[i] || math.IsInf(prev[i], 1) {
					continue
				}
				if v := prev[i] + cost[i*stride+j]; v < cur[j] {
					cur[j], start[j] = v, i
				}
			}
		}
		if math.IsInf(cur[n], 1) {
			break // no admissible partition into k groups, nor into more
		}
		bounds := make([]int, k+1) // group g is sorted positions bounds[g]..bounds[g+1]−1
		bounds[k] = n
		for g, j := k-1, n; g > 0; g-- {
			j = from[g*stride+j]
			bounds[g] = j
		}
		fit.Models = append(fit.Models, stepModel(xs, ys, order, bounds, cur[n]))
	}
	if len(fit.Models) == 0 {
		return nil, fmt.Errorf("step: ties in activity leave no split into 2 groups of at least %d: %w", minPerLevel, ErrIllConditioned)
	}
	for m := range fit.Models {
		if fit.Models[m].AICc < fit.Models[fit.Best].AICc {
			fit.Best = m
		}
	}
	return fit, nil
}

// sortedOrder returns the indices of x in increasing x, equal x in index order.
func sortedOrder(x []float64) []int {
	order := make([]int, len(x))
	for i := range order {
		order[i] = i
	}
	slices.SortStableFunc(order, func(a, b int) int {
		switch {
		case x[a] < x[b]:
			return -1
		case x[b] < x[a]:
			return 1
		}
		return 0
	})
	return order
}

// segmentCosts returns the (n+1)×(n+1) row-major table C with C[i][j] the sum
// of squared deviations of ys[i:j] from their mean, for i < j. Each row is
// built by Welford's running update (Welford 1962, Technometrics 4, from
// memory) on the values less the row's first, v = y − y_i:
//
//	d = v − mean,  mean += d/m,  C += d·(v − mean).
//
// Why the shift: Welford alone loses about log10(|ȳ|/σ) digits to the
// rounding of the running mean, 8 of them for costs near 1e9 varying by
// units; after subtracting y_i (exact for values within a factor 2 of each
// other) only the spread within the segment is left.
//
// The table is made in *table, grown when it is too small: a step fit of
// 36 periods needs 11 KB, and a portfolio's analysis makes tens of
// thousands of them (costTables).
func segmentCosts(ys []float64, table *[]float64) []float64 {
	n := len(ys)
	stride := n + 1
	if cap(*table) < stride*stride {
		*table = make([]float64, stride*stride)
	}
	cost := (*table)[:stride*stride]
	clear(cost)
	for i := 0; i < n; i++ {
		var mean, c float64
		for j := i; j < n; j++ {
			v := ys[j] - ys[i]
			d := v - mean
			mean += d / float64(j-i+1)
			c += d * (v - mean)
			cost[i*stride+j+1] = c
		}
	}
	return cost
}

// costTables are the tables of segmentCosts, reused from one step fit to
// the next; Step holds one only while it runs.
var costTables = sync.Pool{New: func() any { return new([]float64) }}

// stepModel builds the model of the partition bounds of the sorted data.
func stepModel(xs, ys []float64, order, bounds []int, rss float64) StepModel {
	k := len(bounds) - 1
	n := len(xs)
	m := StepModel{Levels: make([]StepLevel, k), RSS: rss, Residuals: make([]float64, n)}
	for g := 0; g < k; g++ {
		lo, hi := bounds[g], bounds[g+1]
		level := mean(ys[lo:hi])
		m.Levels[g] = StepLevel{From: xs[lo], To: xs[hi-1], Mean: level, N: hi - lo}
		for r := lo; r < hi; r++ {
			i := order[r]
			m.Residuals[i] = ys[r] - level
		}
	}
	m.AIC, m.AICc, m.BIC = gaussianCriteria(rss, n, 2*k)
	return m
}

// gaussianCriteria returns AIC, AICc and BIC for a Gaussian model with
// residual sum of squares rss, n observations and params parameters
// (variance included), in the convention of Regression:
//
//	−2·logL = N·(ln(2π) + 1 + ln(RSS/N)),  AIC = −2·logL + 2m,
//	AICc = AIC + 2m(m+1)/(N − m − 1) (+Inf when N − m − 1 <= 0),  BIC = −2·logL + ln(N)·m.
func gaussianCriteria(rss float64, n, params int) (aic, aicc, bic float64) {
	nf, m := float64(n), float64(params)
	minus2LogL := nf * (math.Log(2*math.Pi) + 1 + math.Log(rss/nf))
	aic = minus2LogL + 2*m
	bic = minus2LogL + math.Log(nf)*m
	if n-params-1 > 0 {
		aicc = aic + 2*m*(m+1)/(nf-m-1)
	} else {
		aicc = math.Inf(1)
	}
	return aic, aicc, bic
}
