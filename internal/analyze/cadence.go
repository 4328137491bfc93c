package analyze

import (
	"fmt"
	"math"
	"sort"

	"github.com/costdrift/costdrift/internal/calendar"
	"github.com/costdrift/costdrift/internal/costdrift"
	"github.com/costdrift/costdrift/internal/fit"
	"github.com/costdrift/costdrift/internal/present"
)

// The rule that tells a cost posted every few periods (README, "Costs
// posted quarterly or yearly, and accruals"). A cost is posted at a cadence
// of k periods (k of costdrift.Cadences: 3, 6, 12) when, over the window,
//
//   - every known period at one position modulo k holds a posting: a cost of
//     the same sign as the others and at least CadencePostingShare of their
//     median, which must be above zero;
//   - every other known period is near zero: at most CadenceZeroShare of
//     that median, either way (a rounding difference, a cent);
//   - there are at least CadenceMinPostings postings, CadenceMinYearly for a
//     yearly cost: two postings in a row a quarter apart are too few to tell
//     a quarterly cost from two one-off bills, while two a year apart in the
//     same month are already a pattern an accountant would budget on;
//   - every period of the window has a position in a year of twelve periods
//     (calendar.PositionInYear): a week has none.
//
// The postings' amounts may vary: recognising the cadence asks only where
// the postings are, and their spread then decides fixed or unexplained, as
// a cost without a driver's spread does (FixedMaxCV). A monthly cost that
// missed one month is posted in the periods between, so it is never taken
// for a cadence.
const (
	CadenceZeroShare    = 0.02
	CadencePostingShare = 0.25
	CadenceMinPostings  = 3
	CadenceMinYearly    = 2
)

// cadenceFound is a cadence found in a window: its length, the window
// positions of its postings, and their amounts.
type cadenceFound struct {
	cadence  costdrift.Cadence
	index    []int
	postings []float64
}

// findCadence looks for the first cadence, shortest first, that the cost
// series (NaN where a period is unknown) follows over the window's periods.
// At most one can fit: a quarterly cost posts in the periods between a
// half-yearly cost's postings, and a half-yearly one leaves a quarterly
// posting period empty.
func findCadence(periods []string, cost []float64) (cadenceFound, bool) {
	// Most costs are posted every period: a cadence of 3 or more leaves at
	// most one period in three with a posting, so those are passed over
	// before anything is allocated. A period near zero is at most
	// CadenceZeroShare of the median posting, so at most that share of the
	// largest cost: the periods above it are postings.
	largest := 0.0
	for _, v := range cost {
		if math.Abs(v) > largest {
			largest = math.Abs(v)
		}
	}
	above := 0
	for _, v := range cost {
		if math.Abs(v) > CadenceZeroShare*largest {
			above++
		}
	}
	if above > (len(cost)+2)/3 {
		return cadenceFound{}, false
	}
	positions := make([]int, len(periods))
	for i, p := range periods {
		pos, ok := calendar.PositionInYear(p)
		if !ok {
			return cadenceFound{}, false
		}
		positions[i] = pos
	}
	for _, k := range costdrift.Cadences {
		need := CadenceMinPostings
		if k == 12 {
			need = CadenceMinYearly
		}
		for r := range k {
			var on []int
			for i := r; i < len(cost); i += k {
				if !math.IsNaN(cost[i]) {
					on = append(on, i)
				}
			}
			if len(on) < need {
				continue
			}
			amounts := make([]float64, len(on))
			for j, i := range on {
				amounts[j] = cost[i]
			}
			median := medianOf(amounts)
			if !(median > 0) || !followsCadence(cost, k, r, median) {
				continue
			}
			return cadenceFound{
				cadence:  costdrift.Cadence{Every: k, Phase: positions[r] % k},
				index:    on,
				postings: amounts,
			}, true
		}
	}
	return cadenceFound{}, false
}

// followsCadence checks the postings at window positions ≡ r (mod k) and
// the near-zero periods between them against their median posting.
func followsCadence(cost []float64, k, r int, median float64) bool {
	for i, v := range cost {
		switch {
		case math.IsNaN(v):
		case i%k == r:
			if v < CadencePostingShare*median {
				return false
			}
		default:
			if math.Abs(v) > CadenceZeroShare*median {
				return false
			}
		}
	}
	return true
}

func medianOf(v []float64) float64 {
	s := append([]float64(nil), v...)
	sort.Float64s(s)
	n := len(s)
	if n%2 == 1 {
		return s[n/2]
	}
	return (s[n/2-1] + s[n/2]) / 2
}

// classifyCadence sets the behaviour of a cost posted at a cadence. Its
// formula is the mean posting spread over the periods it covers — fixed
// per period = mean posting / k, the prediction terms those of the mean
// of the postings divided by k — so that every reader of a formula per
// period (totals, break-even, the alert rules) reads it as it reads any
// other; a budget puts k times it in the posting periods (internal/budget).
// No driver is tried: a cost that lands in one period of k follows the
// calendar, not the activity of the periods it lands in. The class is fixed
// when the postings vary at most FixedMaxCV around their mean, else
// unexplained, as for a cost without a driver.
func classifyCadence(p *costdrift.Panel, res *Result, found cadenceFound) {
	b := &res.Behaviour
	k := found.cadence.Every
	res.y, res.index, res.x = found.postings, found.index, nil
	c := found.cadence
	b.Cadence = &c
	b.R2 = math.NaN()
	b.Driver, b.Unit, b.Lag = "", "", 0
	perPeriod := make([]float64, len(found.postings))
	for i, v := range found.postings {
		perPeriod[i] = v / float64(k)
	}
	b.FixedPerPeriod = meanOf(perPeriod)
	b.Prediction = constantTerms(perPeriod)
	res.Fits[0].Chosen = true
	diag := &costdrift.Diagnostics{DurbinWatson: math.NaN(), RobustIntercept: math.NaN(), RobustSlope: math.NaN()}
	diag.Models = append(diag.Models, costdrift.ModelSummary{Model: costdrift.ModelConstant, N: res.Fits[0].N,
		AICc: res.Fits[0].AICc, PRESS: res.Fits[0].PRESS})
	b.Diagnostics = diag
	level := meanOf(found.postings)
	spread := postingSpread(found.postings)
	b.Class = costdrift.Fixed
	verdict := fmt.Sprintf("at most %.0f %%", 100*FixedMaxCV)
	if spread > FixedMaxCV {
		b.Class = costdrift.Unexplained
		verdict = fmt.Sprintf("more than %.0f %%; the amount shown is the mean", 100*FixedMaxCV)
	}
	b.Reason = fmt.Sprintf("posted once a %s (%s) and in no other period: %d postings of %s on average, varying %.1f %% (%s); %s a %s, %s a period spread evenly",
		c.Noun(), c.PositionsText(p.Periods[0]), len(found.postings), present.Amount(level), 100*spread, verdict,
		present.Amount(level), c.Noun(), present.Amount(level/float64(k)))
}

// postingSpread is the postings' coefficient of variation (sample standard
// deviation over the mean); 0 for a single posting.
func postingSpread(v []float64) float64 {
	if len(v) < 2 {
		return 0
	}
	m := meanOf(v)
	ss := 0.0
	for _, x := range v {
		ss += (x - m) * (x - m)
	}
	return math.Sqrt(ss/float64(len(v)-1)) / math.Abs(m)
}

// cadenceSpending checks the newest postings among the window's newest
// SpendingPeriods periods against the 95 % prediction interval of the
// postings before them (their mean, README, The method): a premium that
// rose is seen at its first higher posting. A period between postings is
// not checked: a posting there would have ended the cadence. At least two
// earlier postings are needed for an interval.
func cadenceSpending(p *costdrift.Panel, res *Result) {
	b := &res.Behaviour
	b.Spending = nil
	newest := len(p.Periods) - SpendingPeriods
	for m, i := range res.index {
		if i < newest || m < 2 {
			continue
		}
		r, err := fit.Constant(res.y[:m])
		if err != nil {
			continue
		}
		low, high := r.PredictionInterval(nil, 0.95)
		expected, _ := r.Predict(nil)
		b.Spending = append(b.Spending, costdrift.SpendingCheck{Period: p.Periods[i], Actual: res.y[m], Expected: expected, Low: low, High: high})
	}
}

// cadenceBreak tests the postings of a cost posted at a cadence for a
// change of their level: the zeros between postings are the pattern, not
// a change, so the test runs on the postings alone as their own series
// (the sup-F of findBreak with the constant model), when there are enough
// of them for a level on each side (testable). With a break, the formula
// is the mean posting since, its spread pooled over both sides (the two
// levels are a one-way layout whose residual variance is common practice
// to pool), so that a change found two postings ago still has a
// prediction interval.
func cadenceBreak(p *costdrift.Panel, obj *costdrift.ObjectSeries, res Result, s Settings) Result {
	res.BreakTested = testable(res)
	if !res.BreakTested {
		res.Behaviour.Reason += fmt.Sprintf("; %d postings are too few to test them for a change (at least %d)", len(res.y), 2*StepMinPerLevel+2)
		return res
	}
	split, stat, pValue, test, ok := findBreak(res, s, obj.Object)
	if !ok {
		return res
	}
	whole := res
	k := float64(res.Behaviour.Cadence.Every)
	before, after := res.y[:split], res.y[split:]
	brk := &costdrift.Break{
		Period: p.Periods[res.index[split]], LastBefore: p.Periods[res.index[split-1]], WindowFrom: res.Behaviour.Since,
		Test: test, Statistic: stat, P: pValue, Replicates: s.Replicates,
		FixedBefore: meanOf(before) / k, FixedAfter: meanOf(after) / k,
		Periods: len(p.Periods) - res.index[split],
	}
	brk.LevelBefore = brk.FixedBefore
	scaled := make([]float64, len(before))
	for i, v := range before {
		scaled[i] = v / k
	}
	brk.PredictionBefore = constantTerms(scaled)

	ss := 0.0
	for _, side := range [][]float64{before, after} {
		m := meanOf(side)
		for _, v := range side {
			ss += (v - m) * (v - m)
		}
	}
	df := len(res.y) - 2
	pooled := math.Sqrt(ss/float64(df)) / k
	b := &res.Behaviour
	b.Break = brk
	b.Since = brk.Period
	b.N = brk.Periods
	b.FixedPerPeriod = brk.FixedAfter
	b.MeanCost = meanKnown(obj.Cost[res.index[split]:])
	b.Prediction = &costdrift.PredictionTerms{Intercept: true, Coef: []float64{brk.FixedAfter},
		Cov: []float64{1 / float64(len(after))}, S: pooled, N: len(after), DF: df}
	res.y, res.index = after, res.index[split:]
	cadenceSpending(p, &res)
	c := *b.Cadence
	level := meanOf(after)
	b.Reason = fmt.Sprintf("since %s (break in the postings: %s): posted once a %s (%s), %d postings since of %s on average (%s before); %s a %s, %s a period spread evenly",
		brk.Period, breakText(brk, s), c.Noun(), c.PositionsText(brk.Period), len(after), present.Amount(level),
		present.Amount(meanOf(before)), present.Amount(level), c.Noun(), present.Amount(level/k))
	whole.BreakTested = true
	res.Unbroken = &whole
	return res
}

// meanKnown is the mean of the values that are not NaN (a period the whole
// ledger is silent in is unknown, not zero).
func meanKnown(v []float64) float64 {
	sum, n := 0.0, 0
	for _, x := range v {
		if !math.IsNaN(x) {
			sum += x
			n++
		}
	}
	return sum / float64(n)
}
