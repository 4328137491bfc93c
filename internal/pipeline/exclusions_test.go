package pipeline

import (
	"context"
	"encoding/json"
	"math"
	"os"
	"path/filepath"
	"testing"

	"github.com/costdrift/costdrift/internal/analyze"
	"github.com/costdrift/costdrift/internal/costdrift"
)

// exclusionCase is one case of testdata/crosscheck/exclusions.json.
type exclusionCase struct {
	Name                           string
	Periods                        []string
	X, Y                           []float64
	Excluded                       []string
	Constant, Linear, Proportional statsmodelsFit
}

type statsmodelsFit struct {
	N          int
	Params     []float64
	BSE        []float64
	PValues    []float64
	R2         *float64
	ResidualSE float64 `json:"residual_se"`
}

// TestCrosscheckExclusions: with periods excluded, the analysis fits the
// remaining periods alone, and counts only them in n: its constant, linear
// and proportional fits equal statsmodels OLS on the same points
// (testdata/crosscheck/exclusions.json, written by
// scripts/crosscheck/exclusions.py with statsmodels 0.13.5; README
// "The accountant's decisions").
func TestCrosscheckExclusions(t *testing.T) {
	var doc struct{ Cases []exclusionCase }
	readCrosscheck(t, "exclusions.json", &doc)
	if len(doc.Cases) != 8 {
		t.Fatalf("%d cases, want 8", len(doc.Cases))
	}
	for _, c := range doc.Cases {
		t.Run(c.Name, func(t *testing.T) {
			obj := costdrift.ObjectSeries{Object: costdrift.CostObject{Account: "6200", CostCenter: "WELD"}, Cost: append([]float64(nil), c.Y...)}
			var xs []costdrift.Exclusion
			for _, p := range c.Excluded {
				xs = append(xs, costdrift.Exclusion{Object: "6200/WELD", Period: p})
			}
			excludePeriods(&obj, c.Periods, xs)
			p := costdrift.Panel{Periods: c.Periods, Objects: []costdrift.ObjectSeries{obj},
				Drivers: []costdrift.DriverSeries{{Name: "hours", Values: c.X}}, PeriodsWithPostings: len(c.Periods)}
			res, err := analyze.Panel(context.Background(), &p, analyze.Settings{MinPeriods: 12, Lags: []int{0}, Alpha: 0.05})
			if err != nil {
				t.Fatal(err)
			}
			r := res[0]
			if r.Err != nil {
				t.Fatal(r.Err)
			}
			if want := len(c.Periods) - len(c.Excluded); r.Behaviour.N != want || c.Linear.N != want {
				t.Fatalf("behaviour n %d, statsmodels nobs %d, want %d", r.Behaviour.N, c.Linear.N, want)
			}
			checkStatsmodelsFits(t, r.Fits, c.Constant, c.Linear, c.Proportional)
		})
	}
}

// readCrosscheck reads the golden file name of testdata/crosscheck into doc.
func readCrosscheck(t *testing.T, name string, doc any) {
	t.Helper()
	b, err := os.ReadFile(filepath.Join("..", "..", "testdata", "crosscheck", name))
	if err != nil {
		t.Fatal(err)
	}
	if err := json.Unmarshal(b, doc); err != nil {
		t.Fatal(err)
	}
}

// checkStatsmodelsFits compares the constant, linear and proportional fits
// of fits with statsmodels' OLS of the same points (the golden values of
// testdata/crosscheck).
func checkStatsmodelsFits(t *testing.T, fits []costdrift.Fit, constant, linear, proportional statsmodelsFit) {
	t.Helper()
	seen := 0
	for _, f := range fits {
		switch f.Model {
		case costdrift.ModelConstant:
			seen++
			nearSM(t, "constant n", float64(f.N), float64(constant.N))
			nearSM(t, "constant a", f.Intercept, constant.Params[0])
			nearSM(t, "constant se(a)", f.InterceptSE, constant.BSE[0])
			nearSM(t, "constant residual se", f.ResidualSE, constant.ResidualSE)
		case costdrift.ModelLinear:
			seen++
			nearSM(t, "linear n", float64(f.N), float64(linear.N))
			nearSM(t, "linear a", f.Intercept, linear.Params[0])
			nearSM(t, "linear b", f.Slope, linear.Params[1])
			nearSM(t, "linear se(a)", f.InterceptSE, linear.BSE[0])
			nearSM(t, "linear se(b)", f.SlopeSE, linear.BSE[1])
			nearP(t, "linear p(b)", f.SlopeP, linear.PValues[1])
			if !math.IsNaN(f.InterceptP) {
				nearP(t, "linear p(a)", f.InterceptP, linear.PValues[0])
			} else if f.Significant {
				t.Errorf("the chosen line has no intercept p-value")
			}
			nearSM(t, "linear r2", f.R2, *linear.R2)
			nearSM(t, "linear residual se", f.ResidualSE, linear.ResidualSE)
		case costdrift.ModelProportional:
			seen++
			nearSM(t, "proportional n", float64(f.N), float64(proportional.N))
			nearSM(t, "proportional b", f.Slope, proportional.Params[0])
			nearSM(t, "proportional se(b)", f.SlopeSE, proportional.BSE[0])
			nearSM(t, "proportional residual se", f.ResidualSE, proportional.ResidualSE)
		}
	}
	if seen != 3 {
		t.Errorf("%d of the constant, linear and proportional fits found, want 3", seen)
	}
}

// nearSM compares to 1e-9 relative: both sides are least squares in double
// precision on the same points.
func nearSM(t *testing.T, what string, got, want float64) {
	t.Helper()
	if math.Abs(got-want) > 1e-9*math.Max(1, math.Abs(want)) {
		t.Errorf("%s = %.12g, statsmodels %.12g", what, got, want)
	}
}

// nearP compares p-values to 1e-6 relative plus 1e-15: both come from the
// t distribution's tail, computed by different libraries.
func nearP(t *testing.T, what string, got, want float64) {
	t.Helper()
	if math.Abs(got-want) > 1e-6*math.Abs(want)+1e-15 {
		t.Errorf("%s = %.12g, statsmodels %.12g", what, got, want)
	}
}
