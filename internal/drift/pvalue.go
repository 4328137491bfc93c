package drift

import (
	"fmt"
	"math"
	"math/bits"
	"math/rand/v2"

	"gonum.org/v1/gonum/stat/distuv"
)

// Method chooses how SupFPValue turns a sup-F statistic into a p-value.
type Method int

const (
	// Bootstrap is the residual bootstrap (the product's default): it holds
	// in finite samples because it simulates the statistic at the sample's
	// own n, k and trimming.
	Bootstrap Method = iota
	// Hansen is Hansen's (1997) response-surface approximation of the
	// asymptotic distribution, as strucchange's sctest(type = "supF").
	Hansen
)

// String returns "bootstrap" or "hansen".
func (m Method) String() string {
	switch m {
	case Bootstrap:
		return "bootstrap"
	case Hansen:
		return "hansen"
	}
	return fmt.Sprintf("Method(%d)", int(m))
}

// Product defaults; doc.go says why.
const (
	DefaultTrim       = 0.15 // share of the periods kept out of each end of the break search
	DefaultReplicates = 999  // bootstrap replicates B; p has resolution 1/(B+1) = 0.001
	DefaultLevel      = 0.05 // significance level of a break
)

// bootstrapStream is the second PCG seed word. Fixing it means a run is
// reproduced by its Seed alone.
const bootstrapStream = 0x636f737464726966 // "costdrif"

// SupFTest is a sup-F test: the FStats sequence and the p-value of its
// supremum by the chosen method.
type SupFTest struct {
	FStatsResult
	Method Method
	// P is the p-value of SupF. For Bootstrap it is (1 + #{b: F*_b ≥ SupF})
	// / (B + 1), so never below 1/(B+1).
	P float64
	// Replicates (B) and Seed of a Bootstrap test; both 0 for Hansen.
	Replicates int
	Seed       uint64
}

// SupFPValue computes FStats(columns, y, intercept, trim) and the p-value of
// its sup-F:
//
//   - Hansen: HansenPValue(SupF, K, Lambda).
//   - Bootstrap: the residual bootstrap under the no-break model. With e the
//     residuals of the no-break least-squares fit (centred first when the
//     model has no intercept, Davison & Hinkley 1997, §6.2.3, from memory),
//     each replicate b draws e*_1..e*_n from e with replacement and computes
//     the sup-F of y* = X·β̂ + e* over the same candidate breaks; p =
//     (1 + #{F*_b ≥ SupF}) / (B + 1). Every RSS in the statistic is
//     unchanged by adding X·β to y (each segment's design spans the rows of
//     X·β in it) and the ratio is unchanged by scaling y, so y* = e* gives
//     the same replicates and the rescaling of residuals some texts apply
//     has no effect. replicates = 0 means DefaultReplicates; the draws come
//     from a PCG generator seeded by (seed, a fixed stream word), so equal
//     inputs and seed give the same p on every platform.
//
// SupFPValue panics on a negative replicates or an unknown method, and as
// FStats does. Errors are those of FStats, and for Hansen ErrNoTable when
// K > 3.
func SupFPValue(columns [][]float64, y []float64, intercept bool, trim float64, method Method, replicates int, seed uint64) (*SupFTest, error) {
	if replicates < 0 {
		panic(fmt.Sprintf("drift: %d bootstrap replicates", replicates))
	}
	if method != Bootstrap && method != Hansen {
		panic(fmt.Sprintf("drift: unknown p-value method %d", int(method)))
	}
	fs, err := FStats(columns, y, intercept, trim)
	if err != nil {
		return nil, err
	}
	t := &SupFTest{FStatsResult: *fs, Method: method}
	switch method {
	case Hansen:
		t.P, err = HansenPValue(fs.SupF, fs.K, fs.Lambda)
		if err != nil {
			return nil, err
		}
	case Bootstrap:
		if replicates == 0 {
			replicates = DefaultReplicates
		}
		t.Replicates, t.Seed = replicates, seed
		t.P, err = bootstrapSupF(columns, y, intercept, fs, replicates, seed)
		if err != nil {
			return nil, err
		}
	}
	return t, nil
}

// HansenPValue returns Hansen's (1997) approximate asymptotic p-value of a
// Wald-scale sup-F statistic x with k coefficients allowed to break and
// trimming parameter lambda (FStatsResult.Lambda), exactly as strucchange's
// pvalue.Fstats(type = "supF"):
//
//	τ      = λ when λ < 1, else 1/(1 + √λ)     (= From/N for symmetric trimming)
//	pp_r   = Pr(χ²_{d_r} > max(0, b0_r + b1_r·x))   with row r of the table (τ_r = 0.51 − 0.02r)
//	p      = Pr(χ²_k > x)                                        when τ = 0.5
//	p      = pp_25                                               when τ ≤ 0.01
//	p      = 100·((0.5 − τ)·pp_1 + (τ − 0.49)·Pr(χ²_k > x))      when τ ≥ 0.49
//	p      = (r + 1 − a)·pp_r + (a − r)·pp_{r+1},  a = 50(0.51 − τ), r = ⌊a⌋   otherwise
//
// strucchange forms 1 − pchisq(...); this uses the χ² upper tail directly,
// so where that difference rounds to 0 or 2.2e-16 this returns the (smaller)
// tail itself. The approximation is asymptotic: in 24–36 periods the F_i
// have n − 2k denominator degrees of freedom and heavier tails than χ²_k,
// so it tends to overstate significance (see the size test).
//
// It panics when k < 1 and returns an error wrapping ErrNoTable when k > 3
// (the rows embedded are k = 1..3).
func HansenPValue(x float64, k int, lambda float64) (float64, error) {
	if k < 1 {
		panic(fmt.Sprintf("drift: HansenPValue with %d coefficients", k))
	}
	if k > len(hansenSupF) {
		return 0, fmt.Errorf("hansen p-value: %d coefficients, table has 1..%d: %w", k, len(hansenSupF), ErrNoTable)
	}
	tau := lambda
	if lambda >= 1 {
		tau = 1 / (1 + math.Sqrt(lambda))
	}
	chi := func(df, v float64) float64 {
		if v <= 0 {
			return 1
		}
		return distuv.ChiSquared{K: df}.Survival(v)
	}
	pp := func(r int) float64 { // r is 1-based, as in the R code
		row := hansenSupF[k-1][r-1]
		return chi(row[2], row[0]+row[1]*x)
	}
	switch {
	case tau == 0.5:
		return chi(float64(k), x), nil
	case tau <= 0.01:
		return pp(25), nil
	case tau >= 0.49:
		return ((0.5-tau)*pp(1) + (tau-0.49)*chi(float64(k), x)) * 100, nil
	}
	a := (0.51 - tau) * 50
	r := math.Floor(a)
	ri := int(r)
	return (r+1-a)*pp(ri) + (a-r)*pp(ri+1), nil
}

// bootstrapSupF is the residual bootstrap of SupFPValue for the observed
// statistics fs.
func bootstrapSupF(columns [][]float64, y []float64, intercept bool, fs *FStatsResult, replicates int, seed uint64) (float64, error) {
	return bootstrapSupFUntil(columns, y, intercept, fs, replicates, seed, 1)
}

// bootstrapSupFUntil is bootstrapSupF that stops as soon as the p-value is
// certain to reach stop (the replicates still to come can only raise it):
// it then returns a p-value of at least stop, not the exact one.
func bootstrapSupFUntil(columns [][]float64, y []float64, intercept bool, fs *FStatsResult, replicates int, seed uint64, stop float64) (float64, error) {
	reg, err := fitModel(columns, y, intercept, 0, len(y))
	if err != nil {
		return 0, fmt.Errorf("bootstrap: no-break fit: %w", err)
	}
	n := len(y)
	e := append([]float64(nil), reg.Residuals...)
	if !intercept {
		var m float64
		for _, v := range e {
			m += v
		}
		m /= float64(n)
		for i := range e {
			e[i] -= m
		}
	}
	d := newDesign(columns, intercept, n)
	src := rand.NewPCG(seed, bootstrapStream)
	ystar := make([]float64, n)
	exceed := 0
	for b := 0; b < replicates; b++ {
		for i := range ystar {
			ystar[i] = e[drawIndex(src, n)]
		}
		if d.supF(ystar, fs.From, fs.To) >= fs.SupF {
			exceed++
			if p := float64(exceed+1) / float64(replicates+1); p >= stop {
				return p, nil
			}
		}
	}
	return float64(exceed+1) / float64(replicates+1), nil
}

// SupFSignificant runs the residual bootstrap of SupFPValue only as far as
// needed to tell whether the sup-F p-value is below level: a break that is
// clearly not significant is settled after a few replicates. The p-value is
// exact when below level, and a lower bound (at least level) otherwise.
func SupFSignificant(columns [][]float64, y []float64, intercept bool, trim float64, replicates int, seed uint64, level float64) (p float64, fs *FStatsResult, err error) {
	fs, err = FStats(columns, y, intercept, trim)
	if err != nil {
		return 1, nil, err
	}
	p, err = bootstrapSupFUntil(columns, y, intercept, fs, replicates, seed, level)
	return p, fs, err
}

// drawIndex returns a uniform integer in [0, n) from src by Lemire's
// multiply-and-reject method ("Fast random integer generation in an
// interval", ACM TOMACS 29(1), 2019, from memory). It is written out here,
// rather than taken from math/rand/v2's IntN, so that the sequence drawn for
// a seed depends only on the PCG generator, whose output the standard
// library documents.
func drawIndex(src *rand.PCG, n int) int {
	bound := uint64(n)
	hi, lo := bits.Mul64(src.Uint64(), bound)
	if lo < bound {
		threshold := -bound % bound
		for lo < threshold {
			hi, lo = bits.Mul64(src.Uint64(), bound)
		}
	}
	return int(hi)
}

// design holds the rows of X (intercept column first when present) for the
// row-updating sup-F of the bootstrap, with buffers reused across replicates.
type design struct {
	n, k     int
	rows     []float64 // n×k, row-major
	fwd, bwd []float64 // fwd[i] = RSS of rows 0..i−1, bwd[i] = RSS of rows i..n−1
	qr       rowQR
	// The Givens rotations of the forward and backward passes, row by row
	// and column by column (n×k each), computed by the first supF: they
	// depend on X alone, and every replicate of the bootstrap has the same
	// X, so a replicate only applies them to its y.
	fwdRot, bwdRot []givens
}

// givens is one rotation of rowQR.add: y' = c·y − s·z, z' = c·z + s·y;
// none when the row's entry was already 0.
type givens struct {
	c, s float64
	none bool
}

func newDesign(columns [][]float64, intercept bool, n int) *design {
	k := len(columns)
	first := 0
	if intercept {
		k++
		first = 1
	}
	d := &design{n: n, k: k, rows: make([]float64, n*k), fwd: make([]float64, n+1), bwd: make([]float64, n+1)}
	for i := 0; i < n; i++ {
		if intercept {
			d.rows[i*k] = 1
		}
		for j, c := range columns {
			d.rows[i*k+first+j] = c[i]
		}
	}
	d.qr = rowQR{k: k, r: make([]float64, k*k), z: make([]float64, k), row: make([]float64, k)}
	return d
}

// supF returns max over i in [from, to] of the Wald-scale F_i of y, from
// the RSS of every leading and trailing segment obtained in one forward and
// one backward pass of Givens row updating (see rowQR). As F_i falls as
// RSS1_i + RSS2_i rises, the supremum is the F of the smallest split RSS.
// The observed FStats are computed segment by segment with internal/fit;
// the tests check that both agree.
//
// The first call rotates the rows in with rowQR.add and records the
// rotations; later calls apply the recorded rotations to y alone, which
// gives the same numbers bit for bit, k multiply-adds a row instead of k²
// and k square roots.
func (d *design) supF(y []float64, from, to int) float64 {
	n, k := d.n, d.k
	if d.fwdRot == nil {
		d.fwdRot, d.bwdRot = make([]givens, n*k), make([]givens, n*k)
		d.qr.reset()
		for i := 0; i < n; i++ {
			d.qr.addRecording(d.rows[i*k:(i+1)*k], y[i], d.fwdRot[i*k:(i+1)*k])
			d.fwd[i+1] = d.qr.rss
		}
		d.qr.reset()
		d.bwd[n] = 0
		for i := n - 1; i >= 0; i-- {
			d.qr.addRecording(d.rows[i*k:(i+1)*k], y[i], d.bwdRot[i*k:(i+1)*k])
			d.bwd[i] = d.qr.rss
		}
	} else {
		z := d.qr.z
		clear(z)
		rss := 0.0
		for i := 0; i < n; i++ {
			rss += rotateIn(d.fwdRot[i*k:(i+1)*k], z, y[i])
			d.fwd[i+1] = rss
		}
		clear(z)
		rss = 0
		d.bwd[n] = 0
		for i := n - 1; i >= 0; i-- {
			rss += rotateIn(d.bwdRot[i*k:(i+1)*k], z, y[i])
			d.bwd[i] = rss
		}
	}
	best := math.Inf(1)
	for i := from; i <= to; i++ {
		best = math.Min(best, d.fwd[i]+d.bwd[i])
	}
	return chowWald(d.fwd[n], best, float64(n-2*k))
}

// rowQR keeps the triangular factor R and z = Qᵀy of the rows added so far,
// and their residual sum of squares. Adding a row (x, y) rotates it into
// [R z] with one Givens rotation per column (Golub & Van Loan, Matrix
// Computations, §12.5 "updating matrix factorizations", from memory); what
// is left of y is that row's recursive residual w (up to sign), and RSS
// grows by w², the identity RSS_m = RSS_{m−1} + w_m² of recursive
// least squares. The first k rows of a full-rank design fill R and leave
// RSS at 0. Orthogonal rotations keep this as accurate as a fresh QR fit.
type rowQR struct {
	k    int
	r, z []float64
	row  []float64
	rss  float64
}

func (q *rowQR) reset() {
	clear(q.r)
	clear(q.z)
	q.rss = 0
}

func (q *rowQR) add(x []float64, y float64) { q.addRecording(x, y, nil) }

// addRecording is add, keeping each column's rotation in rot (k of them)
// unless rot is nil.
func (q *rowQR) addRecording(x []float64, y float64, rot []givens) {
	k := q.k
	row := q.row
	copy(row, x)
	for j := 0; j < k; j++ {
		b := row[j]
		if b == 0 {
			if rot != nil {
				rot[j] = givens{none: true}
			}
			continue
		}
		a := q.r[j*k+j]
		rho := math.Hypot(a, b)
		c, s := a/rho, b/rho
		if rot != nil {
			rot[j] = givens{c: c, s: s}
		}
		q.r[j*k+j] = rho
		for m := j + 1; m < k; m++ {
			rm, xm := q.r[j*k+m], row[m]
			q.r[j*k+m] = c*rm + s*xm
			row[m] = c*xm - s*rm
		}
		zj := q.z[j]
		q.z[j] = c*zj + s*y
		y = c*y - s*zj
	}
	q.rss += y * y
}

// rotateIn applies one row's recorded rotations to its y and to z, as
// addRecording did, and returns what the row adds to the RSS.
func rotateIn(rot []givens, z []float64, y float64) float64 {
	for j, g := range rot {
		if g.none {
			continue
		}
		zj := z[j]
		z[j] = g.c*zj + g.s*y
		y = g.c*y - g.s*zj
	}
	return y * y
}
