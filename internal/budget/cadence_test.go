package budget

import (
	"math"
	"strings"
	"testing"

	"github.com/costdrift/costdrift/internal/costdrift"
	"github.com/costdrift/costdrift/internal/fit"
)

// insurance is a premium posted in March, June, September and December:
// postings of 2,900, 3,000, 3,100 and 3,000, kept per period (divided by 3)
// as the analysis keeps a cost posted at a cadence.
func insurance(t *testing.T) costdrift.Behaviour {
	t.Helper()
	r, err := fit.Constant([]float64{2900.0 / 3, 3000.0 / 3, 3100.0 / 3, 3000.0 / 3})
	if err != nil {
		t.Fatal(err)
	}
	terms := costdrift.PredictionTerms(r.Terms())
	return costdrift.Behaviour{Object: obj("6600", ""), Class: costdrift.Fixed, FixedPerPeriod: 1000, R2: math.NaN(),
		Cadence: &costdrift.Cadence{Every: 3, Phase: 0}, Prediction: &terms}
}

// TestCadenceBudget: a quarterly premium is budgeted in the months it is
// posted in, nothing in the others; spread, a third of it every month.
// Hand-worked (common practice): the postings' mean is 3,000 and their
// sample standard deviation √(20,000/3) = 81.65 on 3 degrees of freedom,
// so one more posting's 95 % interval is 3,000 ± t(0.975, 3) · 81.65 ·
// √(1 + 1/4) = 3,000 ± 3.1824 · 91.287 = 3,000 ± 290.52 (t from a
// statistics table); spread, 1,000 ± 96.84.
func TestCadenceBudget(t *testing.T) {
	b := []costdrift.Behaviour{insurance(t)}
	periods := []string{"2026-01", "2026-02", "2026-03"}
	lines := Flexible(b, periods, table{}.lookup, monthShift)
	for i, want := range []float64{0, 0, 3000} {
		l := lines[i]
		if !near(l.Value, want, 1e-12) {
			t.Errorf("%s: budget %.2f, want %.2f", l.Period, l.Value, want)
		}
	}
	if l := lines[0]; l.Low95 != 0 || l.High95 != 0 || !strings.Contains(l.Warning, "posted once a quarter (Mar, Jun, Sep, Dec): nothing in this period") {
		t.Errorf("January: [%g, %g] %q", l.Low95, l.High95, l.Warning)
	}
	if l := lines[2]; !(math.Abs(l.Low95-2709.48) <= 0.01) || !(math.Abs(l.High95-3290.52) <= 0.01) || !strings.Contains(l.Warning, "the quarter's posting") {
		t.Errorf("March: [%.2f, %.2f] %q, want [2,709.48, 3,290.52]", l.Low95, l.High95, l.Warning)
	}
	tot := Totals(lines)
	if sum := tot[1].Value + tot[3].Value + tot[5].Value; !near(sum, 3000, 1e-12) {
		t.Errorf("the quarter's totals add to %.2f, want 3,000", sum)
	}

	spread := FlexibleSpread(b, periods, table{}.lookup, monthShift)
	for _, l := range spread {
		if !near(l.Value, 1000, 1e-12) || !(math.Abs(l.High95-1096.84) <= 0.01) || !strings.Contains(l.Warning, "3,000.00 a posting: spread evenly") {
			t.Errorf("%s spread: %.2f up to %.2f %q, want 1,000 up to 1,096.84", l.Period, l.Value, l.High95, l.Warning)
		}
	}
}

// TestCadenceVariance: the flexible budget of a quarterly premium is the
// posting in its month and nothing between, so a month without a posting
// has no variance and a premium that rose to 3,400 is outside the posting's
// interval (above 3,290.52, TestCadenceBudget).
func TestCadenceVariance(t *testing.T) {
	b := []costdrift.Behaviour{insurance(t)}
	march := Variances(b, "2026-03", map[string]float64{"6600": 3400}, table{}.lookup, nil, monthShift)[0]
	if !near(march.Flexible.Value, 3000, 1e-12) || !near(march.SpendingVariance, 400, 1e-9) || !march.Outside95 {
		t.Errorf("March: flexible %.2f, variance %.2f, outside %v", march.Flexible.Value, march.SpendingVariance, march.Outside95)
	}
	feb := Variances(b, "2026-02", map[string]float64{}, table{}.lookup, nil, monthShift)[0]
	if feb.Flexible.Value != 0 || feb.SpendingVariance != 0 || feb.Outside95 {
		t.Errorf("February: flexible %.2f, variance %.2f, outside %v", feb.Flexible.Value, feb.SpendingVariance, feb.Outside95)
	}
}
