package pipeline

import (
	"context"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"
	"time"

	"github.com/costdrift/costdrift/internal/config"
	"github.com/costdrift/costdrift/internal/costdrift"
	"github.com/costdrift/costdrift/internal/report"
	"github.com/costdrift/costdrift/internal/sqlite"
)

// inflationBooks writes invented books for 36 months, 2023-07 to 2026-06,
// under a price index rising 5 % a year (cpi_t = 100 · 1.05^(t/12)):
//
//	6100/ADMIN  5,000 a month at 2023-07 prices, constant in real terms:
//	            posted 5,000 · cpi_t / 100 · (1 + e_t), e_t ~ N(0, 1 %)
//	6300/ADMIN  2,400 a month fixed by contract: posted as it is
//
// and an activity series (machine_hours) unrelated to either. indexFor
// may change the index written for a period (ok false leaves it out). The
// config is the starter with deflator (and its exempt list) set as given.
// It returns the synced environment and store.
func inflationBooks(t *testing.T, deflator string, exempt []string, indexFor func(period string, v float64) (float64, bool)) (*Env, *sqlite.DB) {
	t.Helper()
	dir := t.TempDir()
	if err := os.MkdirAll(filepath.Join(dir, "data", "gl"), 0o755); err != nil {
		t.Fatal(err)
	}
	rng := rand.New(rand.NewPCG(20261205, 5))
	var gl, act strings.Builder
	gl.WriteString("entry_id,line,date,account,cost_center,amount,description\n")
	act.WriteString("period,driver,value,cost_center,unit\n")
	for m := range 36 {
		period := fmt.Sprintf("%d-%02d", 2023+(6+m)/12, (6+m)%12+1)
		cpi := 100 * math.Pow(1.05, float64(m)/12)
		admin := 5000 * cpi / 100 * (1 + 0.01*rng.NormFloat64())
		fmt.Fprintf(&gl, "E%d,1,%s-15,6100,ADMIN,%.2f,office\n", m, period, admin)
		fmt.Fprintf(&gl, "E%d,2,%s-15,6300,ADMIN,2400.00,lease\n", m, period)
		fmt.Fprintf(&act, "%s,machine_hours,%d,,machine hour\n", period, 800+rng.IntN(400))
		if v, ok := indexFor(period, cpi); ok {
			fmt.Fprintf(&act, "%s,cpi,%.6f,,index point\n", period, v)
		}
	}
	for name, text := range map[string]string{"data/gl/gl.csv": gl.String(), "data/activity.csv": act.String()} {
		if err := os.WriteFile(filepath.Join(dir, name), []byte(text), 0o600); err != nil {
			t.Fatal(err)
		}
	}
	yaml := strings.Replace(config.Starter, `deflator: ""`, fmt.Sprintf("deflator: %q", deflator), 1)
	if len(exempt) > 0 {
		yaml = strings.Replace(yaml, "deflator_exempt: []", "deflator_exempt: ["+strings.Join(exempt, ", ")+"]", 1)
	}
	cfg := filepath.Join(dir, "costdrift.yaml")
	if err := os.WriteFile(cfg, []byte(yaml), 0o600); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(filepath.Join(dir, "data", "accounts.csv"), []byte("account,name\n6100,Office costs\n6300,Lease\n"), 0o600); err != nil {
		t.Fatal(err)
	}
	return openSynced(t, cfg)
}

func asPublished(_ string, v float64) (float64, bool) { return v, true }

// analyseAndRaise analyses every object and raises the alerts; it returns
// the current behaviours by object and the open alerts' kinds by object.
func analyseAndRaise(t *testing.T, e *Env, db *sqlite.DB) (map[string]costdrift.Behaviour, map[string][]costdrift.AlertKind) {
	t.Helper()
	ctx := context.Background()
	res, err := Analyze(ctx, e, db, true)
	if err != nil {
		t.Fatal(err)
	}
	if _, err := Raise(ctx, e, db, res); err != nil {
		t.Fatal(err)
	}
	byObject := currentBehaviours(t, db)
	open, err := db.Alerts(ctx, sqlite.AlertFilter{})
	if err != nil {
		t.Fatal(err)
	}
	kinds := map[string][]costdrift.AlertKind{}
	for _, a := range open {
		kinds[a.Object] = append(kinds[a.Object], a.Kind)
	}
	return byObject, kinds
}

// currentBehaviours returns the store's current behaviours by object.
func currentBehaviours(t *testing.T, db *sqlite.DB) map[string]costdrift.Behaviour {
	t.Helper()
	bs, err := db.CurrentBehaviour(context.Background())
	if err != nil {
		t.Fatal(err)
	}
	byObject := map[string]costdrift.Behaviour{}
	for _, b := range bs {
		byObject[b.Object.String()] = b
	}
	return byObject
}

// TestConstantInRealTerms: a cost constant in real terms under 5 %
// inflation a year is fixed at its restated level, with no break and no
// alert, once restated by the index; the same books analysed as posted
// follow the price level, and a cost fixed by contract and exempt from the
// index stays fixed at its posted amount either way (README, Prices and
// inflation).
func TestConstantInRealTerms(t *testing.T) {
	// The restated level: 5,000 at 2023-07 prices is 5,000 · 1.05^(35/12) =
	// 5,765.66 at 2026-06's (hand-worked, common practice); the 1 % noise
	// of 36 months moves the mean by about 0.17 % (1 % / √36).
	realLevel := 5000 * math.Pow(1.05, 35.0/12)

	t.Run("restated", func(t *testing.T) {
		e, db := inflationBooks(t, "cpi", []string{"6300/ADMIN"}, asPublished)
		// Rolled forward month by month, as the daemon would: the price
		// base moves with the newest period, and no alert follows from it.
		for _, now := range []time.Time{time.Date(2026, 3, 20, 0, 0, 0, 0, time.UTC), time.Date(2026, 4, 20, 0, 0, 0, 0, time.UTC),
			time.Date(2026, 5, 20, 0, 0, 0, 0, time.UTC)} {
			e.Now = func() time.Time { return now }
			if bs, alerts := analyseAndRaise(t, e, db); bs["6100/ADMIN"].PriceBase != now.AddDate(0, -1, 0).Format("2006-01") || len(alerts) > 0 {
				t.Errorf("analysed on %s: price base %q, alerts %v", now.Format("2006-01-02"), bs["6100/ADMIN"].PriceBase, alerts)
			}
		}
		e.Now = today
		bs, alerts := analyseAndRaise(t, e, db)
		admin := bs["6100/ADMIN"]
		if admin.Class != costdrift.Fixed || admin.Break != nil || admin.PriceBase != "2026-06" {
			t.Fatalf("6100/ADMIN restated: class %s, break %v, price base %q; want fixed, no break, at 2026-06's prices (%s)",
				admin.Class, admin.Break, admin.PriceBase, admin.Reason)
		}
		if math.Abs(admin.FixedPerPeriod-realLevel) > 0.01*realLevel {
			t.Errorf("6100/ADMIN fixed %.2f a month, want %.2f within 1 %%", admin.FixedPerPeriod, realLevel)
		}
		if len(alerts["6100/ADMIN"]) > 0 {
			t.Errorf("6100/ADMIN restated has alerts %v, want none", alerts["6100/ADMIN"])
		}
		lease := bs["6300/ADMIN"]
		if lease.Class != costdrift.Fixed || lease.FixedPerPeriod != 2400 || lease.PriceBase != "" || len(alerts["6300/ADMIN"]) > 0 {
			t.Errorf("6300/ADMIN exempt: class %s, fixed %v, price base %q, alerts %v; want fixed 2400 as posted, no alert",
				lease.Class, lease.FixedPerPeriod, lease.PriceBase, alerts["6300/ADMIN"])
		}
		for _, b := range bs {
			if b.Driver == "cpi" || b.Driver2 == "cpi" {
				t.Errorf("%s is driven by the price index, which is no driver once it restates", b.Object)
			}
		}
	})

	t.Run("as posted", func(t *testing.T) {
		e, db := inflationBooks(t, "", nil, asPublished)
		bs, alerts := analyseAndRaise(t, e, db)
		admin := bs["6100/ADMIN"]
		// The price index is a driver candidate like any other activity, and
		// the cost follows it: "cost = 50.12 per index point".
		if admin.Class != costdrift.Variable || admin.Driver != "cpi" || admin.PriceBase != "" {
			t.Errorf("6100/ADMIN as posted: %s on %q at prices %q, want variable on cpi, as posted (%s)", admin.Class, admin.Driver, admin.PriceBase, admin.Reason)
		}
		// 5,000 per 100 index points at 2023-07 prices: 50 per point (hand-worked).
		if math.Abs(admin.VariableRate-50) > 0.5 {
			t.Errorf("6100/ADMIN as posted: rate %.4f per index point, want 50 within 1 %%", admin.VariableRate)
		}
		if len(alerts["6100/ADMIN"]) > 0 {
			t.Errorf("6100/ADMIN as posted has alerts %v on its first analysis", alerts["6100/ADMIN"])
		}
		if lease := bs["6300/ADMIN"]; lease.Class != costdrift.Fixed || lease.FixedPerPeriod != 2400 {
			t.Errorf("6300/ADMIN as posted: %s %v, want fixed 2400", lease.Class, lease.FixedPerPeriod)
		}
	})

	t.Run("as posted without the index", func(t *testing.T) {
		e, db := inflationBooks(t, "", nil, func(string, float64) (float64, bool) { return 0, false })
		bs, alerts := analyseAndRaise(t, e, db)
		admin := bs["6100/ADMIN"]
		// Without the index the posted cost drifts: the break test dates a
		// shift of its level, and the formula holds from then on.
		if admin.Class != costdrift.Fixed || admin.Break == nil || admin.Break.P >= e.Config.Analysis.BreakAlpha {
			t.Fatalf("6100/ADMIN as posted without the index: %s, break %+v; want fixed after a significant break (%s)", admin.Class, admin.Break, admin.Reason)
		}
		if shift := admin.Break.FixedAfter / admin.Break.FixedBefore; shift < 1.05 {
			t.Errorf("6100/ADMIN's level moved by %.3f at the break, want at least 5 %% (prices rise 5 %% a year)", shift)
		}
		if len(alerts["6100/ADMIN"]) > 0 {
			t.Errorf("6100/ADMIN as posted without the index has alerts %v on its first analysis", alerts["6100/ADMIN"])
		}
	})
}

// TestDeflatorBadIndex: a price index without a value, or with zero, for
// a period of the window stops the analysis with the series and the
// period named; nothing is analysed (README, Prices and inflation).
func TestDeflatorBadIndex(t *testing.T) {
	tests := []struct {
		name    string
		index   func(string, float64) (float64, bool)
		want    string
		deflate string
	}{
		{"missing period", func(p string, v float64) (float64, bool) { return v, p != "2025-02" }, "cpi",
			`price index "cpi" has no value for 2025-02, so costs of 2025-02 cannot be restated; nothing was analysed`},
		{"zero", func(p string, v float64) (float64, bool) {
			if p == "2024-11" {
				return 0, true
			}
			return v, true
		}, "cpi", `price index "cpi" is 0 in 2024-11; an index must be above zero to restate costs by it; nothing was analysed`},
		{"unknown series", asPublished, "ppi", `no activity series "ppi" in the store (series read: cpi, machine_hours)`},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			e, db := inflationBooks(t, tc.deflate, nil, tc.index)
			_, err := Analyze(context.Background(), e, db, true)
			if err == nil || !strings.Contains(err.Error(), tc.want) || !strings.Contains(err.Error(), "analysis.deflator in "+e.Config.File) {
				t.Fatalf("Analyze: %v\nwant an error with %q", err, tc.want)
			}
			runs, err := db.SQL().QueryContext(context.Background(), `SELECT COUNT(*) FROM behaviour_history`)
			if err != nil {
				t.Fatal(err)
			}
			defer runs.Close()
			var n int
			for runs.Next() {
				if err := runs.Scan(&n); err != nil {
					t.Fatal(err)
				}
			}
			if n != 0 {
				t.Errorf("%d behaviours stored after the error, want none", n)
			}
		})
	}
}

// TestBudgetAtPlannedPrices: a formula at prices of 2026-06 budgets a
// later period at that period's prices, by the plan's figure of the index
// when the plan has one, else by the newest synced one, which the line
// says; an exempt cost and a period's variance follow the same rule
// (README, Prices and inflation).
func TestBudgetAtPlannedPrices(t *testing.T) {
	e, db := inflationBooks(t, "cpi", []string{"6300/ADMIN"}, asPublished)
	ctx := context.Background()
	bs, _ := analyseAndRaise(t, e, db)
	admin := bs["6100/ADMIN"]
	if admin.Class != costdrift.Fixed || admin.PriceBase != "2026-06" {
		t.Fatalf("6100/ADMIN: %s at prices of %q, want fixed at 2026-06's", admin.Class, admin.PriceBase)
	}
	// The synced index of 2026-06 as the books wrote it (%.6f), and the
	// plan's for 2026-07; 2026-08 has none in the plan.
	june := math.Round(100*math.Pow(1.05, 35.0/12)*1e6) / 1e6
	plan := filepath.Join(t.TempDir(), "plan.csv")
	if err := os.WriteFile(plan, []byte("period,driver,value\n2026-07,machine_hours,1000\n2026-07,cpi,116.0\n2026-08,machine_hours,1000\n"), 0o600); err != nil {
		t.Fatal(err)
	}
	got, err := Budget(ctx, e, db, plan, "")
	if err != nil {
		t.Fatal(err)
	}
	lines := map[string]costdrift.BudgetLine{}
	for _, l := range got.Lines {
		if l.Kind == costdrift.LineObject {
			lines[l.Object.String()+" "+l.Period] = l
		}
	}
	// index ratio, hand-worked (common practice): 2026-07 at the plan's
	// 116.0 over 2026-06's synced value.
	july := lines["6100/ADMIN 2026-07"]
	if want := admin.FixedPerPeriod * 116.0 / june; math.Abs(july.Value-want) > 1e-9*want || july.Warning != "" {
		t.Errorf("6100/ADMIN 2026-07 budget %.6f (%q), want %.6f at the plan's index, no warning", july.Value, july.Warning, want)
	}
	august := lines["6100/ADMIN 2026-08"]
	wantNote := "at prices of 2026-06, the newest of cpi: no cpi for 2026-08 in the plan"
	if math.Abs(august.Value-admin.FixedPerPeriod) > 1e-9*admin.FixedPerPeriod || august.Warning != wantNote {
		t.Errorf("6100/ADMIN 2026-08 budget %.6f (%q), want %.6f (%q)", august.Value, august.Warning, admin.FixedPerPeriod, wantNote)
	}
	for _, p := range []string{"2026-07", "2026-08"} {
		if l := lines["6300/ADMIN "+p]; l.Value != 2400 || l.Warning != "" {
			t.Errorf("6300/ADMIN %s (exempt) budget %v (%q), want 2400 as posted", p, l.Value, l.Warning)
		}
	}

	// A variance of 2025-06 moves the formula to that period's prices by
	// the synced index.
	v, err := Variance(ctx, e, db, "2025-06", "", "")
	if err != nil {
		t.Fatal(err)
	}
	june2025 := math.Round(100*math.Pow(1.05, 23.0/12)*1e6) / 1e6
	for _, l := range v.Lines {
		if l.Kind == costdrift.LineObject && l.Object.String() == "6100/ADMIN" {
			if want := admin.FixedPerPeriod * june2025 / june; math.Abs(l.Flexible.Value-want) > 1e-9*want {
				t.Errorf("6100/ADMIN 2025-06 flexible budget %.6f, want %.6f at 2025-06's prices", l.Flexible.Value, want)
			}
		}
	}
}

// TestExplainRestated: explain sets each period's cost as posted beside
// the index and the cost restated at the formula's prices, and its charts
// draw the restated costs the formula was fitted on; an exempt object has
// no such table (README, Prices and inflation).
func TestExplainRestated(t *testing.T) {
	e, db := inflationBooks(t, "cpi", []string{"6300/ADMIN"}, asPublished)
	ctx := context.Background()
	if _, err := Analyze(ctx, e, db, true); err != nil {
		t.Fatal(err)
	}
	ex, charts, err := Explain(ctx, e, db, "6100/ADMIN", true)
	if err != nil {
		t.Fatal(err)
	}
	p := ex.Prices
	if p == nil || p.Series != "cpi" || p.Base != "2026-06" || len(p.Periods) != 36 {
		t.Fatalf("prices %+v, want cpi at 2026-06 over 36 periods", p)
	}
	if !strings.HasSuffix(ex.Formula, " at prices of 2026-06") || len(ex.Notes) != 0 {
		t.Errorf("formula %q, notes %q", ex.Formula, ex.Notes)
	}
	// The index as the books wrote it (%.6f); restated = posted × index
	// 2026-06 / index then (hand-worked, common practice).
	june := math.Round(100*math.Pow(1.05, 35.0/12)*1e6) / 1e6
	first := p.Periods[0]
	if first.Period != "2023-07" || first.Index == nil || *first.Index != 100 || first.Restated == nil ||
		math.Abs(*first.Restated-first.Posted*june/100) > 1e-9*first.Posted {
		t.Errorf("2023-07: %+v, want index 100 and restated = posted × %.6f / 100", first, june)
	}
	last := p.Periods[35]
	if last.Restated == nil || *last.Restated != last.Posted {
		t.Errorf("2026-06, the base: %+v, want restated = posted", last)
	}
	if charts == nil || charts.Timeline == nil || len(charts.Timeline.Points) != 36 {
		t.Fatalf("timeline %+v", charts)
	}
	for i, pt := range charts.Timeline.Points {
		if math.Abs(pt.Cost-*p.Periods[i].Restated) > 0.005 {
			t.Errorf("timeline %s draws %.2f, want the restated %.4f", pt.Period, pt.Cost, *p.Periods[i].Restated)
		}
	}
	var text strings.Builder
	if err := report.ExplainText(&text, ex, "EUR"); err != nil {
		t.Fatal(err)
	}
	for _, want := range []string{"Prices: the formula is at prices of 2026-06; each period's cost was restated by the price index cpi",
		"PERIOD     POSTED   INDEX  RESTATED", "2026-06  " + report.Number(last.Posted, 2)} {
		if !strings.Contains(text.String(), want) {
			t.Errorf("explain text lacks %q:\n%s", want, text.String())
		}
	}
	lease, _, err := Explain(ctx, e, db, "6300/ADMIN", false)
	if err != nil {
		t.Fatal(err)
	}
	if lease.Prices != nil || strings.Contains(lease.Formula, "prices") {
		t.Errorf("6300/ADMIN (exempt): prices %+v, formula %q", lease.Prices, lease.Formula)
	}
}

// A price index kept per cost centre only is not the company's index: the
// analysis stops and says to give it company-wide (README, Prices and
// inflation).
func TestDeflatorPerCostCentre(t *testing.T) {
	activity := []costdrift.ActivityValue{{Period: "2026-05", Driver: "cpi", CostCenter: "WELD", Value: 100},
		{Period: "2026-06", Driver: "cpi", CostCenter: "WELD", Value: 101}}
	_, err := deflationOf("cpi", nil, activity, []string{"2026-05", "2026-06"}, "costdrift.yaml")
	want := `analysis.deflator in costdrift.yaml: the price index "cpi" is kept per cost centre only; give it company-wide (without a cost centre) in its activity source and run costdrift sync`
	if err == nil || err.Error() != want {
		t.Errorf("deflationOf: %v\nwant %s", err, want)
	}
}

// A break-even is taken at the reference period's prices, as that period's
// budget is: a formula fitted on restated costs is moved there by the
// plan's index, else the newest synced one, and the note says so; a cost
// exempt from restating stays as posted.
func TestBreakEvenAtTheReferencePeriodsPrices(t *testing.T) {
	e, db := inflationBooks(t, "cpi", []string{"6300/ADMIN"}, asPublished)
	ctx := context.Background()
	// A cost the volume drives: 3 a machine hour at 2023-07 prices,
	// posted at the prices of its month.
	values, err := db.Activity(ctx)
	if err != nil {
		t.Fatal(err)
	}
	index := map[string]float64{}
	for _, v := range values {
		if v.Driver == "cpi" {
			index[v.Period] = v.Value
		}
	}
	var gl strings.Builder
	gl.WriteString("entry_id,line,date,account,cost_center,amount,description\n")
	for _, v := range values {
		if v.Driver == "machine_hours" {
			fmt.Fprintf(&gl, "V%s,1,%s-20,5100,SHOP,%.2f,parts\n", v.Period, v.Period, 3*v.Value*index[v.Period]/100)
		}
	}
	if err := os.WriteFile(e.Config.Path("data/gl/parts.csv"), []byte(gl.String()), 0o600); err != nil {
		t.Fatal(err)
	}
	if _, err := Sync(ctx, e, db, nil); err != nil {
		t.Fatal(err)
	}
	if _, err := Analyze(ctx, e, db, true); err != nil {
		t.Fatal(err)
	}
	bs := currentBehaviours(t, db)
	admin, parts := bs["6100/ADMIN"], bs["5100/SHOP"]
	if parts.Class != costdrift.Variable || parts.Driver != "machine_hours" || parts.PriceBase != "2026-06" {
		t.Fatalf("5100/SHOP: %s on %q at prices of %q, want variable on machine_hours at 2026-06's", parts.Class, parts.Driver, parts.PriceBase)
	}
	june := math.Round(100*math.Pow(1.05, 35.0/12)*1e6) / 1e6
	plan := filepath.Join(t.TempDir(), "plan.csv")
	if err := os.WriteFile(plan, []byte("period,driver,value\n2026-07,machine_hours,1000\n2026-07,cpi,116.0\n2026-08,machine_hours,1000\n"), 0o600); err != nil {
		t.Fatal(err)
	}
	for _, c := range []struct {
		period string
		factor float64 // index ratio, hand-worked (common practice)
		note   string
	}{
		{"2026-07", 116.0 / june, ""},
		{"2026-08", 1, "at prices of 2026-06, the newest of cpi: no cpi for 2026-08 in the plan"},
	} {
		got, err := BreakEven(ctx, e, db, BreakEvenRequest{Driver: "machine_hours", Price: 20, PlanPath: plan, Period: c.period})
		if err != nil {
			t.Fatal(err)
		}
		fixed, perUnit := map[string]float64{}, map[string]float64{}
		for _, p := range got.Parts {
			fixed[p.Object.String()], perUnit[p.Object.String()] = p.Fixed, p.PerUnit
		}
		if want := parts.VariableRate * c.factor; math.Abs(perUnit["5100/SHOP"]-want) > 1e-9*want {
			t.Errorf("%s: 5100/SHOP %.6f a machine hour, want %.6f at the period's prices", c.period, perUnit["5100/SHOP"], want)
		}
		if want := admin.FixedPerPeriod * c.factor; math.Abs(fixed["6100/ADMIN"]-want) > 1e-9*want {
			t.Errorf("%s: 6100/ADMIN fixed %.6f, want %.6f at the period's prices", c.period, fixed["6100/ADMIN"], want)
		}
		if fixed["6300/ADMIN"] != 2400 {
			t.Errorf("%s: 6300/ADMIN (exempt) fixed %v, want 2400 as posted", c.period, fixed["6300/ADMIN"])
		}
		if c.note != "" && !slices.Contains(got.Notes, c.note) {
			t.Errorf("%s: notes %q lack %q", c.period, got.Notes, c.note)
		}
	}
}
