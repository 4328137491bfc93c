package fit_test

import (
	"fmt"

	"github.com/costdrift/costdrift/internal/fit"
)

// Maintenance cost of a machine shop against machine hours over five months
// (invented figures). By hand: x̄ = 140, ȳ = 3 220, Sxy = 61 000, Sxx = 4 000,
// so the variable rate is 15.25 per hour and the fixed part 3 220 − 15.25·140
// = 1 085 a month; the residuals (−10, 35, −20, −25, 20) give RSS = 2 750,
// s = sqrt(2 750/3) = 30.28 and R² = 1 − 2 750/933 000 = 0.9971.
func ExampleLine() {
	hours := []float64{100, 120, 140, 160, 180}
	cost := []float64{2600, 2950, 3200, 3500, 3850}

	r, err := fit.Line(hours, cost)
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Printf("fixed %.2f a month, variable %.4f per hour\n", r.Coef[0], r.Coef[1])
	fmt.Printf("R² %.4f, residual SE %.2f, slope p-value %.2g\n", r.R2, r.ResidualSE, r.P[1])

	yhat, se := r.Predict([]float64{150})
	t := fit.TQuantile(0.05, r.DF)
	fmt.Printf("at 150 hours: %.2f, 95%% prediction interval %.2f to %.2f\n", yhat, yhat-t*se, yhat+t*se)
	// Output:
	// fixed 1085.00 a month, variable 15.2500 per hour
	// R² 0.9971, residual SE 30.28, slope p-value 6.8e-05
	// at 150 hours: 3372.50, 95% prediction interval 3265.86 to 3479.14
}

// A month of high cost is not a month of high activity: the high-low method
// uses the activity extremes (invented figures).
func ExampleHighLowEstimate() {
	hours := []float64{500, 800, 650, 400}
	cost := []float64{9000, 12000, 13500, 8000}

	hl, err := fit.HighLowEstimate(hours, cost)
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Printf("periods %d and %d: variable %.2f per hour, fixed %.2f\n", hl.HighIndex, hl.LowIndex, hl.Rate, hl.Fixed)
	// Output:
	// periods 1 and 3: variable 10.00 per hour, fixed 4000.00
}

// Supervision cost of a workshop against machine hours (invented figures): one
// supervisor below about 1 000 hours a month, two above. Step finds the
// levels and their activity ranges; with 12 months, 2 levels (AICc counts 2
// means, 1 breakpoint and the variance) beat 3. By hand: the low months
// deviate from 4 005 by (15, −15, 5, −25, −5, 25), 1 750 in squares; the
// high ones from 8 013.33 by 3 333.33 in squares; RSS = 5 083.33.
func ExampleStep() {
	hours := []float64{620, 1180, 710, 1320, 880, 1250, 940, 1400, 760, 1090, 830, 1210}
	cost := []float64{4020, 8010, 3990, 8050, 4010, 7980, 3980, 8030, 4000, 7990, 4030, 8020}

	s, err := fit.Step(hours, cost, 3, 3)
	if err != nil {
		fmt.Println(err)
		return
	}
	best := s.Models[s.Best]
	for _, l := range best.Levels {
		fmt.Printf("%.0f to %.0f hours: %.2f a month (%d months)\n", l.From, l.To, l.Mean, l.N)
	}
	fmt.Printf("levels %d, RSS %.1f\n", len(best.Levels), best.RSS)
	// Output:
	// 620 to 940 hours: 4005.00 a month (6 months)
	// 1090 to 1400 hours: 8013.33 a month (6 months)
	// levels 2, RSS 5083.3
}

// The 95 % prediction interval of next month's cost at a planned activity,
// for the machine-shop figures of ExampleLine.
func ExampleRegression_PredictionInterval() {
	hours := []float64{100, 120, 140, 160, 180}
	cost := []float64{2600, 2950, 3200, 3500, 3850}

	r, err := fit.Line(hours, cost)
	if err != nil {
		fmt.Println(err)
		return
	}
	low, high := r.PredictionInterval([]float64{150}, 0.95)
	fmt.Printf("at 150 hours: %.2f to %.2f\n", low, high)
	// Output:
	// at 150 hours: 3265.86 to 3479.14
}
