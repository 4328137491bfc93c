package demo

import (
	"fmt"
	"hash/fnv"
	"math"
	"math/rand/v2"
	"slices"
	"time"
)

// Company is the invented company the demo data set describes.
const Company = "Quillfeather Frames"

// Currency is the functional currency of every amount in the data set.
const Currency = "EUR"

// DefaultSeed is the seed of the shipped demo. Any seed gives a data set of
// the same design; this one was picked because its draws are typical of the
// design rather than extreme: the shipments–frames correlation is 0.86, the
// median over 400 consecutive seeds, and every supervision level holds at
// least five months. The tests check both for this seed.
const DefaultSeed uint64 = 20260705

// The written periods are fixed, not relative to today, so the demo never
// changes with the date it is run on.
const (
	firstYear   = 2023
	firstMonth  = time.July
	periodCount = 36 // 2023-07 .. 2026-06
)

// Cost centres of the workshop.
const (
	welding  = "WELD"
	painting = "PAINT"
	assembly = "ASSY"
)

// Driver names as they appear in activity.csv.
const (
	driverFrames       = "frames_built"
	driverShipments    = "shipments"
	driverOrders       = "orders"
	driverMachineHours = "machine_hours"
	driverLabourHours  = "labour_hours"
	driverPriceIndex   = "price_index"
)

// Prices in the invented company rise 3 % a year. The price index is an
// activity series of its own, company-wide, rebased so that the newest
// period, 2026-06, is 100:
//
//	price_index_t = round(100 · 1.03^((t − 35)/12), 2)    (t = 0 at 2023-07)
//
// Every cost but those fixed by contract (rent, the spray booth lease)
// follows it: the designed amounts of Expectations are at prices of
// 2026-06, and period t's cost is the design times price_index_t / 100.
// The demo's config names the index as its deflator and exempts the
// contracts, so that the analysis, restating each cost at 2026-06's prices,
// finds the designed formulas again.
const annualInflation = 1.03

// Deflator is the demo's price index series (analysis.deflator), and
// DeflatorExempt the accounts whose costs are fixed by contract
// (analysis.deflator_exempt): rent and the lease.
const Deflator = driverPriceIndex

// DeflatorExempt returns the accounts exempt from restating; a new slice on
// every call.
func DeflatorExempt() []string { return []string{"6100", "6110"} }

// Behaviour classes as written in Expectation.Class.
const (
	classFixed       = "fixed"
	classVariable    = "variable"
	classMixed       = "mixed"
	classStep        = "step"
	classUnexplained = "unexplained"
)

// Step is one level of a step-fixed cost: Level applies while the driver is
// at least From and below the From of the next step.
type Step struct {
	From  float64
	Level float64
}

// Expectation is the designed behaviour of one cost object (an expense
// account in one cost centre), used by ground-truth tests and printed by the
// demo. Before any drift the designed monthly cost in period t is
//
//	fixed:       cost_t = Fixed
//	variable:    cost_t = Rate · driver_{t−Lag} · (1 + Noise·z_t)
//	mixed:       cost_t = (Fixed + Rate · driver_{t−Lag}) · (1 + Noise·z_t)
//	step:        cost_t = Level(driver_{t−Lag}) · (1 + Noise·z_t), Level from Steps
//	unexplained: cost_t = Fixed · exp(σ·z_t − σ²/2), σ² = ln(1 + Noise²)
//
// where z_t is a standard normal draw clipped to [−3, 3], so every cost stays
// positive, and the unexplained spend has mean close to Fixed and coefficient of
// variation Noise. From DriftFrom on, DriftFixed and DriftRate replace Fixed
// and Rate. Rent (6100) is exact except for one month per cost centre that
// carries a service-charge true-up of 0.2–1 % above Fixed. A cost posted
// every Every months (insurance, 6700) is Every · Fixed · (1 + Noise·z_t) in
// the calendar months divisible by Every (March, June, September and
// December for a quarter) and nothing in the others: Fixed is its amount a
// month spread evenly.
type Expectation struct {
	Account, AccountName, CostCenter string
	Class                            string // fixed | variable | mixed | step | unexplained
	Driver                           string // "" for fixed and unexplained
	// DriverCostCenter is the cost centre of the driver row in activity.csv:
	// "" for the company-wide drivers (frames_built, shipments, orders), else
	// the object's own cost centre (machine_hours, labour_hours).
	DriverCostCenter string
	Lag              int    // periods the driver leads the cost
	Drift            string // "" when none; else a sentence saying what changes when and why
	Fixed, Rate      float64
	// DriftFrom is the first period (YYYY-MM) of the drifted formula
	// cost_t = DriftFixed + DriftRate·driver_{t−Lag}; "" when there is no drift.
	DriftFrom             string
	DriftFixed, DriftRate float64
	Steps                 []Step  // step only, ascending From; Steps[0].Level == Fixed
	Noise                 float64 // coefficient of variation of the designed noise; 0 for exact amounts
	// Every is the months from one posting to the next of a cost posted
	// once a quarter, half-year or year; 0 for a cost posted every month.
	Every int
	// Inflates: the cost follows the price index, so the amounts above are
	// at prices of 2026-06 and period t's cost is multiplied by
	// price_index_t / 100; false for the costs fixed by contract.
	Inflates bool
}

// account describes one line of the chart of accounts.
type account struct {
	number, name, kind, group string
}

// chart is the chart of accounts written to accounts.csv, in account order.
var chart = []account{
	{"1200", "Bank", "asset", "cash"},
	{"2000", "Accounts payable", "liability", "payables"},
	{"2100", "Accrued expenses", "liability", "accruals"},
	{"5100", "Tubing", "expense", "materials"},
	{"5200", "Paint & coatings", "expense", "materials"},
	{"6100", "Rent", "expense", "occupancy"},
	{"6110", "Equipment lease", "expense", "equipment"},
	{"6200", "Power", "expense", "utilities"},
	{"6300", "Supervision", "expense", "personnel"},
	{"6400", "Freight out", "expense", "logistics"},
	{"6420", "Packaging", "expense", "logistics"},
	{"6500", "Maintenance", "expense", "maintenance"},
	{"6600", "Marketing", "expense", "selling"},
	{"6700", "Insurance", "expense", "insurance"},
}

// Accounts the ledger credits: supplier invoices go to payables, transfers
// (rent, lease, payroll, the insurance premium) straight to the bank; an
// accrual is credited to accrued expenses.
const (
	accountBank     = "1200"
	accountPayables = "2000"
	accountAccrued  = "2100"
)

func accountName(number string) string {
	for _, a := range chart {
		if a.number == number {
			return a.name
		}
	}
	panic("demo: account " + number + " is not in the chart")
}

// Expectations returns the designed behaviour of every expense object the
// ledger carries, ordered by account and cost centre. The slice is new on
// every call; callers may change it.
func Expectations() []Expectation {
	e := func(acct, cc, class, driver, driverCC string, lag int, fixed, rate, noise float64) Expectation {
		return Expectation{
			Account: acct, AccountName: accountName(acct), CostCenter: cc,
			Class: class, Driver: driver, DriverCostCenter: driverCC, Lag: lag,
			Fixed: fixed, Rate: rate, Noise: noise,
		}
	}
	tubing := e("5100", welding, classVariable, driverFrames, "", 0, 0, 18.40, 0.02)
	paint := e("5200", painting, classVariable, driverFrames, "", 0, 0, 6.75, 0.03)
	rentWeld := e("6100", welding, classFixed, "", "", 0, 4200, 0, 0)
	rentPaint := e("6100", painting, classFixed, "", "", 0, 3100, 0, 0)
	rentAssy := e("6100", assembly, classFixed, "", "", 0, 2600, 0, 0)

	lease := e("6110", painting, classFixed, "", "", 0, 2800, 0, 0)
	lease.Drift = "fixed cost rises from 2,800 to 3,300 EUR a month from 2025-07 (lease renewal)"
	lease.DriftFrom, lease.DriftFixed = "2025-07", 3300

	powerWeld := e("6200", welding, classMixed, driverMachineHours, welding, 0, 1850, 2.35, 0.02)
	powerPaint := e("6200", painting, classMixed, driverMachineHours, painting, 0, 1200, 3.10, 0.02)

	supervision := e("6300", assembly, classStep, driverFrames, "", 0, 6000, 0, 0.01)
	supervision.Steps = []Step{{0, 6000}, {1000, 9000}, {1400, 12000}}

	freight := e("6400", assembly, classVariable, driverShipments, "", 0, 0, 14.50, 0.02)
	freight.Drift = "variable rate falls from 14.50 to 11.90 EUR per shipment from 2025-02 (new carrier contract)"
	freight.DriftFrom, freight.DriftRate = "2025-02", 11.90

	packaging := e("6420", assembly, classVariable, driverShipments, "", 0, 0, 3.20, 0.02)
	maintenance := e("6500", welding, classMixed, driverMachineHours, welding, 1, 900, 1.10, 0.02)
	marketing := e("6600", assembly, classUnexplained, "", "", 0, 2500, 0, 0.35)
	// The workshop's insurance premium, 3,000 a quarter, varies a little
	// with the insured stock value declared each quarter.
	insurance := e("6700", assembly, classFixed, "", "", 0, 1000, 0, 0.01)
	insurance.Every = 3

	out := []Expectation{
		tubing, paint, rentWeld, rentPaint, rentAssy, lease, powerWeld, powerPaint,
		supervision, freight, packaging, maintenance, marketing, insurance,
	}
	for i := range out {
		out[i].Inflates = !slices.Contains(DeflatorExempt(), out[i].Account)
	}
	return out
}

// priceIndex is the price index of period index i (i = 1 is 2023-07), also
// past the data: 100 at 2026-06.
func priceIndex(i int) float64 {
	return math.Round(100*math.Pow(annualInflation, float64(i-periodCount)/12)*100) / 100
}

// periodStart is the first day of period i, where i = 1 is 2023-07 and i = 0
// is 2023-06, the warm-up month whose activity feeds the lagged maintenance
// cost of 2023-07 but is not written.
func periodStart(i int) time.Time {
	if i < 0 || i > periodCount {
		panic(fmt.Sprintf("demo: period index %d outside 0..%d", i, periodCount))
	}
	return time.Date(firstYear, firstMonth+time.Month(i-1), 1, 0, 0, 0, 0, time.UTC)
}

func periodLabel(i int) string { return periodStart(i).Format("2006-01") }

// periodIndex is the inverse of periodLabel over the written periods.
func periodIndex(label string) int {
	for i := 1; i <= periodCount; i++ {
		if periodLabel(i) == label {
			return i
		}
	}
	panic("demo: period " + label + " is not in the demo range")
}

// newStream returns the random stream named name. Each purpose gets its own
// PCG sequence derived from the one seed, so adding draws to one stream never
// shifts the values of another (the marketing spend stays independent of the
// drivers, for instance).
func newStream(seed uint64, name string) *rand.Rand {
	h := fnv.New64a()
	h.Write([]byte(name))
	return rand.New(rand.NewPCG(seed, h.Sum64()))
}

// clippedNormal is a standard normal draw clipped to [−3, 3]; the clip keeps
// every multiplicative noise factor 1 + cv·z positive for cv < 1/3.
func clippedNormal(r *rand.Rand) float64 {
	return max(-3, min(3, r.NormFloat64()))
}

// uniformAround returns a draw uniform in [1 − spread, 1 + spread].
func uniformAround(r *rand.Rand, spread float64) float64 {
	return 1 + spread*(2*r.Float64()-1)
}

func roundTenth(x float64) float64 { return math.Round(x*10) / 10 }

// series is one driver row set of activity.csv. values[0] is the warm-up
// month 2023-06; values[1..36] are written.
type series struct {
	driver, costCenter, unit string
	decimals                 int
	values                   []float64
}

// activity holds every driver series in the order activity.csv lists them.
type activity struct {
	series []series
}

func (a *activity) find(driver, costCenter string) *series {
	for k := range a.series {
		if a.series[k].driver == driver && a.series[k].costCenter == costCenter {
			return &a.series[k]
		}
	}
	panic(fmt.Sprintf("demo: no driver %s/%s", driver, costCenter))
}

// Activity design, per month t (t = 0 at 2023-07):
//
//	frames_t        = round(1100 · (1 + 0.30·cos(2π(m_t − 6)/12)) · 1.008^(t − 17.5) · (1 + 0.08·z_t))
//	shipments_t     = round(frames_t · u_t),           u_t uniform in [0.45, 0.75]
//	orders_t        = round(shipments_t · v_t),        v_t uniform in [0.80, 1.30]
//	machine_hours_t = frames_t · h · w_t, one decimal,  h = 0.9 (WELD), 0.5 (PAINT); w_t uniform in [0.80, 1.20]
//	labour_hours_t  = frames_t · l · w'_t, one decimal, l = 1.6 (WELD), 0.8 (PAINT), 1.3 (ASSY); w'_t uniform in [0.85, 1.15]
//
// with m_t the calendar month, so output peaks in June and is lowest in
// December. The trend is centred on the middle of the 36 months, so 1100 is
// the mid-range level and frames stay roughly within 700–1800. The per-month ratios make shipments and machine hours series of
// their own rather than rescaled frames, so a fit can tell the drivers apart.
const (
	baseFrames        = 1100
	seasonalAmplitude = 0.30
	monthlyTrend      = 1.008
	framesNoise       = 0.08
	trendCentre       = (periodCount - 1) / 2.0
)

func generateActivity(seed uint64) *activity {
	r := newStream(seed, "activity")
	n := periodCount + 1
	mk := func(driver, cc, unit string, decimals int) series {
		return series{driver: driver, costCenter: cc, unit: unit, decimals: decimals, values: make([]float64, n)}
	}
	a := &activity{series: []series{
		mk(driverFrames, "", "frame", 0),
		mk(driverShipments, "", "shipment", 0),
		mk(driverOrders, "", "order", 0),
		mk(driverMachineHours, welding, "machine hour", 1),
		mk(driverMachineHours, painting, "machine hour", 1),
		mk(driverLabourHours, welding, "labour hour", 1),
		mk(driverLabourHours, painting, "labour hour", 1),
		mk(driverLabourHours, assembly, "labour hour", 1),
		mk(driverPriceIndex, "", "index point", 2),
	}}
	frames, shipments, orders := a.series[0].values, a.series[1].values, a.series[2].values
	mhWeld, mhPaint := a.series[3].values, a.series[4].values
	lhWeld, lhPaint, lhAssy := a.series[5].values, a.series[6].values, a.series[7].values
	for i := range n {
		month := float64(periodStart(i).Month())
		season := 1 + seasonalAmplitude*math.Cos(2*math.Pi*(month-6)/12)
		trend := math.Pow(monthlyTrend, float64(i-1)-trendCentre)
		f := math.Round(baseFrames * season * trend * (1 + framesNoise*clippedNormal(r)))
		frames[i] = f
		shipments[i] = math.Round(f * (0.45 + 0.30*r.Float64()))
		orders[i] = math.Round(shipments[i] * (0.80 + 0.50*r.Float64()))
		mhWeld[i] = roundTenth(f * 0.9 * uniformAround(r, 0.20))
		mhPaint[i] = roundTenth(f * 0.5 * uniformAround(r, 0.20))
		lhWeld[i] = roundTenth(f * 1.6 * uniformAround(r, 0.15))
		lhPaint[i] = roundTenth(f * 0.8 * uniformAround(r, 0.15))
		lhAssy[i] = roundTenth(f * 1.3 * uniformAround(r, 0.15))
		a.series[8].values[i] = priceIndex(i) // no draw: the other series stay as they were
	}
	return a
}

// objectCost is the designed monthly cost of one cost object.
type objectCost struct {
	exp Expectation
	// amount[i] is the designed cost of period i in EUR before rounding;
	// cents[i] is the same rounded to cents, the total the ledger carries.
	// Index 0 (the warm-up month) is unused.
	amount []float64
	cents  []int64
	// serviceCharge is the period index whose rent carries a service-charge
	// true-up; 0 when none.
	serviceCharge int
}

// level returns the step level for driver value x.
func level(steps []Step, x float64) float64 {
	l := steps[0].Level
	for _, s := range steps {
		if x >= s.From {
			l = s.Level
		}
	}
	return l
}

// formula returns the designed cost of e in period i before noise.
func formula(e Expectation, a *activity, i int) float64 {
	fixed, rate := e.Fixed, e.Rate
	if e.DriftFrom != "" && i >= periodIndex(e.DriftFrom) {
		fixed, rate = e.DriftFixed, e.DriftRate
	}
	switch e.Class {
	case classFixed, classUnexplained:
		return fixed
	case classVariable, classMixed:
		return fixed + rate*a.find(e.Driver, e.DriverCostCenter).values[i-e.Lag]
	case classStep:
		return level(e.Steps, a.find(e.Driver, e.DriverCostCenter).values[i-e.Lag])
	}
	panic("demo: unknown class " + e.Class)
}

// designCosts draws the monthly cost of every expected object. Rent is exact
// except for one month per cost centre that carries a service-charge true-up
// of 0.2–1 %, so the fixed cost is not perfectly constant.
func designCosts(seed uint64, a *activity) ([]objectCost, error) {
	exps := Expectations()
	out := make([]objectCost, 0, len(exps))
	for _, e := range exps {
		r := newStream(seed, "cost/"+e.Account+"/"+e.CostCenter)
		oc := objectCost{exp: e, amount: make([]float64, periodCount+1), cents: make([]int64, periodCount+1)}
		if e.Account == "6100" {
			oc.serviceCharge = 1 + r.IntN(periodCount)
		}
		sigma := math.Sqrt(math.Log(1 + e.Noise*e.Noise))
		for i := 1; i <= periodCount; i++ {
			if !e.posted(i) {
				continue // nothing posted this month: amount and cents stay 0
			}
			v := formula(e, a, i)
			if e.Every > 0 {
				v *= float64(e.Every)
			}
			if e.Inflates {
				v *= a.find(driverPriceIndex, "").values[i] / 100
			}
			switch {
			case e.Class == classUnexplained:
				v *= math.Exp(sigma*clippedNormal(r) - sigma*sigma/2)
			case e.Noise > 0:
				v *= 1 + e.Noise*clippedNormal(r)
			case i == oc.serviceCharge:
				v *= 1 + 0.002 + 0.008*r.Float64()
			}
			oc.amount[i] = v
			oc.cents[i] = int64(math.Round(v * 100))
			if oc.cents[i] <= 0 {
				return nil, fmt.Errorf("demo: designed cost of %s/%s in %s is not positive: %.2f",
					e.Account, e.CostCenter, periodLabel(i), v)
			}
		}
		out = append(out, oc)
	}
	return out, nil
}

// posted reports whether e posts in period i: every month, or for a cost
// posted every Every months, in the calendar months divisible by Every.
func (e Expectation) posted(i int) bool {
	return e.Every == 0 || int(periodStart(i).Month())%e.Every == 0
}
