package drift_test

import (
	"fmt"

	"github.com/costdrift/costdrift/internal/drift"
)

// Warehouse rent of an invented company, 24 months: the lease was renewed
// at a higher rate from month 16 on.
func ExampleSupFPValue() {
	rent := []float64{
		4810, 4795, 4830, 4802, 4788, 4825, 4817, 4799, 4806, 4821, 4790, 4812, 4808, 4797, 4815,
		5120, 5095, 5133, 5108, 5117, 5101, 5126, 5112, 5098,
	}
	t, err := drift.SupFPValue(nil, rent, true, drift.DefaultTrim, drift.Bootstrap, drift.DefaultReplicates, 1)
	if err != nil {
		panic(err)
	}
	fmt.Printf("candidates %d..%d, break after month %d, p = %.3f (%v, B = %d)\n",
		t.From, t.To, t.Break, t.P, t.Method, t.Replicates)
	c, err := drift.OLSCUSUM(nil, rent, true)
	if err != nil {
		panic(err)
	}
	fmt.Printf("OLS-CUSUM peaks after month %d: S0 = %.2f > %.3f (5 %%)\n", c.Peak, c.Statistic, drift.OLSCUSUMCritical(0.05))
	// Output:
	// candidates 3..21, break after month 15, p = 0.001 (bootstrap, B = 999)
	// OLS-CUSUM peaks after month 15: S0 = 2.31 > 1.358 (5 %)
}
