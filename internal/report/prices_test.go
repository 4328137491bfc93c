package report

import (
	"math"
	"strings"
	"testing"

	"github.com/costdrift/costdrift/internal/costdrift"
)

// A formula fitted on restated costs says whose prices it is at, in the
// report row and its formula; one fitted as posted says nothing of prices
// (README, Prices and inflation).
func TestFormulaAtPrices(t *testing.T) {
	admin := costdrift.Behaviour{Object: costdrift.CostObject{Account: "6100", CostCenter: "ADMIN"}, Class: costdrift.Fixed,
		FixedPerPeriod: 5765.66, R2: math.NaN(), PriceBase: "2026-06"}
	weld := costdrift.Behaviour{Object: costdrift.CostObject{Account: "6200", CostCenter: "WELD"}, Class: costdrift.Mixed, Driver: "machine_hours",
		Unit: "machine hour", FixedPerPeriod: 4210, VariableRate: 1.87, PriceBase: "2026-06"}
	lease := costdrift.Behaviour{Object: costdrift.CostObject{Account: "6300", CostCenter: "ADMIN"}, Class: costdrift.Fixed, FixedPerPeriod: 2400}
	for _, tc := range []struct {
		b    costdrift.Behaviour
		want string
	}{
		{admin, "cost = 5,765.66 at prices of 2026-06"},
		{weld, "cost = 4,210.00 + 1.87 per machine hour at prices of 2026-06"},
		{lease, "cost = 2,400.00"},
	} {
		if got := Formula(tc.b); got != tc.want {
			t.Errorf("Formula(%s) = %q, want %q", tc.b.Object, got, tc.want)
		}
	}
	rows := Rows([]costdrift.Behaviour{admin, lease}, nil)
	if rows[0].PriceBase != "2026-06" || rows[1].PriceBase != "" {
		t.Errorf("rows' price bases %q and %q, want 2026-06 and none", rows[0].PriceBase, rows[1].PriceBase)
	}
}

// The report's table says whose prices each formula is at in a column of
// its own when any formula is restated, "as posted" for the others.
func TestTablePricesColumn(t *testing.T) {
	admin := costdrift.Behaviour{Object: costdrift.CostObject{Account: "6100", CostCenter: "ADMIN"}, Class: costdrift.Fixed,
		FixedPerPeriod: 5765.66, R2: math.NaN(), N: 36, Since: "2023-07", PriceBase: "2026-06"}
	lease := costdrift.Behaviour{Object: costdrift.CostObject{Account: "6300", CostCenter: "ADMIN"}, Class: costdrift.Fixed,
		FixedPerPeriod: 2400, R2: math.NaN(), N: 36, Since: "2023-07"}
	var b strings.Builder
	if err := Table(&b, Rows([]costdrift.Behaviour{admin, lease}, nil), "EUR"); err != nil {
		t.Fatal(err)
	}
	lines := strings.Split(b.String(), "\n")
	for i, want := range []string{
		"OBJECT      ACCOUNT  CLASS  FORMULA (EUR per period)  PRICES     R²  N   RELEVANT RANGE  SINCE",
		"6100/ADMIN           fixed  cost = 5,765.66           2026-06    -   36  -               2023-07",
		"6300/ADMIN           fixed  cost = 2,400.00           as posted  -   36  -               2023-07",
	} {
		if lines[i] != want {
			t.Errorf("line %d:\n got %q\nwant %q", i+1, lines[i], want)
		}
	}
	b.Reset()
	if err := Table(&b, Rows([]costdrift.Behaviour{lease}, nil), "EUR"); err != nil {
		t.Fatal(err)
	}
	if strings.Contains(b.String(), "PRICES") {
		t.Errorf("a table of costs as posted has a prices column:\n%s", b.String())
	}
}
