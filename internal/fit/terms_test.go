package fit

import (
	"encoding/json"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"testing"

	"github.com/costdrift/costdrift/internal/costdrift"
)

type intervalCase struct {
	Name   string
	Model  string
	X      [][]float64
	Y      []float64
	Groups []int
	DF     int
	Points []struct {
		Row                          []float64
		Mean                         float64
		SE                           float64 `json:"se_obs"`
		Low80, High80, Low95, High95 float64
	}
}

func readIntervals(t *testing.T) []intervalCase {
	t.Helper()
	b, err := os.ReadFile(filepath.Join("..", "..", "testdata", "crosscheck", "intervals.json"))
	if err != nil {
		t.Fatal(err)
	}
	var doc struct{ Cases []intervalCase }
	if err := json.Unmarshal(b, &doc); err != nil {
		t.Fatal(err)
	}
	if len(doc.Cases) != 20 {
		t.Fatalf("intervals.json holds %d cases, want 20", len(doc.Cases))
	}
	return doc.Cases
}

// stepModelOf is the step model with the given groups (0-based, by
// observation), as the golden file's generator defined them.
func stepModelOf(x, y []float64, groups []int) StepModel {
	k := 0
	for _, g := range groups {
		k = max(k, g+1)
	}
	m := StepModel{Levels: make([]StepLevel, k)}
	for g := range m.Levels {
		m.Levels[g].From, m.Levels[g].To = math.Inf(1), math.Inf(-1)
	}
	for i, g := range groups {
		l := &m.Levels[g]
		l.Mean += y[i]
		l.N++
		l.From, l.To = min(l.From, x[i]), max(l.To, x[i])
	}
	for g := range m.Levels {
		m.Levels[g].Mean /= float64(m.Levels[g].N)
	}
	for i, g := range groups {
		e := y[i] - m.Levels[g].Mean
		m.RSS += e * e
	}
	return m
}

// TestCrosscheckIntervals: the prediction terms a cost formula is stored
// with give the 80 % and 95 % prediction intervals statsmodels 0.13.5
// computes with get_prediction(...).summary_frame(alpha) for the same model
// and data (testdata/crosscheck/intervals.json, scripts/crosscheck/
// intervals.py), for each form of formula, after a JSON round trip as the
// store keeps them.
func TestCrosscheckIntervals(t *testing.T) {
	const src = "statsmodels 0.13.5 get_prediction"
	worst := 0.0
	for _, c := range readIntervals(t) {
		var terms Terms
		var err error
		var r *Regression
		switch c.Model {
		case "constant":
			r, err = Constant(c.Y)
		case "proportional":
			r, err = ThroughOrigin(c.X[0], c.Y)
		case "linear":
			r, err = Line(c.X[0], c.Y)
		case "two_driver":
			r, err = OLS(c.X, c.Y, true)
		case "step":
			m := stepModelOf(c.X[0], c.Y, c.Groups)
			// The search finds the same groups on these well-separated levels.
			sf, err := Step(c.X[0], c.Y, len(m.Levels), 3)
			if err != nil {
				t.Fatal(err)
			}
			found := sf.Models[len(m.Levels)-2]
			for g, l := range found.Levels {
				if l.N != m.Levels[g].N || math.Abs(l.Mean-m.Levels[g].Mean) > 1e-9*math.Abs(l.Mean) {
					t.Fatalf("%s: Step's level %d is %+v, the generator's %+v", c.Name, g, l, m.Levels[g])
				}
			}
			terms, err = StepTerms(found)
			if err != nil {
				t.Fatal(err)
			}
		default:
			t.Fatalf("%s: model %q", c.Name, c.Model)
		}
		if err != nil {
			t.Fatalf("%s: %v", c.Name, err)
		}
		if r != nil {
			terms = r.Terms()
		}
		b, err := json.Marshal(terms)
		if err != nil {
			t.Fatal(err)
		}
		// Read back as the store does, into the domain's type.
		var stored costdrift.PredictionTerms
		if err := json.Unmarshal(b, &stored); err != nil {
			t.Fatal(err)
		}
		if err := stored.Check(); err != nil {
			t.Fatalf("%s: %v", c.Name, err)
		}
		if stored.DF != c.DF {
			t.Fatalf("%s: DF %d, statsmodels df_resid %d", c.Name, stored.DF, c.DF)
		}
		for i, p := range c.Points {
			x0 := p.Row
			if stored.Intercept {
				x0 = p.Row[1:]
			}
			where := fmt.Sprintf("%s point %d", c.Name, i)
			for _, lv := range []struct {
				level     float64
				low, high float64
			}{{0.80, p.Low80, p.High80}, {0.95, p.Low95, p.High95}} {
				low, high, yhat, se := Terms(stored).Interval(x0, lv.level)
				half := (lv.high - lv.low) / 2
				for _, q := range []struct {
					what      string
					got, want float64
					allow     float64
				}{
					{"mean", yhat, p.Mean, 1e-9 * math.Abs(p.Mean)},
					{"se_obs", se, p.SE, 1e-9 * p.SE},
					// statsmodels' t.ppf (SciPy 1.10) is off by up to about
					// 2e-9 relative: 1e-8 of the half-width is allowed for it.
					{"low", low, lv.low, 1e-9*math.Abs(lv.low) + 1e-8*half},
					{"high", high, lv.high, 1e-9*math.Abs(lv.high) + 1e-8*half},
				} {
					d := math.Abs(q.got - q.want)
					if !(d <= q.allow) {
						t.Errorf("%s %.0f %%: %s %.15g, %s %.15g", where, 100*lv.level, q.what, q.got, src, q.want)
					}
					if q.allow > 0 {
						worst = max(worst, d/q.allow)
					}
				}
			}
		}
	}
	t.Logf("worst difference: %.3g of the allowance", worst)
}

func TestTermsCheck(t *testing.T) {
	r, err := Line([]float64{1, 2, 3, 4}, []float64{2, 4.1, 5.9, 8.2})
	if err != nil {
		t.Fatal(err)
	}
	good := r.Terms()
	if err := costdrift.PredictionTerms(good).Check(); err != nil {
		t.Fatal(err)
	}
	// The textbook form for a line (common practice):
	// se² = s²(1 + 1/n + (x0 − x̄)²/Sxx); x̄ = 2.5, Sxx = 5.
	_, se := good.Predict([]float64{6})
	want := r.ResidualSE * math.Sqrt(1+1.0/4+3.5*3.5/5)
	if math.Abs(se-want) > 1e-12*want {
		t.Errorf("se at 6 = %.15g, textbook %.15g", se, want)
	}
	for name, mutate := range map[string]func(*Terms){
		"no coefficients": func(t *Terms) { t.Coef = nil },
		"short cov":       func(t *Terms) { t.Cov = t.Cov[:3] },
		"no centre":       func(t *Terms) { t.Centre = nil },
		"zero df":         func(t *Terms) { t.DF = 0 },
		"NaN":             func(t *Terms) { t.Cov[1] = math.NaN() },
		"negative s":      func(t *Terms) { t.S = -1 },
	} {
		bad := good
		bad.Coef = append([]float64(nil), good.Coef...)
		bad.Cov = append([]float64(nil), good.Cov...)
		bad.Centre = append([]float64(nil), good.Centre...)
		mutate(&bad)
		if costdrift.PredictionTerms(bad).Check() == nil {
			t.Errorf("%s: Check accepted %+v", name, bad)
		}
	}
}
