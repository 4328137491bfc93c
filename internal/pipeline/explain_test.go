package pipeline

import (
	"context"
	"database/sql"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"github.com/costdrift/costdrift/internal/chart"
	"github.com/costdrift/costdrift/internal/demo"
	"github.com/costdrift/costdrift/internal/sqlite"
)

// today is the injected clock: every demo period (2023-07 to 2026-06) is closed.
func today() time.Time { return time.Date(2026, 12, 1, 9, 0, 0, 0, time.UTC) }

// demoStore writes the invented company's books and the starter config
// into a new folder, syncs and analyses them as the demo does, and returns
// the config's and the store's paths.
func demoStore(t *testing.T) (cfg, store string) {
	t.Helper()
	dir := t.TempDir()
	if _, err := demo.Write(dir, demo.DefaultSeed); err != nil {
		t.Fatal(err)
	}
	cfg = filepath.Join(dir, "costdrift.yaml")
	if err := os.WriteFile(cfg, []byte(demoConfig(t)), 0o600); err != nil {
		t.Fatal(err)
	}
	e, err := Load(cfg, today)
	if err != nil {
		t.Fatal(err)
	}
	ctx := context.Background()
	db, closeStore, err := e.OpenToWrite(ctx, false)
	if err != nil {
		t.Fatal(err)
	}
	defer closeStore()
	if _, err := Sync(ctx, e, db, nil); err != nil {
		t.Fatal(err)
	}
	if _, err := Analyze(ctx, e, db, false); err != nil {
		t.Fatal(err)
	}
	return cfg, e.Config.StorePath()
}

// The points explain and the mail charts draw are the periods the analysis
// fitted, read back from the store; each class draws its own layers.
func TestExplainPointsAndChartLayers(t *testing.T) {
	cfg, store := demoStore(t)
	t.Run("points are the periods the analysis fitted", func(t *testing.T) {
		checkPoints(t, cfg, store, "6500/WELD", "6500", "WELD", "machine_hours", 1, 35)
		checkPoints(t, cfg, store, "6300/ASSY", "6300", "ASSY", "frames_built", 0, 36)
	})
	t.Run("chart layers", func(t *testing.T) { checkChartLayers(t, cfg, store) })
}

// checkPoints compares the periods explain charts with the cost_series and cost_with_drivers views
// read independently: each point's cost is the object's amount in its
// period, restated at 2026-06's prices by the demo's price index (100 then:
// amount × 100 / index of the period), its activity the driver's value lag
// months before.
func checkPoints(t *testing.T, cfg, store, object, account, costCenter, driver string, lag, n int) {
	t.Helper()
	e, db := openDemo(t, cfg)
	ctx := context.Background()
	oa, err := db.ObjectAnalysis(ctx, object)
	if err != nil {
		t.Fatal(err)
	}
	pts, err := analysedPoints(ctx, e, db, db.CostPerPeriod, oa, 1)
	if err != nil {
		t.Fatal(err)
	}
	if len(pts) != n || len(pts) != oa.Behaviour.N {
		t.Fatalf("%s: %d points, want the %d periods fitted", object, len(pts), n)
	}

	view, err := sql.Open("sqlite3", "file:"+store+"?mode=ro")
	if err != nil {
		t.Fatal(err)
	}
	defer view.Close()
	value := func(query string, args ...any) float64 {
		var v float64
		if err := view.QueryRow(query, args...).Scan(&v); err != nil {
			t.Fatalf("%s %v: %v", query, args, err)
		}
		return v
	}
	for _, p := range pts {
		month, _ := time.Parse("2006-01", p.Period)
		before := month.AddDate(0, -lag, 0).Format("2006-01")
		cost := value(`SELECT amount FROM cost_series WHERE account = ? AND cost_center = ? AND period = ?`,
			account, costCenter, p.Period) * 100 / value(`SELECT value FROM activity WHERE driver = 'price_index' AND period = ?`, p.Period)
		activity := value(`SELECT driver_value FROM cost_with_drivers WHERE account = ? AND cost_center = ? AND driver = ? AND period = ?`,
			account, costCenter, driver, before)
		if math.Abs(p.Cost-cost) > 0.005 || p.Activity != activity {
			t.Errorf("%s %s: point (%v, %v), want cost %v beside %s of %s, %v", object, p.Period, p.Activity, p.Cost, cost, driver, before, activity)
		}
	}
	hl := oa.Behaviour.HighLow
	for _, p := range pts {
		if p.Period == hl.HighPeriod && (p.Activity != hl.HighActivity || p.Cost != hl.HighCost) {
			t.Errorf("%s high point %+v, stored %+v", object, p, *hl)
		}
	}
	if first := pts[0].Period; first != oa.Behaviour.Since {
		t.Errorf("%s: first point %s, behaviour since %s", object, first, oa.Behaviour.Since)
	}
}

// openDemo loads the config and opens the store as the commands do; the
// store is closed when the test ends.
func openDemo(t *testing.T, cfg string) (*Env, *sqlite.DB) {
	t.Helper()
	e, err := Load(cfg, today)
	if err != nil {
		t.Fatal(err)
	}
	db, err := e.OpenToRead(context.Background(), true)
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { db.Close() })
	return e, db
}

// checkChartLayers checks what each class draws: a step cost its levels
// without the straight line's outliers, a variable cost a line through
// zero, a formula with a second driver the line at that driver's mean.
func checkChartLayers(t *testing.T, cfg, store string) {
	e, db := openDemo(t, cfg)
	ctx := context.Background()
	layers := func(object string, change func(*sqlite.ObjectAnalysis)) chart.Scatter {
		oa, err := db.ObjectAnalysis(ctx, object)
		if err != nil {
			t.Fatal(err)
		}
		if change != nil {
			change(&oa)
		}
		pts, err := analysedPoints(ctx, e, db, db.CostPerPeriod, oa, 1)
		if err != nil {
			t.Fatal(err)
		}
		s, err := scatter(ctx, e, db, oa, pts, "name", "formula", 1)
		if err != nil {
			t.Fatal(err)
		}
		if err := s.Validate(); err != nil {
			t.Errorf("%s: %v", object, err)
		}
		return s
	}

	step := layers("6300/ASSY", nil)
	if step.Fit != nil || len(step.Steps) != 3 || step.Steps[1].Level != 8977.125089410394 || step.HighLow == nil {
		t.Errorf("step chart: fit %v, steps %+v, high-low %v", step.Fit, step.Steps, step.HighLow)
	}
	for _, p := range step.Points {
		if p.Outlier {
			t.Errorf("step chart marks %s, an outlier of the straight line only", p.Period)
		}
	}

	variable := layers("5100/WELD", nil)
	if variable.Fit == nil || variable.Fit.Fixed != 0 || math.Abs(variable.Fit.Rate-18.4) > 0.03*18.4 { // designed rate 18.40 (demo)
		t.Errorf("variable chart line %+v, want cost = 18.4 per frame through zero", variable.Fit)
	}

	mixed := layers("6500/WELD", nil)
	if mixed.Fit == nil || mixed.Fit.Fixed != 931.1810266277805 || mixed.Fit.Rate != 1.071207426763338 || mixed.XLabel != "machine hours of the period before" {
		t.Errorf("mixed chart line %+v, x label %q", mixed.Fit, mixed.XLabel)
	}
	outliers := 0
	for _, p := range mixed.Points {
		if p.Outlier {
			outliers++
		}
	}
	if outliers != 3 {
		t.Errorf("mixed chart marks %d outliers, want the 3 stored", outliers)
	}

	// No demo cost has a second driver: give 6500/WELD one, orders of the
	// same period, and check the line holds it at its mean over the points.
	two := layers("6500/WELD", func(oa *sqlite.ObjectAnalysis) {
		b := &oa.Behaviour
		b.Driver2, b.Lag2, b.VariableRate2, b.FixedPerPeriod = "orders", 0, 0.5, 100
	})
	view, err := sql.Open("sqlite3", "file:"+store+"?mode=ro")
	if err != nil {
		t.Fatal(err)
	}
	defer view.Close()
	var mean float64
	if err := view.QueryRow(`SELECT AVG(driver_value) FROM cost_with_drivers WHERE account = '6500' AND cost_center = 'WELD'
		AND driver = 'orders' AND period BETWEEN '2023-08' AND '2026-06'`).Scan(&mean); err != nil {
		t.Fatal(err)
	}
	if two.Fit == nil || math.Abs(two.Fit.Fixed-(100+0.5*mean)) > 1e-9 || !strings.Contains(two.Fit.Label, "mean orders") {
		t.Errorf("two-driver line %+v, want fixed 100 + 0.5 × mean orders %v", two.Fit, mean)
	}
}
