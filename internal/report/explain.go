package report

import (
	"fmt"
	"io"
	"math"
	"slices"
	"sort"
	"strings"
	"time"
	"unicode/utf8"

	"github.com/costdrift/costdrift/internal/costdrift"
	"github.com/costdrift/costdrift/internal/present"
)

// ExplainInput is what the store holds on one cost object, as explain reads
// it: the current behaviour, the run that last confirmed it and the fits of
// the object's latest analysis.
type ExplainInput struct {
	Behaviour   costdrift.Behaviour
	AccountName string
	Run         costdrift.AnalysisRun
	Alpha       float64 // the run's significance level; 0 when the run's settings do not say
	Fits        []costdrift.Fit
	// ActivityPeriod names the period whose activity a cost period was
	// fitted on, lag periods earlier; nil when the lag is always 0.
	ActivityPeriod func(period string, lag int) string
	// Decided is what the accountant decided about the object.
	Decided Decided
	// Prices are the costs as posted beside those restated, for a formula
	// fitted on restated costs; nil for one fitted as posted.
	Prices *PriceLevels
}

// Explanation is one cost object's behaviour with the evidence behind it.
// Row carries the same facts and numbers as the report; the rest is read
// from the fits and diagnostics the analysis stored. Unknown numbers are
// null in JSON.
type Explanation struct {
	Row
	Analysis    AnalysisInfo       `json:"analysis"`
	Drivers     []DriverLine       `json:"drivers"`
	ModelDriver string             `json:"model_driver"` // the driver the model comparison is for, "" without one
	ModelLag    int                `json:"model_lag"`
	Models      []ModelLine        `json:"models"`
	Comparison  *HighLowComparison `json:"high_low_comparison"`
	Diagnostics DiagnosticsView    `json:"diagnostics"`
	// Prices: the costs as posted beside those the formula was fitted on,
	// absent when they are the same.
	Prices *PriceLevels `json:"prices,omitempty"`
	// Notes are warnings the caller adds, such as data changed since the
	// analysis.
	Notes     []string `json:"notes"`
	Chart     string   `json:"chart,omitempty"`      // the cost against the driver
	TimeChart string   `json:"time_chart,omitempty"` // the cost over time
	Cautions  string   `json:"cautions"`

	// Accruals booked in one period and reversed in the next, when the
	// object has any in the window.
	Accruals *Accruals `json:"accruals,omitempty"`
}

// AnalysisInfo names the analysis the explanation comes from.
type AnalysisInfo struct {
	RunID      int64   `json:"run_id"`
	FinishedAt string  `json:"finished_at"` // RFC 3339, UTC
	WindowFrom string  `json:"window_from"`
	WindowTo   string  `json:"window_to"`
	Candidates int     `json:"candidates"` // driver-lag pairs tried
	Alpha      float64 `json:"alpha"`
}

// DriverLine is one driver at one lag: its straight-line fit
// cost = fixed + rate·driver and how it fared.
type DriverLine struct {
	Rank           int      `json:"rank"` // by PRESS per period among significant plausible fits; 0 when unranked
	Driver         string   `json:"driver"`
	Lag            int      `json:"lag"`
	N              int      `json:"n"`
	Fixed          *float64 `json:"fixed"`
	Rate           *float64 `json:"rate"`
	P              *float64 `json:"p"`      // the slope's two-sided p-value
	HolmP          *float64 `json:"holm_p"` // after Holm's correction over every candidate of the object
	R2             *float64 `json:"r2"`
	PRESSPerPeriod *float64 `json:"press_per_period"`
	Significant    bool     `json:"significant"`
	Implausible    bool     `json:"implausible"`
	Chosen         bool     `json:"chosen"` // the formula rests on this driver and lag
}

// ModelLine is one model of the comparison on the chosen driver.
type ModelLine struct {
	Model          costdrift.Model `json:"model"`
	Driver         string          `json:"driver,omitempty"`
	Lag            int             `json:"lag"`
	N              int             `json:"n"`
	R2             *float64        `json:"r2"`
	AICc           *float64        `json:"aicc"`
	DeltaAICc      *float64        `json:"delta_aicc"` // above the lowest comparable AICc; null when not comparable
	PRESSPerPeriod *float64        `json:"press_per_period"`
	// Comparable: fitted on as many periods as the chosen model, so its
	// AICc compares with the chosen model's.
	Comparable bool `json:"comparable"`
	Best       bool `json:"best"`   // lowest AICc among the comparable models
	Chosen     bool `json:"chosen"` // the model the formula uses
}

// HighLowEnd is the high or low activity period of the high-low method.
type HighLowEnd struct {
	Period         string  `json:"period"`          // the cost's period
	ActivityPeriod string  `json:"activity_period"` // the period whose activity it was fitted on
	Activity       float64 `json:"activity"`
	Cost           float64 `json:"cost"`
}

// Line is a straight cost formula cost = fixed + rate·driver.
type Line struct {
	Fixed *float64 `json:"fixed"`
	Rate  *float64 `json:"rate"`
}

// HighLowComparison sets the high-low estimate beside the least-squares line
// on the same driver and periods.
type HighLowComparison struct {
	High         HighLowEnd `json:"high"`
	Low          HighLowEnd `json:"low"`
	HighLow      Line       `json:"high_low"`
	LeastSquares Line       `json:"least_squares"`
	N            int        `json:"n"` // periods the least-squares line uses
	Warning      string     `json:"warning,omitempty"`
	Explanation  string     `json:"explanation"`
}

// DiagnosticsView is how far the chosen fit can be trusted.
type DiagnosticsView struct {
	DurbinWatson        *float64 `json:"durbin_watson"`
	DurbinWatsonReading string   `json:"durbin_watson_reading"`
	Robust              *Line    `json:"robust"` // Huber M-estimate
	LeastSquares        *Line    `json:"least_squares"`
	RobustNote          string   `json:"robust_note,omitempty"`
	// Basis says which fit the robust line and the outliers belong to
	// when that is not the formula itself (a step cost's straight line).
	Basis      string              `json:"basis,omitempty"`
	CooksLimit *float64            `json:"cooks_limit"` // 4/n
	Outliers   []costdrift.Outlier `json:"outliers"`
}

// Explain assembles the explanation of one cost object from what the store
// holds. It only selects, orders and sets side by side; the one piece of
// arithmetic is presentation: PRESS per period and AICc differences.
func Explain(in ExplainInput) Explanation {
	b := in.Behaviour
	names := map[string]string{b.Object.Account: in.AccountName}
	e := Explanation{
		Row:      DecidedRows([]costdrift.Behaviour{b}, names, map[string]Decided{b.Object.String(): in.Decided})[0],
		Notes:    []string{},
		Cautions: Caution,
		Analysis: AnalysisInfo{RunID: in.Run.ID, WindowFrom: in.Run.WindowFrom, WindowTo: in.Run.WindowTo, Alpha: in.Alpha},
		Prices:   in.Prices,
	}
	if !in.Run.FinishedAt.IsZero() {
		e.Analysis.FinishedAt = in.Run.FinishedAt.UTC().Format(time.RFC3339)
	}
	if b.Diagnostics != nil {
		e.Analysis.Candidates = b.Diagnostics.Candidates
	}
	activityPeriod := in.ActivityPeriod
	if activityPeriod == nil {
		activityPeriod = func(p string, _ int) string { return p }
	}

	var lin *costdrift.Fit // the straight line on the chosen driver and lag
	e.Drivers = []DriverLine{}
	for i := range in.Fits {
		f := &in.Fits[i]
		if f.Model != costdrift.ModelLinear {
			continue
		}
		chosen := b.Driver != "" && f.Driver == b.Driver && f.Lag == b.Lag
		if chosen {
			lin = f
		}
		e.Drivers = append(e.Drivers, DriverLine{
			Rank: f.PlausibleRanked, Driver: f.Driver, Lag: f.Lag, N: f.N,
			Fixed: ptr(f.Intercept), Rate: ptr(f.Slope), P: ptr(f.SlopeP), HolmP: ptr(f.SlopeAdjustedP), R2: ptr(f.R2),
			PRESSPerPeriod: perPeriod(f.PRESS, f.N), Significant: f.Significant, Implausible: f.Implausible, Chosen: chosen,
		})
	}
	sort.SliceStable(e.Drivers, func(i, j int) bool { return driverBefore(e.Drivers[i], e.Drivers[j]) })

	e.ModelDriver, e.ModelLag = b.Driver, b.Lag
	if b.Driver == "" && b.Diagnostics != nil {
		// A cost treated as fixed despite a significant driver keeps that
		// driver's models in the comparison.
		for _, m := range b.Diagnostics.Models {
			if m.Driver != "" {
				e.ModelDriver, e.ModelLag = m.Driver, m.Lag
				break
			}
		}
	}
	e.Models = models(b, in.Fits)

	if hl := b.HighLow; hl != nil {
		c := &HighLowComparison{
			High:    HighLowEnd{Period: hl.HighPeriod, ActivityPeriod: activityPeriod(hl.HighPeriod, b.Lag), Activity: hl.HighActivity, Cost: hl.HighCost},
			Low:     HighLowEnd{Period: hl.LowPeriod, ActivityPeriod: activityPeriod(hl.LowPeriod, b.Lag), Activity: hl.LowActivity, Cost: hl.LowCost},
			HighLow: Line{Fixed: ptr(hl.Fixed), Rate: ptr(hl.Rate)},
			Warning: hl.Warning,
		}
		if lin != nil {
			c.LeastSquares, c.N = Line{Fixed: ptr(lin.Intercept), Rate: ptr(lin.Slope)}, lin.N
		}
		c.Explanation = highLowSentence(b, c)
		e.Comparison = c
	}

	e.Diagnostics = diagnostics(b, in.Fits, lin)
	return e
}

// driverBefore orders the ranked drivers by rank, then the others by PRESS
// per period, unknown last, then by name and lag.
func driverBefore(a, b DriverLine) bool {
	if (a.Rank > 0) != (b.Rank > 0) {
		return a.Rank > 0
	}
	if a.Rank > 0 {
		return a.Rank < b.Rank
	}
	pa, pb := orInf(a.PRESSPerPeriod), orInf(b.PRESSPerPeriod)
	if pa != pb {
		return pa < pb
	}
	if a.Driver != b.Driver {
		return a.Driver < b.Driver
	}
	return a.Lag < b.Lag
}

// chosenModel is the model the class's formula uses.
func chosenModel(b costdrift.Behaviour) costdrift.Model {
	switch {
	case b.Class == costdrift.Step:
		return costdrift.ModelStep
	case b.Driver2 != "":
		return costdrift.ModelTwoDriver
	case b.Class == costdrift.Variable:
		return costdrift.ModelProportional
	case b.Class == costdrift.Mixed:
		return costdrift.ModelLinear
	}
	return costdrift.ModelConstant
}

// models lists the stored model comparison, comparable models (same n as
// the chosen one) by AICc, then the others. AICc compares models fitted to
// the same observations only (common practice), so a model on another
// number of periods gets no ΔAICc.
//
// The stored comparison carries the step model of the best-ranked driver;
// when a step cost's levels are on another driver, the stored step fit of
// that driver stands in for it, so that every line is on the chosen driver.
func models(b costdrift.Behaviour, fits []costdrift.Fit) []ModelLine {
	out := []ModelLine{}
	if b.Diagnostics == nil {
		return out
	}
	summaries := slices.Clone(b.Diagnostics.Models)
	if b.Class == costdrift.Step {
		for i, m := range summaries {
			if m.Model != costdrift.ModelStep || (m.Driver == b.Driver && m.Lag == b.Lag) {
				continue
			}
			for _, f := range fits {
				if f.Model == costdrift.ModelStep && f.Driver == b.Driver && f.Lag == b.Lag {
					summaries[i] = costdrift.ModelSummary{Model: f.Model, Driver: f.Driver, Lag: f.Lag, N: f.N, AICc: f.AICc, PRESS: f.PRESS, R2: f.R2}
				}
			}
		}
	}
	want := chosenModel(b)
	refN := -1
	for _, m := range summaries {
		if m.Model == want {
			refN = m.N
		}
	}
	best := math.Inf(1)
	for _, m := range summaries {
		line := ModelLine{Model: m.Model, Driver: m.Driver, Lag: m.Lag, N: m.N, R2: ptr(m.R2), AICc: ptr(m.AICc),
			PRESSPerPeriod: perPeriod(m.PRESS, m.N), Comparable: m.N == refN, Chosen: m.Model == want}
		if line.Comparable && line.AICc != nil {
			best = math.Min(best, m.AICc)
		}
		out = append(out, line)
	}
	for i := range out {
		if out[i].Comparable && out[i].AICc != nil {
			out[i].DeltaAICc = ptr(*out[i].AICc - best)
			out[i].Best = *out[i].AICc == best
		}
	}
	sort.SliceStable(out, func(i, j int) bool {
		if out[i].Comparable != out[j].Comparable {
			return out[i].Comparable
		}
		return orInf(out[i].AICc) < orInf(out[j].AICc)
	})
	return out
}

// highLowSentence says why the high-low line differs from least squares.
func highLowSentence(b costdrift.Behaviour, c *HighLowComparison) string {
	var s strings.Builder
	n := "all the periods"
	if c.N > 0 {
		n = fmt.Sprintf("all %d periods", c.N)
	}
	fmt.Fprintf(&s, "High-low draws its line through two periods only, so whatever is unusual about those two goes straight into its formula; least squares weighs %s.", n)
	if c.LeastSquares.Fixed != nil && c.LeastSquares.Rate != nil && c.HighLow.Fixed != nil && c.HighLow.Rate != nil {
		df, dr := *c.HighLow.Fixed-*c.LeastSquares.Fixed, *c.HighLow.Rate-*c.LeastSquares.Rate
		fmt.Fprintf(&s, " Here high-low puts the fixed part %s %s and the rate %s %s.",
			present.Amount(math.Abs(df)), higherLower(df), present.Rate(math.Abs(dr)), higherLower(dr))
	}
	if c.Warning != "" {
		s.WriteString(" Warning: " + c.Warning + ".")
	}
	if b.Class == costdrift.Step {
		s.WriteString(" For a step cost neither straight line is the formula: the levels are.")
	}
	return s.String()
}

func higherLower(d float64) string {
	if d < 0 {
		return "lower"
	}
	return "higher"
}

// diagnostics gathers the chosen fit's Durbin–Watson statistic, the robust
// line beside least squares and the outliers.
func diagnostics(b costdrift.Behaviour, fits []costdrift.Fit, lin *costdrift.Fit) DiagnosticsView {
	d := DiagnosticsView{Outliers: b.Outliers}
	if d.Outliers == nil {
		d.Outliers = []costdrift.Outlier{}
	}
	if b.Diagnostics == nil || b.Driver == "" {
		d.DurbinWatsonReading = "not computed: the formula uses no driver"
		return d
	}
	diag := b.Diagnostics
	d.DurbinWatson = ptr(diag.DurbinWatson)
	d.DurbinWatsonReading = DurbinWatsonReading(diag.DurbinWatson)
	d.RobustNote = diag.RobustNote
	if !math.IsNaN(diag.RobustIntercept) || !math.IsNaN(diag.RobustSlope) {
		d.Robust = &Line{Fixed: ptr(diag.RobustIntercept), Rate: ptr(diag.RobustSlope)}
	}
	// The robust line and the outliers are of the least-squares fit the
	// analysis diagnosed: both drivers when there are two, else the straight
	// line on the chosen driver (also for a step cost and a variable one).
	base := lin
	for i := range fits {
		if b.Driver2 != "" && fits[i].Model == costdrift.ModelTwoDriver && fits[i].Driver == b.Driver && fits[i].Lag == b.Lag {
			base = &fits[i]
		}
	}
	if base != nil {
		d.LeastSquares = &Line{Fixed: ptr(base.Intercept), Rate: ptr(base.Slope)}
		if base.N > 0 {
			d.CooksLimit = ptr(4 / float64(base.N))
		}
	}
	driver := DriverLabel(b.Driver, b.Lag)
	switch {
	case b.Class == costdrift.Step:
		d.Basis = "the straight line on " + driver + ", not the step levels (the Durbin–Watson statistic is of the levels' residuals)"
	case b.Class == costdrift.Variable && b.Driver2 == "":
		d.Basis = "the straight line with a fixed part on " + driver + ", of which the proportional formula is the special case"
	}
	return d
}

// DurbinWatsonReading puts the Durbin–Watson statistic
// d = Σ(e_t − e_{t−1})² / Σe_t² into words. d lies between 0 and 4; about 2
// means neighbouring residuals are unrelated, toward 0 that they follow each
// other, toward 4 that they alternate. The 1.5 and 2.5 marks are a common
// rule of thumb, not the test's exact bounds, which depend on n and the
// number of drivers (common practice).
func DurbinWatsonReading(d float64) string {
	const rough = " (a rough reading; the exact bounds depend on n and the number of drivers)"
	switch {
	case math.IsNaN(d):
		return "not computed"
	case d < 1.0:
		return "far below 2: residuals follow each other strongly, as when a trend, a shift in the cost or a missed lag is left in them; the p-values are then too optimistic" + rough
	case d < 1.5:
		return "below 1.5: residuals tend to follow each other, as with a trend or a missed lag" + rough
	case d <= 2.5:
		return "near 2: no sign that one period's residual follows the last" + rough
	default:
		return "above 2.5: residuals tend to alternate, as when an amount is booked in one period and reversed in the next" + rough
	}
}

// ExplainJSON writes the explanation as one indented JSON object.
func ExplainJSON(w io.Writer, e Explanation) error {
	return encodeJSON(w, e, false) // reasons say "p < 0.001"; nothing here is embedded in HTML
}

// ExplainText writes the explanation as plain aligned text: the behaviour,
// the drivers tried, the model comparison, high-low beside least squares,
// the diagnostics and the cautions. Text from the store, and the chart's
// path, are shown through TerminalText.
func ExplainText(w io.Writer, e Explanation, currency string) error {
	var s strings.Builder
	explainHeader(&s, e, currency)
	explainPrices(&s, e)
	explainDrivers(&s, e, currency)
	explainModels(&s, e)
	explainHighLow(&s, e)
	explainDiagnostics(&s, e.Diagnostics)
	explainExcluded(&s, e)
	explainAccruals(&s, e)
	explainNotes(&s, e)
	s.WriteString("\n" + e.Cautions + "\n")
	_, err := io.WriteString(w, s.String())
	return err
}

// explainHeader writes the title and the behaviour: class, formula,
// driver, the periods fitted, the reason and the analysis.
func explainHeader(s *strings.Builder, e Explanation, currency string) {
	title := TerminalText(e.Object)
	if e.AccountName != "" {
		title += " — " + TerminalText(e.AccountName)
	}
	s.WriteString(title + "   (amounts in " + currency + " per period)\n")
	driver := "none"
	if e.Driver != nil {
		driver = TerminalText(DriverLabel(*e.Driver, *e.Lag))
		if e.Driver2 != nil {
			driver += " and " + TerminalText(DriverLabel(*e.Driver2, *e.Lag2))
		}
	}
	fitted := fmt.Sprintf("%d periods, %s to %s", e.N, TerminalText(e.Since), TerminalText(e.Until))
	if e.R2 != nil {
		fitted += ", R² " + fmt.Sprintf("%.3f", *e.R2)
	}
	if e.RangeMin != nil && e.RangeMax != nil {
		fitted += ", relevant range " + present.ActivityRange(*e.RangeMin, *e.RangeMax)
		if e.Unit != "" {
			fitted += " (" + TerminalText(present.Plural(e.Unit)) + ")"
		}
	}
	analysis := fmt.Sprintf("run %d", e.Analysis.RunID)
	if e.Analysis.FinishedAt != "" {
		analysis += " of " + strings.Replace(strings.TrimSuffix(e.Analysis.FinishedAt, "Z"), "T", " ", 1) + " UTC"
	}
	analysis += fmt.Sprintf(", window %s to %s, %d driver-lag candidates", TerminalText(e.Analysis.WindowFrom), TerminalText(e.Analysis.WindowTo),
		e.Analysis.Candidates)
	if e.Analysis.Alpha > 0 {
		analysis += fmt.Sprintf(", Holm-corrected at %g", e.Analysis.Alpha)
	}
	keyValues(s, [][2]string{
		{"class", TerminalText(string(e.Class))},
		{"formula", TerminalText(strings.TrimSuffix(e.Formula+"; "+e.Gaps, "; "))},
		{"driver", driver},
		{"fitted on", fitted},
		{"reason", TerminalText(e.Reason)},
		{"analysis", analysis},
	})
}

// explainDrivers writes every driver and lag tried, ranked, the chosen one
// marked, with what PRESS/N means.
func explainDrivers(s *strings.Builder, e Explanation, currency string) {
	s.WriteString("\nDrivers tried: cost = fixed + rate × driver by least squares, ranked by leave-one-out\nerror among slopes that are positive and significant after Holm's correction\n")
	if len(e.Drivers) == 0 && e.Cadence != nil {
		wrap(s, "none tried: "+cadenceNoDriver(*e.Cadence), "  ", textWidth)
		return
	}
	if len(e.Drivers) == 0 {
		s.WriteString("  no driver could be fitted (no activity series covers enough periods)\n")
		return
	}
	t := table{header: []string{"RANK", "DRIVER", "LAG", "RATE", "P", "HOLM P", "R²", "PRESS/N", "N", ""}, right: "rlrrrrrrrl"}
	var chosen *DriverLine
	for i, d := range e.Drivers {
		rank := "-"
		if d.Rank > 0 {
			rank = fmt.Sprint(d.Rank)
		}
		note := ""
		switch {
		case d.Chosen:
			note = "◀ chosen"
			chosen = &e.Drivers[i]
		case d.Implausible:
			note = "implausible: significant negative slope, not used"
		case !d.Significant:
			note = "not significant"
		}
		t.add(rank, TerminalText(d.Driver), fmt.Sprint(d.Lag), rate(d.Rate), pValue(d.P), pValue(d.HolmP), num(d.R2, 3), press(d.PRESSPerPeriod), fmt.Sprint(d.N), note)
	}
	t.write(s, "  ")
	fmt.Fprintf(s, "  PRESS/N: mean squared error (%s²) of predicting each period from the others; lower is better.\n", currency)
	if chosen != nil && chosen.PRESSPerPeriod != nil {
		fmt.Fprintf(s, "  For the chosen driver's line its square root is %s %s a period.\n", Number(math.Sqrt(*chosen.PRESSPerPeriod), 2), currency)
	}
}

// explainModels writes the comparison of the models on the chosen driver;
// nothing when there is none.
func explainModels(s *strings.Builder, e Explanation) {
	if len(e.Models) == 0 {
		return
	}
	on := "without a driver"
	if e.ModelDriver != "" {
		on = "on " + TerminalText(e.ModelDriver) + ", lag " + fmt.Sprint(e.ModelLag)
	}
	fmt.Fprintf(s, "\nModels %s: lower AICc is better; 4 or more above the best is considerably less support\n", on)
	t := table{header: []string{"MODEL", "DRIVER", "N", "R²", "AICc", "ΔAICc", "PRESS/N", ""}, right: "llrrrrrl"}
	uncentred := false
	for _, m := range e.Models {
		r2 := num(m.R2, 3)
		if m.Model == costdrift.ModelProportional && m.R2 != nil {
			r2 += "*"
			uncentred = true
		}
		var notes []string
		if m.Chosen {
			notes = append(notes, "◀ chosen")
		}
		if m.Best {
			notes = append(notes, "lowest AICc")
		}
		if !m.Comparable {
			notes = append(notes, "other n: AICc not comparable")
		}
		drv := "-"
		if m.Driver != "" {
			drv = TerminalText(m.Driver) + ", lag " + fmt.Sprint(m.Lag)
		}
		t.add(TerminalText(strings.ReplaceAll(string(m.Model), "_", "-")), drv, fmt.Sprint(m.N), r2, num(m.AICc, 1), num(m.DeltaAICc, 1), press(m.PRESSPerPeriod), strings.Join(notes, ", "))
	}
	t.write(s, "  ")
	if uncentred {
		s.WriteString("  * measured from zero cost, not from the mean: not comparable with the other R² values\n")
	}
}

// explainHighLow writes the high-low estimate beside least squares;
// nothing without one.
func explainHighLow(s *strings.Builder, e Explanation) {
	c := e.Comparison
	if c == nil {
		return
	}
	// High-low is on the first driver alone, also when the formula has two.
	fmt.Fprintf(s, "\nHigh-low beside least squares, on %s\n", TerminalText(DriverLabel(*e.Driver, *e.Lag)))
	lagged := c.High.ActivityPeriod != c.High.Period || c.Low.ActivityPeriod != c.Low.Period
	t := table{header: []string{"", "PERIOD", "ACTIVITY", "COST"}, right: "llrr"}
	if lagged {
		t = table{header: []string{"", "PERIOD", "ACTIVITY OF", "ACTIVITY", "COST"}, right: "lllrr"}
	}
	for _, end := range []struct {
		name string
		e    HighLowEnd
	}{{"highest activity", c.High}, {"lowest activity", c.Low}} {
		if lagged {
			t.add(end.name, TerminalText(end.e.Period), TerminalText(end.e.ActivityPeriod), Activity(end.e.Activity), Number(end.e.Cost, 2))
		} else {
			t.add(end.name, TerminalText(end.e.Period), Activity(end.e.Activity), Number(end.e.Cost, 2))
		}
	}
	t.write(s, "  ")
	s.WriteString("\n")
	t = table{header: []string{"", "FIXED", "RATE", "PERIODS"}, right: "lrrr"}
	t.add("high-low", num(c.HighLow.Fixed, 2), rate(c.HighLow.Rate), "2")
	if c.N > 0 {
		t.add("least squares", num(c.LeastSquares.Fixed, 2), rate(c.LeastSquares.Rate), fmt.Sprint(c.N))
	}
	t.write(s, "  ")
	wrap(s, TerminalText(c.Explanation), "  ", textWidth)
}

// explainDiagnostics writes how far the chosen fit can be trusted: the
// residuals' autocorrelation, the robust fit beside least squares and the
// outliers.
func explainDiagnostics(s *strings.Builder, d DiagnosticsView) {
	s.WriteString("\nDiagnostics\n")
	if d.DurbinWatson != nil {
		wrap(s, fmt.Sprintf("Durbin–Watson %.2f, %s", *d.DurbinWatson, d.DurbinWatsonReading), "  ", textWidth)
	} else {
		wrap(s, "Durbin–Watson: "+d.DurbinWatsonReading+".", "  ", textWidth)
	}
	if d.Basis != "" {
		wrap(s, "The robust fit and the outliers below are of "+TerminalText(d.Basis)+".", "  ", textWidth)
	}
	if d.Robust != nil {
		t := table{header: []string{"", "FIXED", "RATE"}, right: "lrr"}
		t.add("robust (Huber)", num(d.Robust.Fixed, 2), rate(d.Robust.Rate))
		if d.LeastSquares != nil {
			t.add("least squares", num(d.LeastSquares.Fixed, 2), rate(d.LeastSquares.Rate))
		}
		t.write(s, "  ")
		if d.RobustNote != "" {
			wrap(s, "Note: "+TerminalText(d.RobustNote)+".", "  ", textWidth)
		} else {
			s.WriteString("  The robust rate is within two standard errors of least squares: no small group of periods sways it.\n")
		}
	}
	if d.CooksLimit != nil {
		limit := fmt.Sprintf("%.3f", *d.CooksLimit)
		if len(d.Outliers) == 0 {
			fmt.Fprintf(s, "  Outliers: none (no period has a Cook's distance above 4/n = %s).\n", limit)
		} else {
			fmt.Fprintf(s, "  Outliers: periods with a Cook's distance above 4/n = %s\n", limit)
			t := table{header: []string{"PERIOD", "COOK'S D", "STUDENTISED RESIDUAL"}, right: "lrr"}
			for _, o := range d.Outliers {
				t.add(TerminalText(o.Period), fmt.Sprintf("%.3f", o.CooksD), fmt.Sprintf("%.2f", o.Studentised))
			}
			t.write(s, "    ")
		}
	}
}

// explainExcluded lists the periods the accountant left out of the fit.
func explainExcluded(s *strings.Builder, e Explanation) {
	if len(e.ExcludedPeriods) == 0 {
		return
	}
	s.WriteString("\nLeft out of the fit by decision (not fitted, not counted in n):\n")
	for _, x := range e.ExcludedPeriods {
		at := x.At
		if t, err := time.Parse(time.RFC3339, x.At); err == nil {
			at = t.Format("2006-01-02")
		}
		wrap(s, fmt.Sprintf("%s by %s on %s: %s", TerminalText(x.Period), TerminalText(x.By), at, TerminalText(x.Reason)), "  ", textWidth)
	}
}

// explainNotes writes the caller's notes and where the chart went.
func explainNotes(s *strings.Builder, e Explanation) {
	if len(e.Notes) > 0 || e.Chart != "" || e.TimeChart != "" {
		s.WriteString("\n")
	}
	for _, n := range e.Notes {
		wrap(s, "Note: "+TerminalText(n), "", textWidth)
	}
	if e.Chart != "" {
		// The path is written whole: wrapping would fold its spaces.
		s.WriteString("Chart written to " + TerminalText(e.Chart) + "\n")
		if e.Class == costdrift.Step && len(e.Diagnostics.Outliers) > 0 {
			s.WriteString("The straight line's outliers are not marked on the step levels.\n")
		}
	}
	if e.TimeChart != "" {
		s.WriteString("Cost over time written to " + TerminalText(e.TimeChart) + "\n")
	}
}

// keyValues writes "  key   value" lines with the values aligned and
// long values wrapped under themselves.
func keyValues(s *strings.Builder, kv [][2]string) {
	width := 0
	for _, p := range kv {
		width = max(width, utf8.RuneCountInString(p[0]))
	}
	indent := strings.Repeat(" ", 2+width+2)
	for _, p := range kv {
		var value strings.Builder
		wrap(&value, p[1], indent, textWidth)
		s.WriteString("  " + pad(p[0], width, false) + "  " + strings.TrimPrefix(value.String(), indent))
	}
}

// textWidth is where explain wraps its sentences.
const textWidth = 100

// table is a small text table: columns padded to their widest cell, right
// aligned where right has an 'r', two spaces apart.
type table struct {
	header []string
	right  string
	rows   [][]string
}

func (t *table) add(cells ...string) { t.rows = append(t.rows, cells) }

func (t *table) write(s *strings.Builder, indent string) {
	widths := make([]int, len(t.header))
	for _, r := range append([][]string{t.header}, t.rows...) {
		for i, c := range r {
			widths[i] = max(widths[i], utf8.RuneCountInString(c))
		}
	}
	for _, r := range append([][]string{t.header}, t.rows...) {
		var line strings.Builder
		line.WriteString(indent)
		for i, c := range r {
			if i > 0 {
				line.WriteString("  ")
			}
			line.WriteString(pad(c, widths[i], i < len(t.right) && t.right[i] == 'r'))
		}
		s.WriteString(strings.TrimRight(line.String(), " ") + "\n")
	}
}

func pad(s string, width int, right bool) string {
	gap := strings.Repeat(" ", max(0, width-utf8.RuneCountInString(s)))
	if right {
		return gap + s
	}
	return s + gap
}

// wrap writes text in lines of at most width runes, each after indent.
func wrap(s *strings.Builder, text, indent string, width int) {
	line := indent
	for _, word := range strings.Fields(text) {
		if line != indent && utf8.RuneCountInString(line)+1+utf8.RuneCountInString(word) > width {
			s.WriteString(line + "\n")
			line = indent
		}
		if line != indent {
			line += " "
		}
		line += word
	}
	if line != indent {
		s.WriteString(line + "\n")
	}
}

// Activity formats a driver value (present.Activity): 681, 1,533.1,
// 12.25, 0.0512.
func Activity(v float64) string { return present.Activity(v) }

func num(v *float64, decimals int) string {
	if v == nil {
		return "-"
	}
	return Number(*v, decimals)
}

// pValue shows a p-value of a t or F distribution: three decimals, and
// anything below present.AnalyticResolution as < 0.001.
func pValue(p *float64) string {
	if p == nil {
		return "-"
	}
	return present.PValue(*p, present.AnalyticResolution)
}

// rate shows a rate per unit (present.Rate).
func rate(v *float64) string {
	if v == nil {
		return "-"
	}
	return present.Rate(*v)
}

// press shows a mean squared error: whole units once it is large.
func press(v *float64) string {
	if v != nil && math.Abs(*v) < 100 {
		return num(v, 2)
	}
	return num(v, 0)
}

func perPeriod(press float64, n int) *float64 {
	if n <= 0 {
		return nil
	}
	return ptr(press / float64(n))
}

func orInf(p *float64) float64 {
	if p == nil {
		return math.Inf(1)
	}
	return *p
}

func words(driver string) string { return strings.ReplaceAll(driver, "_", " ") }

// DriverLabel names a driver at a lag in words, as formulas and chart axes
// show it: "machine hours of the period before".
func DriverLabel(driver string, lag int) string { return words(driver) + lagText(lag) }
