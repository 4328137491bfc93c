package fit

import (
	"encoding/json"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"testing"
)

// crosscheckFile holds values computed by general-purpose statistics
// libraries (statsmodels 0.13.5 and SciPy 1.10.1, Debian bookworm) for seeded
// random cases; scripts/crosscheck/generate.py writes it and
// scripts/crosscheck/run.sh checks that a fresh run reproduces it. The data
// are numpy default_rng draws and stand for nothing real.
var crosscheckFile = filepath.Join("..", "..", "testdata", "crosscheck", "cases.json")

type crossCase struct {
	Name     string      `json:"name"`
	Outliers int         `json:"outliers"`
	X        [][]float64 `json:"x"`
	Y        []float64   `json:"y"`
	OLS      struct {
		Params      []float64 `json:"params"`
		Bse         []float64 `json:"bse"`
		Tvalues     []float64 `json:"tvalues"`
		Pvalues     []float64 `json:"pvalues"`
		Rsquared    float64   `json:"rsquared"`
		RsquaredAdj float64   `json:"rsquared_adj"`
		Fvalue      float64   `json:"fvalue"`
		FPvalue     float64   `json:"f_pvalue"`
		SSR         float64   `json:"ssr"`
		DfResid     float64   `json:"df_resid"`
		LLF         float64   `json:"llf"`
		AIC         float64   `json:"aic"`
		BIC         float64   `json:"bic"`
		AICc        float64   `json:"aicc_with_variance"`
		Hat         []float64 `json:"hat"`
		Cooks       []float64 `json:"cooks"`
		PRESS       float64   `json:"press"`
		DW          float64   `json:"durbin_watson"`
	} `json:"ols"`
	Prediction struct {
		Alpha   float64 `json:"alpha"`
		DF      int     `json:"df"`
		TScipy  float64 `json:"t_scipy"`
		TMpmath float64 `json:"t_mpmath"`
		Points  []struct {
			X0    []float64 `json:"x0"`
			Mean  float64   `json:"mean"`
			SEObs float64   `json:"se_obs"`
			Lower float64   `json:"obs_ci_lower"`
			Upper float64   `json:"obs_ci_upper"`
		} `json:"points"`
	} `json:"prediction"`
	TheilSen *struct {
		Method    string  `json:"method"`
		Slope     float64 `json:"slope"`
		Intercept float64 `json:"intercept"`
	} `json:"theil_sen"`
	VIF      []float64 `json:"vif"`
	PartialF *struct {
		F      float64 `json:"F"`
		P      float64 `json:"p"`
		DfDiff float64 `json:"df_diff"`
	} `json:"partial_f"`
	Huber struct {
		Params []float64 `json:"params"`
		Scale  float64   `json:"scale"`
	} `json:"huber"`
}

func readCrosscheck(t *testing.T) []crossCase {
	t.Helper()
	raw, err := os.ReadFile(crosscheckFile)
	if err != nil {
		t.Fatal(err)
	}
	var doc struct {
		Cases []crossCase `json:"cases"`
	}
	if err := json.Unmarshal(raw, &doc); err != nil {
		t.Fatal(err)
	}
	if len(doc.Cases) < 50 {
		t.Fatalf("%d cases in %s, want at least 50", len(doc.Cases), crosscheckFile)
	}
	return doc.Cases
}

// agreement is a tolerance |got − want| <= rel·|want| + abs, and the worst
// ratio of discrepancy to allowance seen, so a run can report its margin.
type agreement struct {
	name     string
	rel, abs float64
	source   string
	worst    float64
	worstAt  string
	compared int
}

func (a *agreement) check(t *testing.T, where string, got, want float64) {
	t.Helper()
	a.checkScaled(t, where, got, want, 1)
}

// checkScaled allows rel·|want| + abs·scale, for a quantity whose natural
// absolute unit is another one (an interval end and its half-width).
func (a *agreement) checkScaled(t *testing.T, where string, got, want, scale float64) {
	t.Helper()
	a.compared++
	if math.IsInf(want, 0) || math.IsInf(got, 0) {
		if got != want {
			t.Errorf("%s %s = %g, %s gives %g", where, a.name, got, a.source, want)
		}
		return
	}
	allow := a.rel*math.Abs(want) + a.abs*scale
	ratio := math.Abs(got-want) / allow
	if math.IsNaN(ratio) || ratio > 1 {
		t.Errorf("%s %s = %.17g, %s gives %.17g (|Δ| = %.3g, allowed %.3g)",
			where, a.name, got, a.source, want, math.Abs(got-want), allow)
	}
	if ratio > a.worst {
		a.worst, a.worstAt = ratio, where
	}
}

// TestCrosscheck compares OLS, Line, the influence measures, Durbin–Watson,
// VIF, prediction intervals, the partial F test, Theil–Sen and Huber with the
// values statsmodels and SciPy computed for the same data (testdata/
// crosscheck/cases.json). The tolerances are those of the agreements table
// below; least-squares quantities agree to about 1e-12 relative in practice.
func TestCrosscheck(t *testing.T) {
	const sm = "statsmodels 0.13.5"
	const sp = "scipy 1.10.1"
	var (
		// Least squares: two QR implementations in double precision.
		coef  = &agreement{name: "coefficient", rel: 1e-9, abs: 1e-12, source: sm + " OLS params"}
		bse   = &agreement{name: "standard error", rel: 1e-9, source: sm + " bse"}
		tval  = &agreement{name: "t", rel: 1e-9, abs: 1e-9, source: sm + " tvalues"}
		pval  = &agreement{name: "p", rel: 1e-9, abs: 1e-15, source: sm + " pvalues (scipy t)"}
		r2    = &agreement{name: "R²", rel: 1e-9, abs: 1e-12, source: sm + " rsquared"}
		adjR2 = &agreement{name: "adj. R²", rel: 1e-9, abs: 1e-12, source: sm + " rsquared_adj"}
		fval  = &agreement{name: "F", rel: 1e-9, source: sm + " fvalue"}
		fp    = &agreement{name: "F p", rel: 1e-9, abs: 1e-15, source: sm + " f_pvalue"}
		ssr   = &agreement{name: "RSS", rel: 1e-9, source: sm + " ssr"}
		llf   = &agreement{name: "log-likelihood", rel: 1e-10, abs: 1e-9, source: sm + " llf"}
		aic   = &agreement{name: "AIC − 2", rel: 1e-10, abs: 1e-9, source: sm + " aic (k parameters)"}
		bic   = &agreement{name: "BIC − ln N", rel: 1e-10, abs: 1e-9, source: sm + " bic (k parameters)"}
		aicc  = &agreement{name: "AICc", rel: 1e-10, abs: 1e-9, source: sm + " eval_measures.aicc(llf, N, k+1)"}
		hat   = &agreement{name: "leverage", rel: 1e-9, abs: 1e-14, source: sm + " hat_matrix_diag"}
		cooks = &agreement{name: "Cook's D", rel: 1e-9, abs: 1e-14, source: sm + " cooks_distance[0]"}
		press = &agreement{name: "PRESS", rel: 1e-9, source: sm + " Σ resid_press²"}
		dw    = &agreement{name: "Durbin–Watson", rel: 1e-9, source: sm + " durbin_watson"}
		pred  = &agreement{name: "prediction", rel: 1e-9, abs: 1e-9, source: sm + " get_prediction mean"}
		seObs = &agreement{name: "prediction se", rel: 1e-9, source: sm + " get_prediction se_obs"}
		tq    = &agreement{name: "t quantile", rel: 1e-13, source: "mpmath 1.2.1, 40 digits"}
		tqSp  = &agreement{name: "t quantile (scipy)", rel: 1e-8, source: sp + " t.ppf"}
		// statsmodels builds its interval with SciPy's t.ppf, which is off by
		// up to about 2e-9 relative (against mpmath) for some DF; the ends
		// are allowed 1e-8 of the half-width for that, on top of 1e-9
		// relative.
		pi    = &agreement{name: "95% interval end", rel: 1e-9, abs: 1e-8, source: sm + " summary_frame obs_ci"}
		vif   = &agreement{name: "VIF", rel: 1e-9, source: sm + " variance_inflation_factor"}
		partF = &agreement{name: "partial F", rel: 1e-9, source: sm + " compare_f_test"}
		partP = &agreement{name: "partial F p", rel: 1e-9, abs: 1e-15, source: sm + " compare_f_test"}
		theil = &agreement{name: "Theil–Sen", rel: 1e-12, abs: 1e-12, source: sp + " theilslopes(method='joint')"}
		// Huber: two IRLS runs stopped at their own tolerances near the
		// same fixed point (statsmodels with conv="coefs", tol 1e-12 of
		// the largest OLS coefficient).
		huberB = &agreement{name: "Huber coefficient", rel: 1e-7, abs: 1e-9, source: sm + " RLM HuberT(1.345), MAD"}
		huberS = &agreement{name: "Huber scale", rel: 1e-7, source: sm + " RLM scale"}
	)
	all := []*agreement{coef, bse, tval, pval, r2, adjR2, fval, fp, ssr, llf, aic, bic, aicc,
		hat, cooks, press, dw, pred, seObs, tq, tqSp, pi, vif, partF, partP, theil, huberB, huberS}

	for _, c := range readCrosscheck(t) {
		n := float64(len(c.Y))
		fits := []struct {
			name string
			fit  func() (*Regression, error)
		}{{"OLS", func() (*Regression, error) { return OLS(c.X, c.Y, true) }}}
		if len(c.X) == 1 {
			fits = append(fits, struct {
				name string
				fit  func() (*Regression, error)
			}{"Line", func() (*Regression, error) { return Line(c.X[0], c.Y) }})
		}
		for _, f := range fits {
			r, err := f.fit()
			if err != nil {
				t.Fatalf("%s %s: %v", c.Name, f.name, err)
			}
			at := c.Name + " " + f.name
			if float64(r.DF) != c.OLS.DfResid {
				t.Fatalf("%s: DF = %d, statsmodels df_resid %g", at, r.DF, c.OLS.DfResid)
			}
			for j := range r.Coef {
				w := fmt.Sprintf("%s[%d]", at, j)
				coef.check(t, w, r.Coef[j], c.OLS.Params[j])
				bse.check(t, w, r.StdErr[j], c.OLS.Bse[j])
				tval.check(t, w, r.T[j], c.OLS.Tvalues[j])
				pval.check(t, w, r.P[j], c.OLS.Pvalues[j])
			}
			r2.check(t, at, r.R2, c.OLS.Rsquared)
			adjR2.check(t, at, r.AdjR2, c.OLS.RsquaredAdj)
			fval.check(t, at, r.F, c.OLS.Fvalue)
			fp.check(t, at, r.FP, c.OLS.FPvalue)
			ssr.check(t, at, r.RSS, c.OLS.SSR)
			// statsmodels counts k parameters in AIC and BIC, this package
			// k + 1 (the variance too): convert before comparing.
			m := float64(len(r.Coef) + 1)
			llf.check(t, at, -(r.AIC-2*m)/2, c.OLS.LLF)
			aic.check(t, at, r.AIC-2, c.OLS.AIC)
			bic.check(t, at, r.BIC-math.Log(n), c.OLS.BIC)
			aicc.check(t, at, r.AICc, c.OLS.AICc)
			for i := range c.Y {
				w := fmt.Sprintf("%s obs %d", at, i)
				hat.check(t, w, r.Leverage[i], c.OLS.Hat[i])
				cooks.check(t, w, r.CooksD[i], c.OLS.Cooks[i])
			}
			press.check(t, at, r.PRESS, c.OLS.PRESS)
			dw.check(t, at, DurbinWatson(r.Residuals), c.OLS.DW)
			if r.DF != c.Prediction.DF {
				t.Fatalf("%s: DF %d, intervals computed with %d", at, r.DF, c.Prediction.DF)
			}
			tcrit := TQuantile(c.Prediction.Alpha, r.DF)
			tq.check(t, at, tcrit, c.Prediction.TMpmath)
			tqSp.check(t, at, tcrit, c.Prediction.TScipy)
			for i, p := range c.Prediction.Points {
				w := fmt.Sprintf("%s x0 #%d", at, i)
				yhat, se := r.Predict(p.X0)
				pred.check(t, w, yhat, p.Mean)
				seObs.check(t, w, se, p.SEObs)
				low, high := r.PredictionInterval(p.X0, 1-c.Prediction.Alpha)
				pi.checkScaled(t, w+" low", low, p.Lower, (p.Upper-p.Lower)/2)
				pi.checkScaled(t, w+" high", high, p.Upper, (p.Upper-p.Lower)/2)
			}
		}

		if c.VIF != nil {
			got, err := VIF(c.X)
			if err != nil {
				t.Fatalf("%s VIF: %v", c.Name, err)
			}
			for j := range got {
				vif.check(t, fmt.Sprintf("%s[%d]", c.Name, j), got[j], c.VIF[j])
			}
		}
		if c.PartialF != nil {
			full, err := OLS(c.X, c.Y, true)
			if err != nil {
				t.Fatal(err)
			}
			reduced, err := OLS(c.X[:len(c.X)-1], c.Y, true)
			if err != nil {
				t.Fatal(err)
			}
			F, p := PartialF(full, reduced)
			partF.check(t, c.Name, F, c.PartialF.F)
			partP.check(t, c.Name, p, c.PartialF.P)
		}
		if c.TheilSen != nil {
			ts, err := TheilSen(c.X[0], c.Y)
			if err != nil {
				t.Fatalf("%s Theil–Sen: %v", c.Name, err)
			}
			theil.check(t, c.Name+" slope", ts.Slope, c.TheilSen.Slope)
			theil.check(t, c.Name+" intercept", ts.Intercept, c.TheilSen.Intercept)
		}
		h, err := Huber(c.X, c.Y)
		if err != nil {
			t.Fatalf("%s Huber: %v", c.Name, err)
		}
		for j := range h.Coef {
			huberB.check(t, fmt.Sprintf("%s[%d]", c.Name, j), h.Coef[j], c.Huber.Params[j])
		}
		huberS.check(t, c.Name, h.Scale, c.Huber.Scale)
	}
	for _, a := range all {
		if a.compared == 0 {
			t.Errorf("%s: nothing compared", a.name)
			continue
		}
		t.Logf("%-18s %5d values, worst %.2g of the allowance (rel %g, abs %g) at %s", a.name, a.compared, a.worst, a.rel, a.abs, a.worstAt)
	}
}

// TestCrosscheckStep compares Step's best partitions with strucchange's
// breakpoints(y ~ 1, h = 3) on the same observations sorted by activity
// (testdata/crosscheck/steps.json, written by scripts/crosscheck/steps.R with
// R 4.2.2 and strucchange 1.5-3). With distinct activity levels both solve the
// same problem exactly, so the partitions must be identical; the RSS, summed
// in a different order, is allowed 1e-9 relative.
func TestCrosscheckStep(t *testing.T) {
	raw, err := os.ReadFile(filepath.Join("..", "..", "testdata", "crosscheck", "steps.json"))
	if err != nil {
		t.Fatal(err)
	}
	var doc struct {
		Cases []struct {
			Name   string    `json:"name"`
			H      int       `json:"h"`
			X      []float64 `json:"x"`
			Y      []float64 `json:"y"`
			Models []struct {
				Breaks int     `json:"breaks"`
				Last   []int   `json:"last_of_segment"`
				RSS    float64 `json:"rss"`
			} `json:"models"`
		} `json:"cases"`
	}
	if err := json.Unmarshal(raw, &doc); err != nil {
		t.Fatal(err)
	}
	if len(doc.Cases) < 10 {
		t.Fatalf("%d step cases, want at least 10", len(doc.Cases))
	}
	rss := &agreement{name: "step RSS", rel: 1e-9, source: "strucchange 1.5-3 breakpoints"}
	for _, c := range doc.Cases {
		s, err := Step(c.X, c.Y, 4, c.H)
		if err != nil {
			t.Fatalf("%s: %v", c.Name, err)
		}
		if len(s.Models) != len(c.Models) {
			t.Fatalf("%s: %d models, strucchange %d", c.Name, len(s.Models), len(c.Models))
		}
		for _, want := range c.Models {
			got := s.Models[want.Breaks-1]
			if len(got.Levels) != want.Breaks+1 {
				t.Fatalf("%s: model %d has %d levels", c.Name, want.Breaks-1, len(got.Levels))
			}
			last := 0
			for g, b := range want.Last {
				last += got.Levels[g].N
				if last != b {
					t.Errorf("%s, %d breaks: segment %d ends at observation %d, strucchange %d", c.Name, want.Breaks, g+1, last, b)
				}
			}
			rss.check(t, fmt.Sprintf("%s %d breaks", c.Name, want.Breaks), got.RSS, want.RSS)
		}
	}
	t.Logf("%d RSS values, worst %.2g of the allowance", rss.compared, rss.worst)
}
