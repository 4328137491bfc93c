package present

import (
	"math"
	"testing"
)

// Every expected string is worked by hand from the rule in the function's
// doc comment (common practice: comma thousands separators, a point for
// decimals, as English-language financial statements print them).
func TestNumbers(t *testing.T) {
	for _, tc := range []struct {
		name, got, want string
	}{
		{"amount with separators", Amount(4210.5), "4,210.50"},
		{"millions", Amount(6938593.634), "6,938,593.63"},
		{"negative", Amount(-65.08), "-65.08"},
		{"half rounds away from zero", Amount(0.125), "0.13"},
		{"rate half rounds up", Rate(3.125), "3.13"},
		{"negative rounding to zero has no sign", Amount(-0.001), "0.00"},
		{"money with currency", Money(2800, "EUR"), "2,800.00 EUR"},
		{"money without currency", Money(2800, ""), "2,800.00"},
		{"money not finite", Money(math.Inf(1), "EUR"), "-"},
		{"percent", Percent(0.1786), "18 %"},
		{"significant small", Significant(0.05123, 3), "0.0512"},
		{"significant keeps whole part", Significant(1533.14, 2), "1,533"},
		{"significant zero", Significant(0, 3), "0"},
		{"rate from one up", Rate(2.5367), "2.54"},
		{"rate below one", Rate(0.041234), "0.04123"},
		{"rate tiny", Rate(0.0031494), "0.003149"},
		{"rate of kWh", Rate(0.2125), "0.2125"},
		{"rate half", Rate(0.5), "0.50"},
		{"rate with unit", RatePer(18.4712, "frame"), "18.47 per frame"},
		{"rate unit of driver", RatePer(1.07, UnitOf("", "machine_hours")), "1.07 per unit of machine hours"},
	} {
		if tc.got != tc.want {
			t.Errorf("%s: got %q, want %q", tc.name, tc.got, tc.want)
		}
	}
}

func TestActivity(t *testing.T) {
	for _, tc := range []struct {
		name, got, want string
	}{
		// The demo's relevant ranges: counts and tenths of machine hours.
		{"count", Activity(681), "681"},
		{"tenths", Activity(1533.1), "1,533.1"},
		{"hundredths", Activity(12.25), "12.25"},
		// An output index measured in fractions: it must not read 0 – 0.
		{"fraction range", ActivityRange(0.05, 0.19), "0.05 – 0.19"},
		{"fraction", Activity(0.0512), "0.0512"},
		{"narrow fraction range gets digits", ActivityRange(0.12341, 0.12349), "0.1234 – 0.1235"},
		{"demo range", ActivityRange(501.1, 1533.1), "501.1 – 1,533.1"},
		{"quantity plural", Quantity(1557, "frame"), "1,557 frames"},
		{"quantity one", Quantity(1, "frame"), "1 frame"},
		{"quantity hours", Quantity(931.8, "machine hour"), "931.8 machine hours"},
		{"quantity no unit", Quantity(931.8, ""), "931.8"},
	} {
		if tc.got != tc.want {
			t.Errorf("%s: got %q, want %q", tc.name, tc.got, tc.want)
		}
	}
}

// English plurals of units (common practice).
func TestPlural(t *testing.T) {
	for in, want := range map[string]string{
		"frame":                "frames",
		"machine hour":         "machine hours",
		"shipment":             "shipments",
		"delivery":             "deliveries",
		"day":                  "days",
		"box":                  "boxes",
		"batch":                "batches",
		"unit of output index": "units of output index",
		"unit of frames built": "units of frames built",
		"kWh":                  "kWh",
		"kg":                   "kg",
		"m³":                   "m³",
		"FTE":                  "FTE",
		"hours":                "hours",
	} {
		if got := Plural(in); got != want {
			t.Errorf("Plural(%q) = %q, want %q", in, got, want)
		}
	}
}

func TestPValueAndStatistic(t *testing.T) {
	for _, tc := range []struct {
		name, got, want string
	}{
		// 999 resamples: the smallest p-value is 1/(999+1) = 0.001
		// (Davison and Hinkley 1997, §4.2.1).
		{"bootstrap floor", PValue(0.001, BootstrapResolution(999)), "0.001"},
		{"bootstrap below floor", PValue(0, BootstrapResolution(999)), "< 0.001"},
		// 199 resamples resolve 1/200 = 0.005.
		{"coarser bootstrap", PValue(0.004, BootstrapResolution(199)), "< 0.005"},
		{"coarser bootstrap at floor", PValue(0.005, BootstrapResolution(199)), "0.005"},
		// The report's sup-F on the renewed lease: p 2.9e-64 from Hansen's
		// approximation reads < 0.001.
		{"analytic tiny", PValue(2.9e-64, AnalyticResolution), "< 0.001"},
		{"analytic underflow", PValue(7.49e-156, 0), "< 0.001"},
		{"ordinary", PValue(0.0213, AnalyticResolution), "0.021"},
		{"one", PValue(1, AnalyticResolution), "1.000"},
		{"statistic", Statistic(293.14), "293.1"},
		{"large statistic", Statistic(45678.9), "45,678.9"},
		// The renewed lease's sup-F of 1.17e+17 and the store's stand-in
		// for an infinite one.
		{"exact step", Statistic(1.168231104512e+17), ExactFit},
		{"stored infinity", Statistic(math.MaxFloat64), ExactFit},
		{"infinite", Statistic(math.Inf(1)), ExactFit},
		{"not a number", Statistic(math.NaN()), "-"},
	} {
		if tc.got != tc.want {
			t.Errorf("%s: got %q, want %q", tc.name, tc.got, tc.want)
		}
	}
}

func TestFinite(t *testing.T) {
	for _, v := range []float64{math.NaN(), math.Inf(1), math.Inf(-1), math.MaxFloat64, -math.MaxFloat64} {
		if Finite(v) != nil {
			t.Errorf("Finite(%g) is not nil", v)
		}
	}
	if p := Finite(1.168231104512e+17); p == nil || *p != 1.168231104512e+17 {
		t.Errorf("a finite statistic must stay as it is: %v", p)
	}
}
