package demo

import (
	"bytes"
	"encoding/csv"
	"fmt"
	"maps"
	"math"
	"os"
	"path/filepath"
	"regexp"
	"slices"
	"strconv"
	"strings"
	"testing"
	"time"
)

// The data set is invented; these tests check that the files carry the
// design (Expectations and the activity design in company.go, both as the
// README's demo section describes them) and the file formats the sources read. They read
// the written files back rather than trusting the generator's memory, except
// where the unrounded designed amounts are needed.

// parsed is the data set as read back from the files.
type parsed struct {
	ledger   []ledgerRow
	activity map[[3]string]float64 // period, driver, cost centre → value
	units    map[[2]string]string  // driver, cost centre → unit
	accounts map[string][3]string  // account → name, type, group
	periods  []string
}

type ledgerRow struct {
	file                                     string
	entryID                                  string
	line                                     int
	date                                     time.Time
	account, costCenter, amount, description string
	cents                                    int64
}

func readCSV(t *testing.T, path string) [][]string {
	t.Helper()
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	rows, err := csv.NewReader(bytes.NewReader(b)).ReadAll()
	if err != nil {
		t.Fatalf("%s: %v", path, err)
	}
	return rows
}

var amountPattern = regexp.MustCompile(`^-?[0-9]+\.[0-9]{2}$`)

func writeAndRead(t *testing.T, seed uint64) (string, Files, parsed) {
	t.Helper()
	dir := filepath.Join(t.TempDir(), "demo")
	files, err := Write(dir, seed)
	if err != nil {
		t.Fatal(err)
	}
	p := parsed{
		activity: map[[3]string]float64{},
		units:    map[[2]string]string{},
		accounts: map[string][3]string{},
	}
	for _, f := range files.Ledger {
		for n, r := range readCSV(t, filepath.Join(dir, f))[1:] {
			if len(r) != 7 {
				t.Fatalf("%s row %d: %d fields, want 7", f, n+2, len(r))
			}
			line, err := strconv.Atoi(r[1])
			if err != nil {
				t.Fatalf("%s row %d: line %q", f, n+2, r[1])
			}
			date, err := time.Parse(time.DateOnly, r[2])
			if err != nil {
				t.Fatalf("%s row %d: date %q", f, n+2, r[2])
			}
			if !amountPattern.MatchString(r[5]) {
				t.Fatalf("%s row %d: amount %q is not a plain decimal with two decimals", f, n+2, r[5])
			}
			cents, _ := strconv.ParseInt(strings.Replace(r[5], ".", "", 1), 10, 64)
			p.ledger = append(p.ledger, ledgerRow{f, r[0], line, date, r[3], r[4], r[5], r[6], cents})
		}
	}
	for _, r := range readCSV(t, filepath.Join(dir, files.Activity))[1:] {
		v, err := strconv.ParseFloat(r[2], 64)
		if err != nil {
			t.Fatalf("activity value %q: %v", r[2], err)
		}
		p.activity[[3]string{r[0], r[1], r[3]}] = v
		p.units[[2]string{r[1], r[3]}] = r[4]
		if len(p.periods) == 0 || p.periods[len(p.periods)-1] != r[0] {
			p.periods = append(p.periods, r[0])
		}
	}
	for _, r := range readCSV(t, filepath.Join(dir, files.Accounts))[1:] {
		p.accounts[r[0]] = [3]string{r[1], r[2], r[3]}
	}
	return dir, files, p
}

// series returns a driver's values over the written periods, in order.
func (p parsed) series(driver, costCenter string) []float64 {
	out := make([]float64, len(p.periods))
	for i, per := range p.periods {
		out[i] = p.activity[[3]string{per, driver, costCenter}]
	}
	return out
}

// monthly returns, per cost object and period, the sum of its debit lines
// in cents and the number of entries carrying them.
func (p parsed) monthly() (sums map[[3]string]int64, invoices map[[3]string]map[string]bool) {
	sums = map[[3]string]int64{}
	invoices = map[[3]string]map[string]bool{}
	for _, r := range p.ledger {
		if r.costCenter == "" {
			continue
		}
		k := [3]string{r.account, r.costCenter, r.date.Format("2006-01")}
		sums[k] += r.cents
		if invoices[k] == nil {
			invoices[k] = map[string]bool{}
		}
		invoices[k][r.entryID] = true
	}
	return sums, invoices
}

// pearson is the sample correlation r = Σ(x−x̄)(y−ȳ) / √(Σ(x−x̄)²·Σ(y−ȳ)²).
func pearson(x, y []float64) float64 {
	var mx, my float64
	for i := range x {
		mx += x[i]
		my += y[i]
	}
	mx /= float64(len(x))
	my /= float64(len(y))
	var sxy, sxx, syy float64
	for i := range x {
		sxy += (x[i] - mx) * (y[i] - my)
		sxx += (x[i] - mx) * (x[i] - mx)
		syy += (y[i] - my) * (y[i] - my)
	}
	return sxy / math.Sqrt(sxx*syy)
}

func TestPearson(t *testing.T) {
	tests := []struct {
		name string
		x, y []float64
		want float64
		tol  float64
	}{
		// Σdxdy = 6, Σdx² = 10, Σdy² = 6: r = 6/√60, computed by hand.
		{"textbook five points", []float64{1, 2, 3, 4, 5}, []float64{2, 4, 5, 4, 5}, 6 / math.Sqrt(60), 1e-15},
		// A linear map with negative slope has r = −1 exactly (definition).
		{"perfect negative", []float64{1, 2, 3}, []float64{9, 7, 5}, -1, 1e-15},
	}
	for _, tt := range tests {
		if got := pearson(tt.x, tt.y); math.Abs(got-tt.want) > tt.tol {
			t.Errorf("%s: r = %.17g, want %.17g", tt.name, got, tt.want)
		}
	}
}

func TestWriteIsReproducible(t *testing.T) {
	dirA, filesA, _ := writeAndRead(t, DefaultSeed)
	dirB, filesB, _ := writeAndRead(t, DefaultSeed)
	wantLedger := []string{"gl-2023.csv", "gl-2024.csv", "gl-2025.csv", "gl-2026.csv"}
	for k := range wantLedger {
		wantLedger[k] = filepath.Join("data", "gl", wantLedger[k])
	}
	if !slices.Equal(filesA.Ledger, wantLedger) {
		t.Fatalf("ledger files %v, want %v", filesA.Ledger, wantLedger)
	}
	if filesA.Activity != filepath.Join("data", "activity.csv") || filesA.Accounts != filepath.Join("data", "accounts.csv") {
		t.Fatalf("files %+v", filesA)
	}
	if fmt.Sprint(filesA) != fmt.Sprint(filesB) {
		t.Fatalf("file lists differ: %v vs %v", filesA, filesB)
	}
	all := append(slices.Clone(filesA.Ledger), filesA.Activity, filesA.Accounts)
	for _, f := range all {
		a, errA := os.ReadFile(filepath.Join(dirA, f))
		b, errB := os.ReadFile(filepath.Join(dirB, f))
		if errA != nil || errB != nil {
			t.Fatal(errA, errB)
		}
		if !bytes.Equal(a, b) {
			t.Errorf("%s differs between two writes with the same seed", f)
		}
		if bytes.HasPrefix(a, []byte("\xef\xbb\xbf")) {
			t.Errorf("%s starts with a byte-order mark", f)
		}
	}

	// The seed must matter: another seed changes the ledger and the drivers.
	dirC, _, _ := writeAndRead(t, DefaultSeed+1)
	for _, f := range []string{filesA.Ledger[1], filesA.Activity} {
		a, _ := os.ReadFile(filepath.Join(dirA, f))
		c, _ := os.ReadFile(filepath.Join(dirC, f))
		if bytes.Equal(a, c) {
			t.Errorf("%s is the same for seeds %d and %d", f, DefaultSeed, DefaultSeed+1)
		}
	}
}

func TestHeaders(t *testing.T) {
	dir, files, _ := writeAndRead(t, DefaultSeed)
	want := map[string]string{
		files.Activity: "period,driver,value,cost_center,unit\n",
		files.Accounts: "account,name,type,group\n",
	}
	for _, f := range files.Ledger {
		want[f] = "entry_id,line,date,account,cost_center,amount,description\n"
	}
	for f, header := range want {
		b, err := os.ReadFile(filepath.Join(dir, f))
		if err != nil {
			t.Fatal(err)
		}
		if !bytes.HasPrefix(b, []byte(header)) {
			first, _, _ := bytes.Cut(b, []byte("\n"))
			t.Errorf("%s header %q, want %q", f, first, strings.TrimSuffix(header, "\n"))
		}
	}
}

func TestModes(t *testing.T) {
	dir, files, _ := writeAndRead(t, DefaultSeed)
	for _, f := range append(slices.Clone(files.Ledger), files.Activity, files.Accounts) {
		fi, err := os.Stat(filepath.Join(dir, f))
		if err != nil {
			t.Fatal(err)
		}
		if fi.Mode().Perm() != 0o600 {
			t.Errorf("%s mode %v, want 0600", f, fi.Mode().Perm())
		}
	}
	for _, d := range []string{dir, filepath.Join(dir, "data"), filepath.Join(dir, "data", "gl")} {
		fi, err := os.Stat(d)
		if err != nil {
			t.Fatal(err)
		}
		if fi.Mode().Perm() != 0o700 {
			t.Errorf("%s mode %v, want 0700", d, fi.Mode().Perm())
		}
	}

	// A file left with a wider mode is replaced, not reused with its mode.
	path := filepath.Join(dir, files.Accounts)
	if err := os.Chmod(path, 0o644); err != nil {
		t.Fatal(err)
	}
	if _, err := Write(dir, DefaultSeed); err != nil {
		t.Fatal(err)
	}
	if fi, _ := os.Stat(path); fi.Mode().Perm() != 0o600 {
		t.Errorf("rewritten %s mode %v, want 0600", files.Accounts, fi.Mode().Perm())
	}
	left, _ := filepath.Glob(filepath.Join(dir, "data", "*.tmp"))
	leftGL, _ := filepath.Glob(filepath.Join(dir, "data", "gl", "*.tmp"))
	if left = append(left, leftGL...); len(left) > 0 {
		t.Errorf("temporary files left behind: %v", left)
	}
}

func TestWriteRejectsEmptyDir(t *testing.T) {
	if _, err := Write("", DefaultSeed); err == nil {
		t.Fatal("Write(\"\") returned no error")
	}
}

var entryIDPattern = regexp.MustCompile(`^(AP|BK|DD|GJ)-([0-9]{4}-[0-9]{2})-[0-9]{4}$`)

func TestLedgerEntries(t *testing.T) {
	_, _, p := writeAndRead(t, DefaultSeed)
	first, last := p.periods[0], p.periods[len(p.periods)-1]
	if first != "2023-07" || last != "2026-06" || len(p.periods) != 36 {
		t.Fatalf("periods %s..%s (%d), want 2023-07..2026-06 (36)", first, last, len(p.periods))
	}
	type entrySummary struct {
		rows  []ledgerRow
		total int64
	}
	var order []string
	entries := map[string]*entrySummary{}
	for _, r := range p.ledger {
		e, seen := entries[r.entryID]
		if !seen {
			e = &entrySummary{}
			entries[r.entryID] = e
			order = append(order, r.entryID)
		} else if order[len(order)-1] != r.entryID {
			t.Fatalf("entry %s is split: its lines are not contiguous (or the id is reused)", r.entryID)
		}
		e.rows = append(e.rows, r)
		e.total += r.cents
	}
	for _, id := range order {
		e := entries[id]
		m := entryIDPattern.FindStringSubmatch(id)
		if m == nil {
			t.Fatalf("entry id %q does not look like AP-2024-03-0012", id)
		}
		if e.total != 0 {
			t.Errorf("entry %s does not balance: %s", id, formatCents(e.total))
		}
		if len(e.rows) < 2 {
			t.Errorf("entry %s has %d lines", id, len(e.rows))
		}
		for k, r := range e.rows {
			if r.line != k+1 {
				t.Errorf("entry %s line %d numbered %d", id, k+1, r.line)
			}
			if !r.date.Equal(e.rows[0].date) {
				t.Errorf("entry %s has two dates", id)
			}
			if period := r.date.Format("2006-01"); period != m[2] || period < first || period > last {
				t.Errorf("entry %s dated %s", id, r.date.Format(time.DateOnly))
			}
			if want := fmt.Sprintf("gl-%d.csv", r.date.Year()); filepath.Base(r.file) != want {
				t.Errorf("entry %s dated %s is in %s", id, r.date.Format(time.DateOnly), r.file)
			}
			if strings.TrimSpace(r.description) == "" {
				t.Errorf("entry %s line %d has no description", id, r.line)
			}
			credit := k == len(e.rows)-1
			if strings.HasPrefix(id, "GJ-") {
				// An accrual or its reversal: the expense line, either
				// sign, and its opposite on accrued expenses.
				if len(e.rows) != 2 || credit != (r.account == accountAccrued) || credit != (r.costCenter == "") || r.cents == 0 {
					t.Errorf("journal entry %s line %d: account %s cost centre %q amount %s", id, r.line, r.account, r.costCenter, r.amount)
				}
				continue
			}
			switch {
			case credit && !(r.account == accountPayables || r.account == accountBank):
				t.Errorf("entry %s credits %s, want 2000 or 1200", id, r.account)
			case credit && (r.costCenter != "" || r.cents >= 0):
				t.Errorf("entry %s credit line: cost centre %q amount %s", id, r.costCenter, r.amount)
			case !credit && (p.accounts[r.account][1] != "expense" || r.costCenter == "" || r.cents <= 0):
				t.Errorf("entry %s debit line %d: account %s cost centre %q amount %s", id, r.line, r.account, r.costCenter, r.amount)
			}
		}
		// Supplier invoices are credited to payables, transfers to the bank.
		creditAccount := e.rows[len(e.rows)-1].account
		if (strings.HasPrefix(id, "AP-")) != (creditAccount == accountPayables) {
			t.Errorf("entry %s credits %s", id, creditAccount)
		}
	}
}

func TestLedgerCarriesDesignedCost(t *testing.T) {
	_, _, p := writeAndRead(t, DefaultSeed)
	ds, err := build(DefaultSeed)
	if err != nil {
		t.Fatal(err)
	}
	sums, invoices := p.monthly()
	days := map[[3]string]map[int]bool{}
	for _, r := range p.ledger {
		if r.costCenter != "" {
			k := [3]string{r.account, r.costCenter, r.date.Format("2006-01")}
			if days[k] == nil {
				days[k] = map[int]bool{}
			}
			days[k][r.date.Day()] = true
		}
	}
	for _, oc := range ds.costs {
		for i := 1; i <= periodCount; i++ {
			k := [3]string{oc.exp.Account, oc.exp.CostCenter, periodLabel(i)}
			n := len(invoices[k])
			if !oc.exp.posted(i) {
				// A cost posted once a quarter has no document between.
				if n != 0 || sums[k] != 0 {
					t.Errorf("%s/%s %s: %d documents summing to %s in a month between postings", k[0], k[1], k[2], n, formatCents(sums[k]))
				}
				continue
			}
			if n < 1 || n > 3 {
				t.Errorf("%s/%s %s: %d invoices, want 1–3", k[0], k[1], k[2], n)
			}
			if len(days[k]) != n {
				t.Errorf("%s/%s %s: %d invoices on %d days, want different days", k[0], k[1], k[2], n, len(days[k]))
			}
			if sums[k] != oc.cents[i] {
				t.Errorf("%s/%s %s: lines sum to %s, designed cost rounded to cents is %s",
					k[0], k[1], k[2], formatCents(sums[k]), formatCents(oc.cents[i]))
			}
			if d := math.Abs(float64(sums[k])/100 - oc.amount[i]); d > 0.01*float64(n) {
				t.Errorf("%s/%s %s: lines sum to %s, designed %.4f", k[0], k[1], k[2], formatCents(sums[k]), oc.amount[i])
			}
		}
	}
}

func TestExpectationsCoverLedger(t *testing.T) {
	_, _, p := writeAndRead(t, DefaultSeed)
	written := map[[2]string]int{}
	for _, r := range p.ledger {
		if _, ok := p.accounts[r.account]; !ok {
			t.Errorf("ledger account %s is not in accounts.csv", r.account)
		}
		if p.accounts[r.account][1] == "expense" {
			written[[2]string{r.account, r.costCenter}]++
		}
	}
	sums, _ := p.monthly()
	expected := map[[2]string]bool{}
	for _, e := range Expectations() {
		k := [2]string{e.Account, e.CostCenter}
		expected[k] = true
		if written[k] == 0 {
			t.Errorf("expectation %s/%s has no ledger lines", e.Account, e.CostCenter)
		}
		for _, per := range p.periods {
			if !e.posted(periodIndex(per)) {
				continue // between a quarterly cost's postings: TestLedgerCarriesDesignedCost
			}
			if sums[[3]string{e.Account, e.CostCenter, per}] <= 0 {
				t.Errorf("%s/%s has no positive cost in %s", e.Account, e.CostCenter, per)
			}
		}
		if a := p.accounts[e.Account]; a[0] != e.AccountName || a[1] != "expense" {
			t.Errorf("%s in accounts.csv is %v, expectation names it %q", e.Account, a, e.AccountName)
		}
	}
	for k := range written {
		if !expected[k] {
			t.Errorf("ledger carries expense object %s/%s with no expectation", k[0], k[1])
		}
	}
	for _, acct := range []string{"1200", "2000"} {
		if _, ok := p.accounts[acct]; !ok {
			t.Errorf("accounts.csv lacks %s", acct)
		}
	}
}

// TestExpectationsMatchDesign checks Expectations against the cost design
// as the README's demo section describes it, transcribed here independently of company.go.
func TestExpectationsMatchDesign(t *testing.T) {
	tests := []struct {
		name               string
		account, cc, class string
		driver, driverCC   string
		lag                int
		fixed, rate, noise float64
		driftFrom          string
		driftFixed         float64
		driftRate          float64
	}{
		// Source of every row: the cost design of the demo (README, Set up and try it).
		{"tubing", "5100", "WELD", "variable", "frames_built", "", 0, 0, 18.40, 0.02, "", 0, 0},
		{"paint", "5200", "PAINT", "variable", "frames_built", "", 0, 0, 6.75, 0.03, "", 0, 0},
		{"rent weld", "6100", "WELD", "fixed", "", "", 0, 4200, 0, 0, "", 0, 0},
		{"rent paint", "6100", "PAINT", "fixed", "", "", 0, 3100, 0, 0, "", 0, 0},
		{"rent assy", "6100", "ASSY", "fixed", "", "", 0, 2600, 0, 0, "", 0, 0},
		{"lease", "6110", "PAINT", "fixed", "", "", 0, 2800, 0, 0, "2025-07", 3300, 0},
		{"power weld", "6200", "WELD", "mixed", "machine_hours", "WELD", 0, 1850, 2.35, 0.02, "", 0, 0},
		{"power paint", "6200", "PAINT", "mixed", "machine_hours", "PAINT", 0, 1200, 3.10, 0.02, "", 0, 0},
		{"supervision", "6300", "ASSY", "step", "frames_built", "", 0, 6000, 0, 0.01, "", 0, 0},
		{"freight", "6400", "ASSY", "variable", "shipments", "", 0, 0, 14.50, 0.02, "2025-02", 0, 11.90},
		{"packaging", "6420", "ASSY", "variable", "shipments", "", 0, 0, 3.20, 0.02, "", 0, 0},
		{"maintenance", "6500", "WELD", "mixed", "machine_hours", "WELD", 1, 900, 1.10, 0.02, "", 0, 0},
		{"marketing", "6600", "ASSY", "unexplained", "", "", 0, 2500, 0, 0.35, "", 0, 0},
		{"insurance", "6700", "ASSY", "fixed", "", "", 0, 1000, 0, 0.01, "", 0, 0},
	}
	got := Expectations()
	if len(got) != len(tests) {
		t.Fatalf("%d expectations, want %d", len(got), len(tests))
	}
	for k, tt := range tests {
		e := got[k]
		if e.Account != tt.account || e.CostCenter != tt.cc || e.Class != tt.class || e.Driver != tt.driver ||
			e.DriverCostCenter != tt.driverCC || e.Lag != tt.lag || e.Fixed != tt.fixed || e.Rate != tt.rate ||
			e.Noise != tt.noise || e.DriftFrom != tt.driftFrom || e.DriftFixed != tt.driftFixed || e.DriftRate != tt.driftRate {
			t.Errorf("%s: got %+v", tt.name, e)
		}
		if (e.Drift == "") != (e.DriftFrom == "") {
			t.Errorf("%s: Drift %q but DriftFrom %q", tt.name, e.Drift, e.DriftFrom)
		}
		if e.DriftFrom != "" && !strings.Contains(e.Drift, e.DriftFrom) {
			t.Errorf("%s: Drift %q does not name its period %s", tt.name, e.Drift, e.DriftFrom)
		}
	}
	// The insurance premium is 3,000 a quarter: 1,000 a month, posted every 3.
	for k, e := range got {
		if want := map[string]int{"6700": 3}[e.Account]; e.Every != want {
			t.Errorf("%s: posted every %d months, want %d", tests[k].name, e.Every, want)
		}
	}
	// Every cost follows the price index but rent and the lease, which are
	// fixed by contract and exempt from restating.
	for _, e := range got {
		if contract := e.Account == "6100" || e.Account == "6110"; e.Inflates == contract {
			t.Errorf("%s/%s: Inflates %v", e.Account, e.CostCenter, e.Inflates)
		}
	}
	if Deflator != "price_index" || !slices.Equal(DeflatorExempt(), []string{"6100", "6110"}) {
		t.Errorf("deflator %q exempting %v", Deflator, DeflatorExempt())
	}
	// The supervision steps of the brief: 6,000 below 1,000 frames, 9,000
	// for 1,000–1,399, 12,000 from 1,400.
	steps := got[8].Steps
	if want := []Step{{0, 6000}, {1000, 9000}, {1400, 12000}}; !slices.Equal(steps, want) {
		t.Errorf("supervision steps %v, want %v", steps, want)
	}
	for _, c := range []struct {
		frames, want float64
	}{{999, 6000}, {1000, 9000}, {1399, 9000}, {1400, 12000}, {2500, 12000}} {
		if l := level(steps, c.frames); l != c.want {
			t.Errorf("level at %v frames = %v, want %v", c.frames, l, c.want)
		}
	}
	// Expectations hands out a fresh slice: changing it changes nothing.
	got[8].Steps[0].Level = -1
	got[0].Rate = -1
	if again := Expectations(); again[8].Steps[0].Level != 6000 || again[0].Rate != 18.40 {
		t.Error("Expectations shares state between calls")
	}
}

// TestGroundTruthFromFiles recomputes every designed formula from the
// expectations and the written activity.csv and checks the ledger's monthly
// cost against it. The noise z is clipped to [−3, 3], so
// cost / formula − 1 must lie within ±3·Noise (plus half a cent of rounding).
// A cost that follows the price index is the formula at 2026-06's prices
// times the written price_index / 100 (README, Set up and try it).
func TestGroundTruthFromFiles(t *testing.T) {
	_, _, p := writeAndRead(t, DefaultSeed)
	sums, _ := p.monthly()
	for _, e := range Expectations() {
		costs := make([]float64, len(p.periods))
		for i, per := range p.periods {
			costs[i] = float64(sums[[3]string{e.Account, e.CostCenter, per}]) / 100
		}
		var driver []float64
		if e.Driver != "" {
			driver = p.series(e.Driver, e.DriverCostCenter)
		}
		prices := p.series("price_index", "")
		adjusted := 0
		for i, per := range p.periods {
			if i < e.Lag {
				continue // the lagged driver of the first months is not in the file
			}
			fixed, rate := e.Fixed, e.Rate
			if e.DriftFrom != "" && per >= e.DriftFrom {
				fixed, rate = e.DriftFixed, e.DriftRate
			}
			if !e.posted(periodIndex(per)) {
				if costs[i] != 0 {
					t.Errorf("%s/%s %s: cost %.2f between postings", e.Account, e.CostCenter, per, costs[i])
				}
				continue
			}
			var want float64
			switch e.Class {
			case "fixed":
				want = fixed
				if e.Every > 0 {
					want *= float64(e.Every) // one posting of a cost posted every few months
				}
			case "variable", "mixed":
				want = fixed + rate*driver[i-e.Lag]
			case "step":
				want = level(e.Steps, driver[i-e.Lag])
			case "unexplained":
				continue // checked below
			default:
				t.Fatalf("%s/%s: class %q", e.Account, e.CostCenter, e.Class)
			}
			if e.Inflates {
				want *= prices[i] / 100
			}
			ratio := costs[i]/want - 1
			tol := 3*e.Noise + 0.005/want
			if e.Account == "6100" && ratio > tol {
				// The one service-charge true-up of the design: at most 1 %.
				adjusted++
				tol = 0.01
			}
			if ratio < -(3*e.Noise+0.005/want) || ratio > tol {
				t.Errorf("%s/%s %s: cost %.2f, designed %.2f (ratio %+.4f, tolerance %.4f)",
					e.Account, e.CostCenter, per, costs[i], want, ratio, tol)
			}
		}
		if e.Account == "6100" && adjusted != 1 {
			t.Errorf("%s/%s: %d months with a service-charge adjustment, want 1", e.Account, e.CostCenter, adjusted)
		}
		if e.Class == "unexplained" {
			checkUnexplained(t, e, costs, p)
		}
	}
}

// checkUnexplained asserts the marketing spend swings by roughly its design
// CV and follows no driver. With 36 independent draws the sample r has a
// standard error near 1/√36 ≈ 0.17 (common practice), so |r| < 0.5 allows
// three standard errors.
func checkUnexplained(t *testing.T, e Expectation, costs []float64, p parsed) {
	t.Helper()
	var mean, ss float64
	for _, c := range costs {
		mean += c
	}
	mean /= float64(len(costs))
	for _, c := range costs {
		ss += (c - mean) * (c - mean)
	}
	cv := math.Sqrt(ss/float64(len(costs)-1)) / mean
	t.Logf("%s/%s: mean %.2f, CV %.3f", e.Account, e.CostCenter, mean, cv)
	if cv < 0.2 || cv > 0.5 {
		t.Errorf("%s/%s: CV %.3f, designed about %.2f", e.Account, e.CostCenter, cv, e.Noise)
	}
	if mean < 0.8*e.Fixed || mean > 1.2*e.Fixed {
		t.Errorf("%s/%s: mean %.2f, designed %.2f", e.Account, e.CostCenter, mean, e.Fixed)
	}
	keys := slices.SortedFunc(maps.Keys(p.units), func(a, b [2]string) int {
		return strings.Compare(a[0]+"/"+a[1], b[0]+"/"+b[1])
	})
	for _, key := range keys {
		r := pearson(costs, p.series(key[0], key[1]))
		t.Logf("r(%s/%s, %s/%s) = %+.3f", e.Account, e.CostCenter, key[0], key[1], r)
		if math.Abs(r) >= 0.5 {
			t.Errorf("%s/%s correlates with %s/%s: r = %.3f", e.Account, e.CostCenter, key[0], key[1], r)
		}
	}
}

func TestActivityDesign(t *testing.T) {
	_, _, p := writeAndRead(t, DefaultSeed)
	// Source: the activity design of the demo (README, Set up and try it).
	wantUnits := map[[2]string]string{
		{"frames_built", ""}: "frame", {"shipments", ""}: "shipment", {"orders", ""}: "order",
		{"machine_hours", "WELD"}: "machine hour", {"machine_hours", "PAINT"}: "machine hour",
		{"labour_hours", "WELD"}: "labour hour", {"labour_hours", "PAINT"}: "labour hour", {"labour_hours", "ASSY"}: "labour hour",
		{"price_index", ""}: "index point",
	}
	if fmt.Sprint(p.units) != fmt.Sprint(wantUnits) {
		t.Fatalf("drivers and units %v, want %v", p.units, wantUnits)
	}
	if len(p.activity) != 36*len(wantUnits) {
		t.Fatalf("%d activity rows, want %d", len(p.activity), 36*len(wantUnits))
	}
	frames := p.series("frames_built", "")
	shipments := p.series("shipments", "")
	orders := p.series("orders", "")
	ratioTests := []struct {
		name     string
		num, den []float64
		lo, hi   float64
		halfUnit float64 // the numerator is rounded to a unit: counts 1, hours 0.1
	}{
		{"shipments per frame", shipments, frames, 0.45, 0.75, 0.5},
		{"orders per shipment", orders, shipments, 0.80, 1.30, 0.5},
		{"WELD machine hours per frame", p.series("machine_hours", "WELD"), frames, 0.9 * 0.8, 0.9 * 1.2, 0.05},
		{"PAINT machine hours per frame", p.series("machine_hours", "PAINT"), frames, 0.5 * 0.8, 0.5 * 1.2, 0.05},
		{"WELD labour hours per frame", p.series("labour_hours", "WELD"), frames, 1.6 * 0.85, 1.6 * 1.15, 0.05},
		{"PAINT labour hours per frame", p.series("labour_hours", "PAINT"), frames, 0.8 * 0.85, 0.8 * 1.15, 0.05},
		{"ASSY labour hours per frame", p.series("labour_hours", "ASSY"), frames, 1.3 * 0.85, 1.3 * 1.15, 0.05},
	}
	for _, tt := range ratioTests {
		for i := range tt.num {
			tol := tt.halfUnit / tt.den[i]
			if r := tt.num[i] / tt.den[i]; r < tt.lo-tol || r > tt.hi+tol {
				t.Errorf("%s in %s: %.4f outside [%.3f, %.3f]", tt.name, p.periods[i], r, tt.lo, tt.hi)
			}
		}
	}
	for i := range frames {
		if frames[i] < 600 || frames[i] > 1900 {
			t.Errorf("frames %v in %s outside the designed 600–1900", frames[i], p.periods[i])
		}
	}
	// Spring/summer peak: June above December in every year the data cover.
	for _, pair := range [][2]string{{"2024-06", "2023-12"}, {"2025-06", "2024-12"}, {"2026-06", "2025-12"}} {
		june := p.activity[[3]string{pair[0], "frames_built", ""}]
		dec := p.activity[[3]string{pair[1], "frames_built", ""}]
		if june <= dec {
			t.Errorf("frames %s = %v not above %s = %v", pair[0], june, pair[1], dec)
		}
	}
	t.Logf("frames_built min %v max %v", slices.Min(frames), slices.Max(frames))
	// The price index rises 3 % a year to 100 at 2026-06: 100 · 1.03^((t − 35)/12)
	// rounded to cents of a point, t = 0 at 2023-07 (2023-07: 91.74, hand-worked).
	for i, v := range p.series("price_index", "") {
		if want := math.Round(100*math.Pow(1.03, float64(i-35)/12)*100) / 100; v != want {
			t.Errorf("price_index %s = %v, want %v", p.periods[i], v, want)
		}
	}
	if v := p.activity[[3]string{"2023-07", "price_index", ""}]; v != 91.74 {
		t.Errorf("price_index 2023-07 = %v, want 91.74", v)
	}
}

func TestActivityNumberFormat(t *testing.T) {
	dir, files, _ := writeAndRead(t, DefaultSeed)
	count := regexp.MustCompile(`^[0-9]+$`)
	hours := regexp.MustCompile(`^[0-9]+\.[0-9]$`)
	points := regexp.MustCompile(`^[0-9]+\.[0-9]{2}$`)
	for _, r := range readCSV(t, filepath.Join(dir, files.Activity))[1:] {
		pattern := count
		if strings.HasSuffix(r[1], "_hours") {
			pattern = hours
		}
		if r[1] == "price_index" {
			pattern = points
		}
		if !pattern.MatchString(r[2]) {
			t.Errorf("%s %s %s: value %q", r[0], r[1], r[3], r[2])
		}
		companyWide := r[1] == "frames_built" || r[1] == "shipments" || r[1] == "orders" || r[1] == "price_index"
		if companyWide != (r[3] == "") {
			t.Errorf("%s %s: cost centre %q", r[0], r[1], r[3])
		}
	}
}

func TestSupervisionLevels(t *testing.T) {
	_, _, p := writeAndRead(t, DefaultSeed)
	counts := map[float64]int{}
	steps := Expectations()[8].Steps
	for _, f := range p.series("frames_built", "") {
		counts[level(steps, f)]++
	}
	for _, s := range steps {
		if counts[s.Level] < 3 {
			t.Errorf("supervision level %.0f holds %d months, want at least 3", s.Level, counts[s.Level])
		}
	}
	t.Logf("months per supervision level: %v", counts)
}

func TestShipmentsCorrelateWithFrames(t *testing.T) {
	_, _, p := writeAndRead(t, DefaultSeed)
	r := pearson(p.series("shipments", ""), p.series("frames_built", ""))
	// Correlated, so the driver choice for freight and packaging is a real
	// test, but not so tightly that frames would do as well.
	if r < 0.5 || r > 0.95 {
		t.Errorf("r(shipments, frames_built) = %.3f, want 0.5–0.95", r)
	}
	t.Logf("r(shipments, frames_built) = %.4f", r)
}

func TestSplitCents(t *testing.T) {
	tests := []struct {
		name   string
		total  int64
		shares []float64
		want   []int64 // computed by hand
	}{
		{"one part", 123456, []float64{0.7}, []int64{123456}},
		{"even halves", 1001, []float64{1, 1}, []int64{501, 500}}, // round(500.5) = 501 away from zero
		{"thirds", 100, []float64{1, 1, 1}, []int64{33, 33, 34}},
		{"uneven", 1000000, []float64{0.5, 1.5}, []int64{250000, 750000}},
	}
	for _, tt := range tests {
		if got := splitCents(tt.total, tt.shares); !slices.Equal(got, tt.want) {
			t.Errorf("%s: %v, want %v", tt.name, got, tt.want)
		}
	}
}

func TestFormatCents(t *testing.T) {
	tests := []struct {
		cents int64
		want  string
	}{
		// Format of the brief: plain decimal, two decimals, '.', no separators.
		{123450, "1234.50"}, {-123450, "-1234.50"}, {5, "0.05"}, {-5, "-0.05"}, {0, "0.00"}, {100000000, "1000000.00"},
	}
	for _, tt := range tests {
		if got := formatCents(tt.cents); got != tt.want {
			t.Errorf("formatCents(%d) = %q, want %q", tt.cents, got, tt.want)
		}
	}
}

func ExampleExpectations() {
	for _, e := range Expectations() {
		formula := fmt.Sprintf("%.2f + %.2f × %s", e.Fixed, e.Rate, e.Driver)
		switch e.Class {
		case "fixed", "unexplained":
			formula = fmt.Sprintf("%.2f", e.Fixed)
		case "step":
			formula = fmt.Sprintf("from %.2f in steps on %s", e.Fixed, e.Driver)
		}
		if e.Lag > 0 {
			formula += fmt.Sprintf(" (lag %d)", e.Lag)
		}
		if e.Every > 0 {
			formula += fmt.Sprintf(" a month, %.2f every %d months", e.Fixed*float64(e.Every), e.Every)
		}
		fmt.Printf("%s/%-5s %-16s %-11s %s\n", e.Account, e.CostCenter, e.AccountName, e.Class, formula)
	}
	// Output:
	// 5100/WELD  Tubing           variable    0.00 + 18.40 × frames_built
	// 5200/PAINT Paint & coatings variable    0.00 + 6.75 × frames_built
	// 6100/WELD  Rent             fixed       4200.00
	// 6100/PAINT Rent             fixed       3100.00
	// 6100/ASSY  Rent             fixed       2600.00
	// 6110/PAINT Equipment lease  fixed       2800.00
	// 6200/WELD  Power            mixed       1850.00 + 2.35 × machine_hours
	// 6200/PAINT Power            mixed       1200.00 + 3.10 × machine_hours
	// 6300/ASSY  Supervision      step        from 6000.00 in steps on frames_built
	// 6400/ASSY  Freight out      variable    0.00 + 14.50 × shipments
	// 6420/ASSY  Packaging        variable    0.00 + 3.20 × shipments
	// 6500/WELD  Maintenance      mixed       900.00 + 1.10 × machine_hours (lag 1)
	// 6600/ASSY  Marketing        unexplained 2500.00
	// 6700/ASSY  Insurance        fixed       1000.00 a month, 3000.00 every 3 months
}

// The plans follow the demo company's planning rule: the same month a year
// before plus 5 %, frames and shipments to tens, machine hours to hours;
// the closed quarter is the data's last, the next one follows it.
func TestPlans(t *testing.T) {
	dir, files, p := writeAndRead(t, DefaultSeed)
	if files.PlanClosed != filepath.Join("plans", "plan-2026-q2.csv") || files.PlanNext != filepath.Join("plans", "plan-2026-q3.csv") {
		t.Fatalf("plans %q and %q", files.PlanClosed, files.PlanNext)
	}
	for _, c := range []struct {
		file    string
		periods []string
	}{{files.PlanClosed, []string{"2026-04", "2026-05", "2026-06"}}, {files.PlanNext, []string{"2026-07", "2026-08", "2026-09"}}} {
		rows := readCSV(t, filepath.Join(dir, c.file))
		if strings.Join(rows[0], ",") != "period,driver,value,cost_center" || len(rows) != 1+3*5 {
			t.Fatalf("%s: header %v, %d rows (want 15: frames, shipments, machine hours of WELD and PAINT, the price index, 3 months)", c.file, rows[0], len(rows)-1)
		}
		for _, r := range rows[1:] {
			if !slices.Contains(c.periods, r[0]) {
				t.Errorf("%s: period %s", c.file, r[0])
			}
			at, _ := time.Parse("2006-01", r[0])
			if r[1] == "price_index" {
				// Planned at 3 % a year from 100 at 2026-06 (hand-worked).
				months := (at.Year()-2026)*12 + int(at.Month()) - 6
				if want := strconv.FormatFloat(math.Round(100*math.Pow(1.03, float64(months)/12)*100)/100, 'f', 2, 64); r[2] != want || r[3] != "" {
					t.Errorf("%s: price index %s planned %s for %q, want %s company-wide", c.file, r[0], r[2], r[3], want)
				}
				continue
			}
			before := p.activity[[3]string{at.AddDate(-1, 0, 0).Format("2006-01"), r[1], r[3]}]
			want := math.Round(before*PlanGrowth/10) * 10
			if r[1] == "machine_hours" {
				want = math.Round(before * PlanGrowth)
			}
			if got, _ := strconv.ParseFloat(r[2], 64); got != want || before == 0 {
				t.Errorf("%s: %v planned %s, want %v (a year before %v × 1.05)", c.file, r[:2], r[2], want, before)
			}
		}
	}
}

// TestLateInvoiceAccrued: one welder-servicing invoice comes a month late
// and is accrued: a journal entry on the month's last day, reversed on the
// 1st of the next month by the same amount, and the invoice booked in that
// month; each month's cost stays the designed one (TestLedgerCarriesDesignedCost).
func TestLateInvoiceAccrued(t *testing.T) {
	_, _, p := writeAndRead(t, DefaultSeed)
	var journal []ledgerRow
	for _, r := range p.ledger {
		if strings.HasPrefix(r.entryID, "GJ-") && r.costCenter != "" {
			journal = append(journal, r)
		}
	}
	if len(journal) != 2 {
		t.Fatalf("%d accrual lines on cost objects, want the accrual and its reversal", len(journal))
	}
	accrual, reversal := journal[0], journal[1]
	if accrual.account != "6500" || accrual.costCenter != "WELD" || accrual.cents <= 0 || reversal.cents != -accrual.cents ||
		reversal.account != accrual.account || reversal.costCenter != accrual.costCenter {
		t.Errorf("accrual %+v and reversal %+v", accrual, reversal)
	}
	if accrual.date.AddDate(0, 0, 1) != reversal.date || reversal.date.Day() != 1 || accrual.date.Format("2006-01") < accrualFrom {
		t.Errorf("accrued on %s, reversed on %s: want the last day of a month from %s and the 1st of the next",
			accrual.date.Format(time.DateOnly), reversal.date.Format(time.DateOnly), accrualFrom)
	}
	job := strings.TrimSuffix(strings.TrimPrefix(accrual.description, "Accrual: "), ", invoice to come")
	invoiced := false
	for _, r := range p.ledger {
		invoiced = invoiced || strings.HasPrefix(r.entryID, "AP-") && r.description == job && r.cents == accrual.cents &&
			r.date.Format("2006-01") == reversal.date.Format("2006-01")
	}
	if !invoiced || reversal.description != "Reversal of accrual: "+job {
		t.Errorf("the invoice of %q is not booked in %s beside its reversal %q", job, reversal.date.Format("2006-01"), reversal.description)
	}
}
