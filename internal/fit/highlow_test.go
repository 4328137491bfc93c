package fit

import (
	"errors"
	"math"
	"strings"
	"testing"
)

// TestHighLowEstimate: the method takes the periods of highest and lowest
// activity, not of highest and lowest cost (common practice), and the earliest
// period among ties. Data invented; expected values worked by hand beside each.
func TestHighLowEstimate(t *testing.T) {
	tests := []struct {
		name      string
		x, y      []float64 // activity (machine hours), cost
		high, low int
		rate      float64
		fixed     float64
		tol       float64
	}{
		{
			// Highest cost 13 500 is period 2 (650 h) and lowest cost 7 600 is
			// period 5 (450 h); the activity extremes are period 1 (800 h,
			// 12 000) and period 3 (400 h, 8 000).
			// Rate = (12 000 − 8 000)/(800 − 400) = 4 000/400 = 10 per hour;
			// Fixed = 12 000 − 10·800 = 4 000. (The cost extremes would give
			// (13 500 − 7 600)/(650 − 450) = 29.5 per hour.)
			name: "activity extremes, not cost extremes",
			x:    []float64{500, 800, 650, 400, 700, 450},
			y:    []float64{9000, 12000, 13500, 8000, 11500, 7600},
			high: 1, low: 3, rate: 10, fixed: 4000, tol: 1e-12,
		},
		{
			// 500 h occurs in periods 1 and 3, 200 h in periods 2 and 4; the
			// earliest are taken: Rate = (7 000 − 4 000)/(500 − 200) = 10,
			// Fixed = 7 000 − 10·500 = 2 000. (The latest would give
			// (7 300 − 3 900)/300 = 11.33.)
			name: "ties take the earliest period",
			x:    []float64{300, 500, 200, 500, 200},
			y:    []float64{5000, 7000, 4000, 7300, 3900},
			high: 1, low: 2, rate: 10, fixed: 2000, tol: 1e-12,
		},
		{
			// Cost falling with activity: Rate = (900 − 1 500)/(30 − 10) = −30,
			// Fixed = 900 + 30·30 = 1 800.
			name: "negative rate",
			x:    []float64{10, 30, 20},
			y:    []float64{1500, 900, 1250},
			high: 1, low: 0, rate: -30, fixed: 1800, tol: 1e-12,
		},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			got, err := HighLowEstimate(tt.x, tt.y)
			if err != nil {
				t.Fatal(err)
			}
			if got.HighIndex != tt.high || got.LowIndex != tt.low {
				t.Errorf("indices high %d, low %d; want %d, %d", got.HighIndex, got.LowIndex, tt.high, tt.low)
			}
			if math.Abs(got.Rate-tt.rate) > tt.tol*math.Abs(tt.rate) {
				t.Errorf("Rate = %.15g, want %.15g", got.Rate, tt.rate)
			}
			if math.Abs(got.Fixed-tt.fixed) > tt.tol*math.Abs(tt.fixed) {
				t.Errorf("Fixed = %.15g, want %.15g", got.Fixed, tt.fixed)
			}
		})
	}
}

func TestHighLowErrors(t *testing.T) {
	tests := []struct {
		name string
		x, y []float64
		want error
	}{
		{"all activity equal", []float64{120, 120, 120}, []float64{900, 950, 1000}, ErrIllConditioned},
		{"one period", []float64{120}, []float64{900}, ErrTooFewObservations},
		{"no periods", nil, nil, ErrTooFewObservations},
		{"NaN cost", []float64{100, 200}, []float64{math.NaN(), 5}, ErrNonFinite},
		{"activity range overflows", []float64{-math.MaxFloat64, math.MaxFloat64}, []float64{1, 2}, ErrNonFinite},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			if _, err := HighLowEstimate(tt.x, tt.y); !errors.Is(err, tt.want) {
				t.Fatalf("err = %v, want %v", err, tt.want)
			}
		})
	}
}

func TestHighLowLengthMismatchPanics(t *testing.T) {
	defer func() {
		msg, _ := recover().(string)
		if !strings.HasPrefix(msg, "fit: ") {
			t.Fatalf("recovered %q, want a panic starting with \"fit: \"", msg)
		}
	}()
	_, _ = HighLowEstimate([]float64{1, 2, 3}, []float64{1, 2})
}
