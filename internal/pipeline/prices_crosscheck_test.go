package pipeline

import (
	"context"
	"math"
	"testing"

	"github.com/costdrift/costdrift/internal/analyze"
	"github.com/costdrift/costdrift/internal/costdrift"
)

// deflatorCase is one case of testdata/crosscheck/deflator.json.
type deflatorCase struct {
	Name                           string
	Periods                        []string
	CPI, X, Nominal, Restated      []float64
	Constant, Linear, Proportional statsmodelsFit
}

// TestCrosscheckDeflator: costs restated by a published price index (the
// quarterly US CPI of statsmodels' macrodata dataset, compiled from FRED)
// at the newest period's prices are what statsmodels computes as
// cost × cpi_last / cpi_t, and the analysis's constant, linear and
// proportional fits of them equal statsmodels OLS on the restated costs
// (testdata/crosscheck/deflator.json, written by
// scripts/crosscheck/deflator.py with statsmodels 0.13.5; README "Prices
// and inflation").
func TestCrosscheckDeflator(t *testing.T) {
	var doc struct{ Cases []deflatorCase }
	readCrosscheck(t, "deflator.json", &doc)
	if len(doc.Cases) != 5 {
		t.Fatalf("%d cases, want 5", len(doc.Cases))
	}
	for _, c := range doc.Cases {
		t.Run(c.Name, func(t *testing.T) {
			var activity []costdrift.ActivityValue
			for i, p := range c.Periods {
				activity = append(activity, costdrift.ActivityValue{Period: p, Driver: "cpi", Value: c.CPI[i]},
					costdrift.ActivityValue{Period: p, Driver: "hours", Value: c.X[i]})
			}
			d, err := deflationOf("cpi", nil, activity, c.Periods, "costdrift.yaml")
			if err != nil {
				t.Fatal(err)
			}
			obj := costdrift.ObjectSeries{Object: costdrift.CostObject{Account: "6200", CostCenter: "WELD"}, Cost: append([]float64(nil), c.Nominal...)}
			if base := d.restate(&obj, c.Periods); base != c.Periods[len(c.Periods)-1] {
				t.Fatalf("price base %q, want the newest period %s", base, c.Periods[len(c.Periods)-1])
			}
			for i := range obj.Cost {
				if math.Abs(obj.Cost[i]-c.Restated[i]) > 1e-12*math.Abs(c.Restated[i]) {
					t.Errorf("%s restated %.12g, numpy %.12g", c.Periods[i], obj.Cost[i], c.Restated[i])
				}
			}
			p := costdrift.Panel{Periods: c.Periods, Objects: []costdrift.ObjectSeries{obj},
				Drivers: []costdrift.DriverSeries{{Name: "hours", Values: c.X}}, PeriodsWithPostings: len(c.Periods)}
			res, err := analyze.Panel(context.Background(), &p, analyze.Settings{MinPeriods: 12, Lags: []int{0}, Alpha: 0.05})
			if err != nil {
				t.Fatal(err)
			}
			if res[0].Err != nil {
				t.Fatal(res[0].Err)
			}
			checkStatsmodelsFits(t, res[0].Fits, c.Constant, c.Linear, c.Proportional)
		})
	}
}
