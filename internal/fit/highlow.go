package fit

import (
	"fmt"
	"math"
)

// HighLow is the high-low estimate of a cost's fixed and variable parts. It
// takes the periods of highest and lowest ACTIVITY, not of highest and lowest
// cost, and draws the line through those two points:
//
//	Rate  = (y_high − y_low) / (x_high − x_low)
//	Fixed = y_high − Rate·x_high
//
// It uses two observations only, so one unusual period moves it; the
// least-squares fits in this package use all of them.
type HighLow struct {
	HighIndex, LowIndex int     // indices into x of the highest and lowest activity
	Rate                float64 // variable cost per unit of activity
	Fixed               float64 // cost at zero activity implied by the line
}

// HighLowEstimate returns the high-low estimate for activity x and cost y.
// When several periods share the highest (or lowest) activity, the earliest
// index is taken.
//
// HighLowEstimate panics when len(x) != len(y). It returns an error wrapping
// ErrTooFewObservations when there are fewer than 2 periods, ErrNonFinite for
// NaN or ±Inf input or an activity range beyond float64, and
// ErrIllConditioned when every activity level is equal.
func HighLowEstimate(x, y []float64) (HighLow, error) {
	if len(x) != len(y) {
		panic(fmt.Sprintf("fit: HighLowEstimate x has %d values, y has %d", len(x), len(y)))
	}
	if len(x) < 2 {
		return HighLow{}, fmt.Errorf("high-low: %d periods: %w", len(x), ErrTooFewObservations)
	}
	if err := checkFinite(x, "x"); err != nil {
		return HighLow{}, fmt.Errorf("high-low: %w", err)
	}
	if err := checkFinite(y, "y"); err != nil {
		return HighLow{}, fmt.Errorf("high-low: %w", err)
	}
	high, low := 0, 0
	for i, v := range x {
		// Strict comparisons keep the earliest of tied periods.
		if v > x[high] {
			high = i
		}
		if v < x[low] {
			low = i
		}
	}
	if x[high] == x[low] {
		return HighLow{}, fmt.Errorf("high-low: every activity level is %g: %w", x[high], ErrIllConditioned)
	}
	span := x[high] - x[low]
	if math.IsInf(span, 0) {
		return HighLow{}, fmt.Errorf("high-low: activity range overflows: %w", ErrNonFinite)
	}
	rate := (y[high] - y[low]) / span
	return HighLow{
		HighIndex: high,
		LowIndex:  low,
		Rate:      rate,
		Fixed:     y[high] - rate*x[high],
	}, nil
}
