package demo

import (
	"bytes"
	"encoding/csv"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strconv"
	"time"

	"github.com/costdrift/costdrift/internal/atomicfile"
)

// Files are the paths Write created, relative to dir.
type Files struct {
	Ledger   []string // one general-ledger file per calendar year, oldest first
	Activity string
	Accounts string
	// Plans: the planned activity of the quarter the data end with (to
	// compare with its actuals) and of the quarter after (to budget).
	PlanClosed string
	PlanNext   string
}

// Header rows of the three file kinds.
var (
	ledgerHeader   = []string{"entry_id", "line", "date", "account", "cost_center", "amount", "description"}
	activityHeader = []string{"period", "driver", "value", "cost_center", "unit"}
	accountsHeader = []string{"account", "name", "type", "group"}
)

// Ledger data is confidential, so the files are readable by the owner only.
const (
	fileMode   os.FileMode = 0o600
	folderMode os.FileMode = 0o700
)

// Write writes the demo data set of seed below dir:
//
//	dir/data/gl/gl-2023.csv … gl-2026.csv  general ledger, one file per calendar year
//	dir/data/activity.csv                   driver values, long form
//	dir/data/accounts.csv                   chart of accounts
//	dir/plans/plan-2026-q2.csv              planned activity of the last quarter of the data
//	dir/plans/plan-2026-q3.csv              planned activity of the quarter after it
//
// Folders it creates get mode 0700 and files 0600. Each file is written to a
// temporary name and renamed, so a reader never sees half a file and an
// existing file of wider mode is replaced rather than reused. The same seed
// gives byte-identical files.
func Write(dir string, seed uint64) (Files, error) {
	if dir == "" {
		return Files{}, errors.New("demo: write: empty directory")
	}
	ds, err := build(seed)
	if err != nil {
		return Files{}, err
	}
	glDir := filepath.Join("data", "gl")
	if err := os.MkdirAll(filepath.Join(dir, glDir), folderMode); err != nil {
		return Files{}, fmt.Errorf("demo: write: %w", err)
	}
	var files Files
	for _, year := range ds.years() {
		name := filepath.Join(glDir, fmt.Sprintf("gl-%d.csv", year))
		if err := writeFile(filepath.Join(dir, name), ds.ledgerCSV(year)); err != nil {
			return Files{}, err
		}
		files.Ledger = append(files.Ledger, name)
	}
	files.Activity = filepath.Join("data", "activity.csv")
	if err := writeFile(filepath.Join(dir, files.Activity), ds.activityCSV()); err != nil {
		return Files{}, err
	}
	files.Accounts = filepath.Join("data", "accounts.csv")
	if err := writeFile(filepath.Join(dir, files.Accounts), accountsCSV()); err != nil {
		return Files{}, err
	}
	if err := os.MkdirAll(filepath.Join(dir, "plans"), folderMode); err != nil {
		return Files{}, fmt.Errorf("demo: write: %w", err)
	}
	for _, plan := range []struct {
		path  *string
		first int
	}{{&files.PlanClosed, periodCount - 2}, {&files.PlanNext, periodCount + 1}} {
		start := monthStart(plan.first)
		*plan.path = filepath.Join("plans", fmt.Sprintf("plan-%d-q%d.csv", start.Year(), (int(start.Month())+2)/3))
		if err := writeFile(filepath.Join(dir, *plan.path), ds.planCSV(plan.first)); err != nil {
			return Files{}, err
		}
	}
	return files, nil
}

// PlanGrowth is the demo company's planning rule: each quarter's activity
// is planned at the same months of the year before plus 5 %, frames and
// shipments rounded to tens, machine hours to whole hours; the price index
// at 3 % a year.
const PlanGrowth = 1.05

// planCSV is the planned activity of the three months from period index
// first (which may lie after the data), long form with cost centres, for
// the drivers the demo's formulas use.
func (ds *dataset) planCSV(first int) []byte {
	rows := [][]string{{"period", "driver", "value", "cost_center"}}
	for i := first; i < first+3; i++ {
		for _, s := range ds.activity.series {
			if s.driver == driverPriceIndex {
				// The index is planned at the company's 3 % a year.
				rows = append(rows, []string{monthStart(i).Format("2006-01"), s.driver, strconv.FormatFloat(priceIndex(i), 'f', 2, 64), s.costCenter})
				continue
			}
			if s.driver != driverFrames && s.driver != driverShipments && s.driver != driverMachineHours {
				continue
			}
			v := s.values[i-12] * PlanGrowth
			if s.driver == driverMachineHours {
				v = math.Round(v)
			} else {
				v = 10 * math.Round(v/10)
			}
			rows = append(rows, []string{monthStart(i).Format("2006-01"), s.driver, strconv.FormatFloat(v, 'f', 0, 64), s.costCenter})
		}
	}
	return encode(rows)
}

// monthStart is the first day of period index i, also past the data.
func monthStart(i int) time.Time {
	return time.Date(firstYear, firstMonth+time.Month(i-1), 1, 0, 0, 0, 0, time.UTC)
}

// writeFile writes data to path whole or not at all, owner-only.
func writeFile(path string, data []byte) error {
	err := atomicfile.Write(path, fileMode, func(w io.Writer) error {
		_, err := w.Write(data)
		return err
	})
	if err != nil {
		return fmt.Errorf("demo: %w", err)
	}
	return nil
}

// dataset is the whole demo in memory: activity, designed costs and the
// ledger entries that carry them, entries[i] for period i (index 0 unused).
type dataset struct {
	activity *activity
	costs    []objectCost
	entries  [][]entry
}

// entry is one balanced journal entry: expense debit lines and one credit.
type entry struct {
	id     string
	date   time.Time
	lines  []line // debits first, the credit line last
	bill   int    // index of the billing in billings, to order same-day entries
	prefix string
}

type line struct {
	account, costCenter string
	cents               int64
	description         string
}

// billing says how the cost of a group of objects reaches the ledger: which
// objects share one document, whether a supplier invoice (credited to
// payables) or a transfer (credited to the bank), how many documents a month
// and the texts on them.
type billing struct {
	name     string
	objects  [][2]string // account, cost centre; one debit line each
	prefix   string      // entry id prefix: AP supplier invoice, BK bank transfer
	credit   string
	min, max int // documents per month
	day      int // fixed day of month; 0 draws the days
	// lineText gets the object, the period index i, the document number k
	// (1-based), the number of documents n and a draw that picks a text
	// variant; creditText gets the period label for i and the same k, n and
	// variant.
	lineText   func(o objectCost, i, k, n, variant int) string
	creditText func(p string, k, n, variant int) string
}

var costCenterPlace = map[string]string{welding: "welding bay", painting: "paint shop", assembly: "assembly hall"}

// campaigns are the invented marketing activities, one picked per document.
var campaigns = []string{
	"Spring catalogue printing",
	"Trade fair stand hire",
	"Online advertising on cycling forums",
	"Demo-day rides with local clubs",
	"Photo shoot for the new frame range",
	"Sponsorship of a regional gravel race",
	"Dealer brochure and sample decals",
}

var billings = []billing{
	{
		name: "rent", objects: [][2]string{{"6100", welding}, {"6100", painting}, {"6100", assembly}},
		prefix: "BK", credit: accountBank, min: 1, max: 1, day: 1,
		lineText: func(o objectCost, i, _, _, _ int) string {
			if i == o.serviceCharge {
				return fmt.Sprintf("Rent and service-charge true-up, %s %s", costCenterPlace[o.exp.CostCenter], periodLabel(i))
			}
			return fmt.Sprintf("Rent, %s %s", costCenterPlace[o.exp.CostCenter], periodLabel(i))
		},
		creditText: func(p string, _, _, _ int) string { return "Rent transfer " + p },
	},
	{
		name: "lease", objects: [][2]string{{"6110", painting}},
		prefix: "BK", credit: accountBank, min: 1, max: 1, day: 5,
		lineText: func(_ objectCost, i, _, _, _ int) string {
			return "Spray booth lease instalment " + periodLabel(i)
		},
		creditText: func(p string, _, _, _ int) string { return "Lease direct debit " + p },
	},
	{
		name: "power", objects: [][2]string{{"6200", welding}, {"6200", painting}},
		prefix: "AP", credit: accountPayables, min: 1, max: 2,
		lineText: func(o objectCost, i, k, n, _ int) string {
			return fmt.Sprintf("Electricity, %s, meter reading %d of %d, %s", costCenterPlace[o.exp.CostCenter], k, n, periodLabel(i))
		},
		creditText: func(p string, k, _, _ int) string { return fmt.Sprintf("Electricity bill %s-%d", p, k) },
	},
	{
		name: "supervision", objects: [][2]string{{"6300", assembly}},
		prefix: "BK", credit: accountBank, min: 2, max: 2,
		lineText: func(_ objectCost, i, k, n, _ int) string {
			return fmt.Sprintf("Shift supervision pay %s, part %d of %d", periodLabel(i), k, n)
		},
		creditText: func(p string, k, _, _ int) string { return fmt.Sprintf("Payroll transfer %s-%d", p, k) },
	},
	{
		name: "tubing", objects: [][2]string{{"5100", welding}},
		prefix: "AP", credit: accountPayables, min: 1, max: 3,
		lineText: func(_ objectCost, i, k, _, _ int) string {
			return fmt.Sprintf("Chromoly tubing, batch %s-%d", periodLabel(i), k)
		},
		creditText: func(p string, k, _, _ int) string { return fmt.Sprintf("Tube stock invoice %s-%d", p, k) },
	},
	{
		name: "paint", objects: [][2]string{{"5200", painting}},
		prefix: "AP", credit: accountPayables, min: 1, max: 3,
		lineText: func(_ objectCost, i, k, _, _ int) string {
			return fmt.Sprintf("Powder coat and primer, lot %s-%d", periodLabel(i), k)
		},
		creditText: func(p string, k, _, _ int) string { return fmt.Sprintf("Coatings invoice %s-%d", p, k) },
	},
	{
		name: "freight", objects: [][2]string{{"6400", assembly}},
		prefix: "AP", credit: accountPayables, min: 1, max: 3,
		lineText: func(_ objectCost, i, k, _, _ int) string {
			return fmt.Sprintf("Outbound freight, consignments %s-%d", periodLabel(i), k)
		},
		creditText: func(p string, k, _, _ int) string { return fmt.Sprintf("Carrier invoice %s-%d", p, k) },
	},
	{
		name: "packaging", objects: [][2]string{{"6420", assembly}},
		prefix: "AP", credit: accountPayables, min: 1, max: 3,
		lineText: func(_ objectCost, i, k, _, _ int) string {
			return fmt.Sprintf("Frame boxes and foam inserts, order %s-%d", periodLabel(i), k)
		},
		creditText: func(p string, k, _, _ int) string { return fmt.Sprintf("Packaging invoice %s-%d", p, k) },
	},
	{
		name: "maintenance", objects: [][2]string{{"6500", welding}},
		prefix: "AP", credit: accountPayables, min: 1, max: 3,
		lineText: func(_ objectCost, i, k, _, _ int) string {
			return fmt.Sprintf("Welder servicing and spares, job %s-%d", periodLabel(i), k)
		},
		creditText: func(p string, k, _, _ int) string { return fmt.Sprintf("Service invoice %s-%d", p, k) },
	},
	{
		name: "marketing", objects: [][2]string{{"6600", assembly}},
		prefix: "AP", credit: accountPayables, min: 1, max: 3,
		lineText: func(_ objectCost, i, _, _, variant int) string {
			return campaigns[variant] + ", " + periodLabel(i)
		},
		creditText: func(p string, k, _, _ int) string { return fmt.Sprintf("Marketing services invoice %s-%d", p, k) },
	},
	{
		// Collected once a quarter by direct debit; months without a
		// premium have no entry.
		name: "insurance", objects: [][2]string{{"6700", assembly}},
		prefix: "DD", credit: accountBank, min: 1, max: 1, day: 15,
		lineText: func(_ objectCost, i, _, _, _ int) string {
			return "Workshop insurance premium, quarter to " + periodLabel(i)
		},
		creditText: func(p string, _, _, _ int) string { return "Insurance direct debit " + p },
	},
}

// build generates the whole data set of seed in memory.
func build(seed uint64) (*dataset, error) {
	a := generateActivity(seed)
	costs, err := designCosts(seed, a)
	if err != nil {
		return nil, err
	}
	byObject := make(map[[2]string]int, len(costs))
	for k, c := range costs {
		byObject[[2]string{c.exp.Account, c.exp.CostCenter}] = k
	}
	ds := &dataset{activity: a, costs: costs, entries: make([][]entry, periodCount+1)}
	billed := 0
	for b, bl := range billings {
		r := newStream(seed, "billing/"+bl.name)
		for i := 1; i <= periodCount; i++ {
			n := bl.min + r.IntN(bl.max-bl.min+1)
			days := []int{bl.day}
			if bl.day != 0 && n != 1 {
				panic(fmt.Sprintf("demo: billing %s has a fixed day but %d documents a month", bl.name, n))
			}
			if bl.day == 0 {
				// Distinct days drawn from 1..28, which every month has,
				// February included.
				days = r.Perm(28)[:n]
				for d := range days {
					days[d]++
				}
				slices.Sort(days)
			}
			shares := make([]float64, n)
			for k := range shares {
				shares[k] = 0.5 + r.Float64()
			}
			variants := make([]int, n)
			for k := range variants {
				variants[k] = r.IntN(len(campaigns))
			}
			parts := make([][]int64, len(bl.objects))
			posted := false
			for o, obj := range bl.objects {
				k, ok := byObject[obj]
				if !ok {
					panic(fmt.Sprintf("demo: billing %s names %s/%s, which has no expectation", bl.name, obj[0], obj[1]))
				}
				parts[o] = splitCents(costs[k].cents[i], shares)
				posted = posted || costs[k].cents[i] != 0
			}
			if !posted {
				continue // a cost posted once a quarter, in a month between
			}
			p := periodLabel(i)
			for k := range n {
				e := entry{date: periodStart(i).AddDate(0, 0, days[k]-1), bill: b, prefix: bl.prefix}
				var total int64
				for o, obj := range bl.objects {
					oc := costs[byObject[obj]]
					text := bl.lineText(oc, i, k+1, n, variants[k])
					e.lines = append(e.lines, line{account: obj[0], costCenter: obj[1], cents: parts[o][k], description: text})
					total += parts[o][k]
				}
				e.lines = append(e.lines, line{account: bl.credit, cents: -total, description: bl.creditText(p, k+1, n, variants[k])})
				ds.entries[i] = append(ds.entries[i], e)
			}
		}
		billed += len(bl.objects)
	}
	if billed != len(costs) {
		panic(fmt.Sprintf("demo: billings cover %d objects, expectations %d", billed, len(costs)))
	}
	ds.accrueLateInvoice()
	for i := 1; i <= periodCount; i++ {
		es := ds.entries[i]
		slices.SortStableFunc(es, func(x, y entry) int {
			if c := x.date.Compare(y.date); c != 0 {
				return c
			}
			return x.bill - y.bill
		})
		seq := map[string]int{}
		for k := range es {
			seq[es[k].prefix]++
			es[k].id = fmt.Sprintf("%s-%s-%04d", es[k].prefix, periodLabel(i), seq[es[k].prefix])
		}
	}
	return ds, nil
}

// splitCents splits total into len(shares) parts in proportion to shares:
// part_k = round(total·share_k/Σshare) for all but the last part, and the
// last part takes what is left, so the parts add up to total exactly.
func splitCents(total int64, shares []float64) []int64 {
	var sum float64
	for _, s := range shares {
		sum += s
	}
	parts := make([]int64, len(shares))
	var used int64
	for k := 0; k < len(shares)-1; k++ {
		parts[k] = int64(math.Round(float64(total) * shares[k] / sum))
		used += parts[k]
	}
	parts[len(parts)-1] = total - used
	return parts
}

// formatCents writes cents as a plain decimal with two decimals and a point,
// e.g. 123450 → "1234.50", −5 → "-0.05".
func formatCents(c int64) string {
	sign := ""
	if c < 0 {
		sign, c = "-", -c
	}
	return fmt.Sprintf("%s%d.%02d", sign, c/100, c%100)
}

// years lists the calendar years the periods fall in, ascending.
func (ds *dataset) years() []int {
	var ys []int
	for i := 1; i <= periodCount; i++ {
		if y := periodStart(i).Year(); len(ys) == 0 || ys[len(ys)-1] != y {
			ys = append(ys, y)
		}
	}
	return ys
}

func encode(rows [][]string) []byte {
	var buf bytes.Buffer
	w := csv.NewWriter(&buf)
	// Writing to a bytes.Buffer cannot fail, and WriteAll flushes.
	if err := w.WriteAll(rows); err != nil {
		panic("demo: csv encoding: " + err.Error())
	}
	return buf.Bytes()
}

func (ds *dataset) ledgerCSV(year int) []byte {
	rows := [][]string{ledgerHeader}
	for i := 1; i <= periodCount; i++ {
		if periodStart(i).Year() != year {
			continue
		}
		for _, e := range ds.entries[i] {
			date := e.date.Format(time.DateOnly)
			for n, l := range e.lines {
				rows = append(rows, []string{e.id, strconv.Itoa(n + 1), date, l.account, l.costCenter, formatCents(l.cents), l.description})
			}
		}
	}
	return encode(rows)
}

func (ds *dataset) activityCSV() []byte {
	rows := [][]string{activityHeader}
	for i := 1; i <= periodCount; i++ {
		for _, s := range ds.activity.series {
			rows = append(rows, []string{periodLabel(i), s.driver, strconv.FormatFloat(s.values[i], 'f', s.decimals, 64), s.costCenter, s.unit})
		}
	}
	return encode(rows)
}

func accountsCSV() []byte {
	rows := [][]string{accountsHeader}
	for _, a := range chart {
		rows = append(rows, []string{a.number, a.name, a.kind, a.group})
	}
	return encode(rows)
}

// accrualFrom is the first month the maintenance invoice that comes late
// may be accrued in (accrueLateInvoice).
const accrualFrom = "2025-10"

// accrueLateInvoice makes one welder-servicing invoice arrive a month late,
// as the accountant books it: in the first month from accrualFrom that has
// a servicing job and whose next month has one servicing invoice, not on
// the 1st, the month's last job's invoice is replaced by an
// accrual of the same amount on the last day of the month (journal entry,
// credited to accrued expenses); the next month the accrual is reversed on
// the 1st and the invoice, unchanged, is booked on the first day from the
// 9th that no other servicing invoice of that month takes. Each month's
// cost stays what the design gives: the accrual carries the job into its
// own month, and the reversal takes it out of the month the invoice
// arrives in.
func (ds *dataset) accrueLateInvoice() {
	isServicing := func(e entry) bool { return e.lines[0].account == "6500" && e.lines[0].costCenter == welding }
	servicing := func(i int) []int {
		var out []int
		for k, e := range ds.entries[i] {
			if isServicing(e) {
				out = append(out, k)
			}
		}
		return out
	}
	for i := periodIndex(accrualFrom); i < periodCount; i++ {
		jobs, next := servicing(i), servicing(i+1)
		if len(jobs) == 0 || len(next) != 1 || ds.entries[i+1][next[0]].date.Day() == 1 {
			continue // the reversal takes the 1st, and each document a day of its own
		}
		last := jobs[0]
		for _, k := range jobs {
			if ds.entries[i][k].date.After(ds.entries[i][last].date) {
				last = k
			}
		}
		late := ds.entries[i][last]
		taken := map[int]bool{1: true, ds.entries[i+1][next[0]].date.Day(): true}
		day := 9
		for taken[day] {
			day++
		}
		job := late.lines[0]
		monthEnd := periodStart(i+1).AddDate(0, 0, -1)
		accrual := entry{date: monthEnd, bill: late.bill, prefix: "GJ", lines: []line{
			{account: job.account, costCenter: job.costCenter, cents: job.cents, description: "Accrual: " + job.description + ", invoice to come"},
			{account: accountAccrued, cents: -job.cents, description: "Accrued expenses " + periodLabel(i)},
		}}
		reversal := entry{date: periodStart(i + 1), bill: late.bill, prefix: "GJ", lines: []line{
			{account: job.account, costCenter: job.costCenter, cents: -job.cents, description: "Reversal of accrual: " + job.description},
			{account: accountAccrued, cents: job.cents, description: "Accrued expenses " + periodLabel(i) + " reversed"},
		}}
		late.date = periodStart(i+1).AddDate(0, 0, day-1)
		ds.entries[i][last] = accrual
		ds.entries[i+1] = append(ds.entries[i+1], reversal, late)
		return
	}
	panic("demo: no month from " + accrualFrom + " suits the late servicing invoice")
}
