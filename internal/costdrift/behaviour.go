package costdrift

// Class is the cost-behaviour class of a cost object.
type Class string

const (
	Fixed            Class = "fixed"
	Variable         Class = "variable"
	Mixed            Class = "mixed"
	Step             Class = "step"
	Unexplained      Class = "unexplained"
	InsufficientData Class = "insufficient_data"
)

// Model names a candidate cost formula.
type Model string

const (
	ModelConstant     Model = "constant"     // cost = a
	ModelLinear       Model = "linear"       // cost = a + b·driver
	ModelProportional Model = "proportional" // cost = b·driver
	ModelStep         Model = "step"         // cost = level(driver)
	ModelTwoDriver    Model = "two_driver"   // cost = a + b·driver + b2·driver2
)

// Outlier is a period whose cost the fit explains badly or that sways it:
// Cook's distance above 4/n.
type Outlier struct {
	Period      string  `json:"period"`
	CooksD      float64 `json:"cooks_d"`
	Studentised float64 `json:"studentised"`
}

// ModelSummary is one line of the model comparison for the chosen driver.
type ModelSummary struct {
	Model  Model   `json:"model"`
	Driver string  `json:"driver,omitempty"`
	Lag    int     `json:"lag"`
	N      int     `json:"n"`
	AICc   float64 `json:"aicc"`
	PRESS  float64 `json:"press"`
	R2     float64 `json:"r2"`
}

// Diagnostics back the chosen formula: the model comparison, the residuals'
// autocorrelation and a robust fit beside least squares.
type Diagnostics struct {
	Models          []ModelSummary `json:"models"`
	DurbinWatson    float64        `json:"durbin_watson"`
	RobustIntercept float64        `json:"robust_intercept"`
	RobustSlope     float64        `json:"robust_slope"`
	RobustNote      string         `json:"robust_note,omitempty"`
	Candidates      int            `json:"candidates"`
}

// Fit is one candidate model of one cost object against one driver and lag,
// with the statistics that rank and classify it. Money is in currency units.
type Fit struct {
	Object          CostObject
	Driver          string // "" for the constant model
	Lag             int    // periods the driver leads the cost
	Model           Model
	N               int
	Intercept       float64
	InterceptSE     float64
	InterceptP      float64
	Slope           float64
	SlopeSE         float64
	SlopeT          float64
	SlopeP          float64 // unadjusted two-sided p-value of the slope
	SlopeAdjustedP  float64 // after the multiple-testing correction over all candidates of the object
	R2              float64
	ResidualSE      float64
	PRESS           float64
	AICc            float64
	RangeMin        float64 // smallest and largest driver value in the fit: the relevant range
	RangeMax        float64
	Significant     bool // a positive slope significant after correction
	Implausible     bool // a significant negative slope: reported, never used
	Chosen          bool // the fit the behaviour is based on
	PlausibleRanked int  // rank by PRESS among significant plausible fits; 0 when unranked

	Levels []StepLevel // model step: the levels

	// Model two_driver: the second driver and its coefficient, tested by
	// partial F, and the variance inflation of the pair.
	Driver2  string
	Lag2     int
	Slope2   float64
	Slope2SE float64
	Slope2P  float64
	VIF      float64

	// Diagnostics, filled on the chosen fit.
	DurbinWatson    float64
	RobustIntercept float64
	RobustSlope     float64
	Outliers        []Outlier
}

// HighLow is the high-low estimate beside the regression: the line through the
// periods of highest and lowest activity.
type HighLow struct {
	HighPeriod   string  `json:"high_period"`
	LowPeriod    string  `json:"low_period"`
	HighActivity float64 `json:"high_activity"`
	LowActivity  float64 `json:"low_activity"`
	HighCost     float64 `json:"high_cost"`
	LowCost      float64 `json:"low_cost"`
	Fixed        float64 `json:"fixed"`
	Rate         float64 `json:"rate"`
	Warning      string  `json:"warning,omitempty"` // set when either end is an outlier of the regression
}

// StepLevel is one level of a step-fixed cost: Level applies to driver values
// in [From, To].
type StepLevel struct {
	From  float64 `json:"from"`
	To    float64 `json:"to"`
	Level float64 `json:"level"`
	N     int     `json:"n,omitempty"` // periods at this level
}

// Behaviour is the classified behaviour of one cost object: its class, driver
// and cost formula, fixed per period plus rate per unit of driver, valid
// inside the relevant range [RangeMin, RangeMax].
type Behaviour struct {
	Object         CostObject
	Class          Class
	Driver         string // "" for fixed, unexplained and insufficient data
	Unit           string // unit of the driver, e.g. "machine hour"
	Lag            int
	FixedPerPeriod float64
	VariableRate   float64
	R2             float64
	N              int
	RangeMin       float64
	RangeMax       float64
	Since          string // first period of the current behaviour
	Until          string // last period the analysis saw
	Steps          []StepLevel
	Reason         string // one line saying why this class
	HighLow        *HighLow
	CV             float64 // coefficient of variation of the cost over the window
	MeanCost       float64

	// A second driver, when forward selection adopted one:
	// cost = fixed + rate·driver + rate2·driver2.
	Driver2       string
	Unit2         string
	Lag2          int
	VariableRate2 float64

	Outliers    []Outlier
	Diagnostics *Diagnostics

	// Break is the dated change found in the window, when there is one; the
	// behaviour above is then fitted from its period on (Since).
	Break *Break
	// Spending checks the newest periods' actual cost against the
	// formula's 95 % prediction interval at their actual activity, the
	// formula fitted without them.
	Spending []SpendingCheck

	// Prediction holds what a prediction from the formula needs (the fitted
	// model's coefficients, (XᵀX)⁻¹, residual standard error and degrees of
	// freedom), so that a budget at planned activity, with its prediction
	// interval, comes from the store without refitting. Its model is the
	// formula's: constant for fixed and unexplained costs (and a
	// provisional step), through the origin for variable ones, a line for
	// mixed ones, both drivers with a second driver, one indicator per
	// level for step costs. Nil when the class is insufficient_data.
	Prediction *PredictionTerms

	// PriceBase is the period at whose price level the costs were
	// restated before the fit (README, Prices and inflation): the money of
	// the formula, its break and its spending checks is at that period's
	// prices. "" when the costs were fitted as posted.
	PriceBase string

	// Pending is a change of class, driver or lag seen by one analysis
	// without a significant break: it takes effect only when the next
	// analysis sees it too, so that behaviour does not flap.
	Pending *Pending

	// Cadence is set on a cost posted every few periods and not in
	// between; its formula is then per period, the posting spread
	// (Cadence).
	Cadence *Cadence
}

// SpendingCheck is one period's actual cost against its prediction.
type SpendingCheck struct {
	Period   string  `json:"period"`
	Activity float64 `json:"activity"`
	Actual   float64 `json:"actual"`
	Expected float64 `json:"expected"`
	Low      float64 `json:"low95"`
	High     float64 `json:"high95"`
}

// Outside reports whether the actual cost is outside the interval.
func (c SpendingCheck) Outside() bool { return c.Actual < c.Low || c.Actual > c.High }

// Pending is a change awaiting confirmation.
type Pending struct {
	Class  Class  `json:"class"`
	Driver string `json:"driver,omitempty"`
	Lag    int    `json:"lag"`
	Seen   int    `json:"seen"` // analyses in a row that saw it
}

// Break is a dated change in an object's behaviour: the sup-F (Quandt–Andrews)
// test over candidate break periods, with its p-value, and the formula on
// each side fitted with the same driver.
type Break struct {
	Period      string  `json:"period"`      // first period of the new behaviour
	LastBefore  string  `json:"last_before"` // last period of the old one
	WindowFrom  string  `json:"window_from"` // first period the analysis saw
	Test        string  `json:"test"`
	Statistic   float64 `json:"statistic"`
	P           float64 `json:"p"`
	Replicates  int     `json:"replicates"`
	Driver      string  `json:"driver,omitempty"` // the driver both sides were fitted on
	Lag         int     `json:"lag"`
	FixedBefore float64 `json:"fixed_before"`
	RateBefore  float64 `json:"rate_before"`
	FixedAfter  float64 `json:"fixed_after"`
	RateAfter   float64 `json:"rate_after"`
	Periods     int     `json:"periods_after"` // periods since the break
	// LevelBefore is the mean cost per period before the break, and
	// ActivityBefore the driver's mean then: the scale a shift is judged on.
	LevelBefore    float64 `json:"level_before"`
	ActivityBefore float64 `json:"activity_before"`
	// Provisional: fewer than min_periods follow the break, so the
	// behaviour keeps the driver it had before and is refitted on them.
	Provisional bool `json:"provisional"`
	// PredictionBefore are the prediction terms of the formula before the
	// break (FixedBefore, RateBefore), stored with the closed behaviour
	// row for the periods before it.
	PredictionBefore *PredictionTerms `json:"-"`
}
