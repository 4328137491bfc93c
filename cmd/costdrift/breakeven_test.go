package main

import (
	"encoding/csv"
	"encoding/json"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"github.com/costdrift/costdrift/internal/budget"
	"github.com/costdrift/costdrift/internal/costdrift"
	"github.com/costdrift/costdrift/internal/pipeline"
)

type breakevenOut struct {
	VolumeDriver    string   `json:"volume_driver"`
	Price           float64  `json:"price"`
	PriceFrom       string   `json:"price_from"`
	ReferencePeriod string   `json:"reference_period"`
	ReferenceFrom   string   `json:"reference_from"`
	ReferenceVolume *float64 `json:"reference_volume"`
	Figures         map[string]struct {
		Value, Low95, High95 *float64
	} `json:"figures"`
	RangeLow  *float64 `json:"relevant_range_low"`
	RangeHigh *float64 `json:"relevant_range_high"`
	Costs     []struct {
		Account        string  `json:"account"`
		CostCenter     string  `json:"cost_center"`
		Class          string  `json:"class"`
		FixedPerPeriod float64 `json:"fixed_per_period"`
		PerUnit        float64 `json:"per_unit"`
		How            string  `json:"how"`
	} `json:"costs"`
	Notes []string `json:"notes"`
}

func breakevenJSONOf(t *testing.T, args ...string) breakevenOut {
	t.Helper()
	out := mustRun(t, append(args, "--format", "json")...)
	var b breakevenOut
	if err := json.Unmarshal([]byte(out), &b); err != nil {
		t.Fatalf("breakeven JSON: %v\n%s", err, out)
	}
	return b
}

func fig(t *testing.T, b breakevenOut, key string) (value, low, high float64) {
	t.Helper()
	f, ok := b.Figures[key]
	if !ok || f.Value == nil || f.Low95 == nil || f.High95 == nil {
		t.Fatalf("figure %s missing or without interval: %+v", key, f)
	}
	return *f.Value, *f.Low95, *f.High95
}

// The demo's frames: the figures follow from one another as the
// hand-worked formulas say (common practice: Q* = F / (p − v), R* = p·Q*,
// margin of safety Q₀ − Q*, leverage Q₀ / (Q₀ − Q*)), the costs add up to
// the fixed cost and the cost per frame, each interval holds its figure,
// and the reference volume is the newest month's, or the plan's.
func TestBreakevenOfTheDemoFrames(t *testing.T) {
	cfg := filepath.Join(demoDir(t), "costdrift.yaml")
	b := breakevenJSONOf(t, "--config", cfg, "breakeven", "--volume", "frames_built", "--price", "65")
	F, _, _ := fig(t, b, "fixed_per_period")
	v, _, _ := fig(t, b, "variable_per_unit")
	q, qlo, qhi := fig(t, b, "break_even_volume")
	r, _, _ := fig(t, b, "break_even_revenue")
	s, _, _ := fig(t, b, "margin_of_safety")
	dol, _, _ := fig(t, b, "operating_leverage")
	income, _, _ := fig(t, b, "operating_income")
	if math.Abs(q-F/(65-v)) > 1e-6 || math.Abs(r-65*q) > 1e-6 {
		t.Errorf("break-even %v, revenue %v; want F/(p−v) = %v and 65·Q*", q, r, F/(65-v))
	}
	if b.ReferencePeriod != "2026-06" || b.ReferenceFrom != "actual" || b.ReferenceVolume == nil {
		t.Fatalf("reference %s %s %v, want the actual of 2026-06", b.ReferencePeriod, b.ReferenceFrom, b.ReferenceVolume)
	}
	q0 := *b.ReferenceVolume
	// The supervision steps up between the break-even and the newest
	// month, so leverage is contribution over income at the month's level.
	if math.Abs(s-(q0-q)) > 1e-6 || math.Abs(dol-(65-v)*q0/income) > 1e-9 {
		t.Errorf("margin of safety %v, leverage %v at %v; want %v and %v", s, dol, q0, q0-q, (65-v)*q0/income)
	}
	if !(qlo < q && q < qhi) {
		t.Errorf("break-even interval %v – %v does not hold %v", qlo, qhi, q)
	}
	for key, f := range b.Figures {
		if f.Low95 != nil && f.High95 != nil && !(*f.Low95 <= *f.Value && *f.Value <= *f.High95) {
			t.Errorf("%s interval %v – %v does not hold %v", key, *f.Low95, *f.High95, *f.Value)
		}
	}
	var sumF, sumV float64
	pinned, related := false, false
	for _, c := range b.Costs {
		sumF += c.FixedPerPeriod
		sumV += c.PerUnit
		pinned = pinned || strings.HasPrefix(c.How, "pinned formula")
		related = related || strings.HasPrefix(c.How, "through machine_hours = ")
	}
	if math.Abs(sumF-F) > 1e-6 || math.Abs(sumV-v) > 1e-9 {
		t.Errorf("costs add up to %v and %v a frame, figures say %v and %v", sumF, sumV, F, v)
	}
	if !pinned || !related {
		t.Errorf("want the demo's pinned rent and its power through machine hours: %+v", b.Costs)
	}
	if b.RangeLow == nil || b.RangeHigh == nil {
		t.Fatal("no relevant range")
	}
	if !(*b.RangeLow <= q && q <= *b.RangeHigh) {
		t.Errorf("break-even %v outside the relevant range %v – %v at price 65", q, *b.RangeLow, *b.RangeHigh)
	}

	plan := breakevenJSONOf(t, "--config", cfg, "breakeven", "--volume", "frames_built", "--price", "65",
		"--plan", filepath.Join(demoDir(t), "plans", "plan-2026-q3.csv"), "--period", "2026-08")
	if plan.ReferenceFrom != "plan plan-2026-q3" || plan.ReferencePeriod != "2026-08" || plan.ReferenceVolume == nil || *plan.ReferenceVolume != 1380 {
		t.Errorf("planned reference %s %s %v, want the plan's 1,380 frames of 2026-08", plan.ReferenceFrom, plan.ReferencePeriod, plan.ReferenceVolume)
	}

	table := mustRun(t, "--config", cfg, "breakeven", "--volume", "frames_built", "--price", "65")
	for _, want := range []string{"break-even volume", "degree of operating leverage", "relevant range: ", "6200/WELD", "valid only inside the relevant range"} {
		if !strings.Contains(table, want) {
			t.Errorf("table lacks %q:\n%s", want, table)
		}
	}
	rows, err := csv.NewReader(strings.NewReader(mustRun(t, "--config", cfg, "breakeven", "--volume", "frames_built", "--price", "65", "--format", "csv"))).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	if rows[0][0] != "measure" || rows[5][0] != "break_even_volume" {
		t.Fatalf("csv rows %v", rows[:6])
	}
	if got, _ := strconv.ParseFloat(rows[5][2], 64); math.Abs(got-q) > 1e-9 {
		t.Errorf("csv break-even %v, JSON %v", got, q)
	}
}

// A revenue account credited 70 a frame in every month gives the price
// 70, the same analysis as --price 70 (hand-worked).
func TestBreakevenFromRevenueAccount(t *testing.T) {
	dir := t.TempDir()
	src := demoDir(t)
	for _, name := range []string{"costdrift.yaml", "costdrift.db", "data/accounts.csv", "data/activity.csv",
		"data/gl/gl-2023.csv", "data/gl/gl-2024.csv", "data/gl/gl-2025.csv", "data/gl/gl-2026.csv"} {
		data, err := os.ReadFile(filepath.Join(src, name))
		if err != nil {
			t.Fatal(err)
		}
		if err := os.MkdirAll(filepath.Dir(filepath.Join(dir, name)), 0o700); err != nil {
			t.Fatal(err)
		}
		if err := os.WriteFile(filepath.Join(dir, name), data, 0o600); err != nil {
			t.Fatal(err)
		}
	}
	activity, err := csv.NewReader(strings.NewReader(string(mustRead(t, filepath.Join(src, "data", "activity.csv"))))).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	var gl strings.Builder
	gl.WriteString("entry_id,line,date,account,cost_center,amount,description\n")
	for _, r := range activity[1:] {
		if r[1] != "frames_built" || r[3] != "" {
			continue
		}
		frames, _ := strconv.ParseFloat(r[2], 64)
		fmt.Fprintf(&gl, "SL-%s,1,%s-15,4000,,%.2f,Frames sold\n", r[0], r[0], -70*frames)
	}
	if err := os.WriteFile(filepath.Join(dir, "data", "gl", "sales.csv"), []byte(gl.String()), 0o600); err != nil {
		t.Fatal(err)
	}
	cfg := filepath.Join(dir, "costdrift.yaml")
	mustRun(t, "--config", cfg, "sync")
	byRevenue := breakevenJSONOf(t, "--config", cfg, "breakeven", "--volume", "frames_built", "--revenue", "4000")
	byPrice := breakevenJSONOf(t, "--config", cfg, "breakeven", "--volume", "frames_built", "--price", "70")
	if math.Abs(byRevenue.Price-70) > 1e-9 || !strings.HasPrefix(byRevenue.PriceFrom, "account 4000, 2023-07 to 2026-06 (36 periods)") {
		t.Errorf("price %v from %q, want 70 from account 4000's 36 months", byRevenue.Price, byRevenue.PriceFrom)
	}
	q1, _, _ := fig(t, byRevenue, "break_even_volume")
	q2, _, _ := fig(t, byPrice, "break_even_volume")
	if math.Abs(q1-q2) > 1e-6 {
		t.Errorf("break-even %v from the revenue account, %v from the price", q1, q2)
	}
}

func mustRead(t *testing.T, path string) []byte {
	t.Helper()
	data, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	return data
}

// Bad input: each a one-line error saying what is wrong.
func TestBreakevenBadInput(t *testing.T) {
	cfg := filepath.Join(demoDir(t), "costdrift.yaml")
	for _, c := range []struct {
		name string
		args []string
		want string
	}{
		{"no volume", []string{"--price", "70"}, "breakeven needs --volume DRIVER"},
		{"neither price nor revenue", []string{"--volume", "frames_built"}, "one of --price AMOUNT"},
		{"bad price", []string{"--volume", "frames_built", "--price", "-3"}, `--price "-3": need a positive amount`},
		{"unknown driver", []string{"--volume", "pedals", "--price", "70"}, "--volume pedals: no activity in the store for that driver (drivers: "},
		{"driver no cost uses", []string{"--volume", "orders", "--price", "70"}, "no cost formula in scope uses orders"},
		{"price below the variable cost", []string{"--volume", "frames_built", "--price", "30"}, "no break-even: the price 30.00 does not exceed the variable cost of "},
		{"revenue account without postings", []string{"--volume", "frames_built", "--revenue", "4000"}, "--revenue 4000: the ledger has no postings on that account in a closed period"},
	} {
		t.Run(c.name, func(t *testing.T) {
			_, err := run(t, append([]string{"--config", cfg, "breakeven"}, c.args...)...)
			if err == nil || !strings.Contains(err.Error(), c.want) || strings.Contains(err.Error(), "\n") {
				t.Errorf("err = %v, want one line with %q", err, c.want)
			}
		})
	}
}

// An account code a spreadsheet would read as a formula is written as
// text in the CSV (README, Command line).
func TestBreakevenCSVCellsAreSafe(t *testing.T) {
	nan := math.NaN()
	res := pipeline.BreakEvenResult{BreakEven: budget.BreakEven{Driver: "units", Price: 50, ReferenceVolume: nan,
		Parts: []budget.BreakEvenPart{{Object: costdrift.CostObject{Account: "=1+1", CostCenter: "WELD"}, Fixed: 100}}}}
	var out strings.Builder
	if err := breakevenCSV(&out, res); err != nil {
		t.Fatal(err)
	}
	if !strings.Contains(out.String(), "fixed_per_period,'=1+1/WELD,100") || strings.Contains(out.String(), ",=1+1") {
		t.Errorf("csv:\n%s", out.String())
	}
}

// --cost-center keeps that cost centre's formulas alone, and says when
// its break-even lies below any volume it was observed at.
func TestBreakevenOfOneCostCenter(t *testing.T) {
	cfg := filepath.Join(demoDir(t), "costdrift.yaml")
	b := breakevenJSONOf(t, "--config", cfg, "breakeven", "--volume", "frames_built", "--price", "65", "--cost-center", "WELD")
	tubing := false
	for _, c := range b.Costs {
		if c.CostCenter != "WELD" {
			t.Errorf("cost %s/%s outside WELD", c.Account, c.CostCenter)
		}
		tubing = tubing || c.Account == "5100"
	}
	if !tubing || len(b.Costs) < 3 {
		t.Errorf("WELD's costs: %+v", b.Costs)
	}
	if !strings.Contains(strings.Join(b.Notes, "\n"), "lies outside the relevant range") {
		t.Errorf("notes %q: want the break-even below the observed volumes said", b.Notes)
	}
	_, err := run(t, "--config", cfg, "breakeven", "--volume", "frames_built", "--price", "65", "--cost-center", "NOPE")
	if err == nil || !strings.Contains(err.Error(), "no cost behaviour stored for NOPE") {
		t.Errorf("unknown cost centre: err = %v", err)
	}
}
