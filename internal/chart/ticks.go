package chart

import (
	"math"

	"gonum.org/v1/plot"

	"github.com/costdrift/costdrift/internal/present"
)

// groupedTicks marks an axis at round steps and labels every mark with its
// value grouped by thousands (12,500). It implements plot.Ticker.
//
// The step is whichever of 1, 2, 2.5 or 5 times a power of ten lies nearest,
// on a logarithmic scale, to (max − min) / target, so an axis carries about
// target intervals. The
// first mark is floor(min/step)·step and the last ceil(max/step)·step; with
// plot.Axis.AutoRescale set the axis grows to those marks, so both ends of an
// axis are labelled.
type groupedTicks struct {
	target int // wanted number of intervals; 5 if zero
}

// maxTicks bounds the number of marks whatever the range, so a pathological
// range cannot make the ticker loop for long.
const maxTicks = 50

// Ticks implements plot.Ticker.
func (g groupedTicks) Ticks(min, max float64) []plot.Tick {
	if math.IsNaN(min) || math.IsNaN(max) || math.IsInf(min, 0) || math.IsInf(max, 0) || max <= min {
		return nil
	}
	target := g.target
	if target <= 0 {
		target = 5
	}
	step := niceStep((max - min) / float64(target))
	if step <= 0 || math.IsInf(step, 0) {
		return nil
	}
	decimals := stepDecimals(step)
	// A little slack so that a bound that is a multiple of step up to
	// rounding error is not pushed one step further out.
	const slack = 1e-9
	first := math.Floor(min/step+slack) * step
	last := math.Ceil(max/step-slack) * step
	var ticks []plot.Tick
	for i := 0; i < maxTicks; i++ {
		v := first + float64(i)*step
		if v > last+step*slack {
			break
		}
		if math.Abs(v) < step*slack {
			v = 0 // avoid printing -0 or 1e-13 for the origin
		}
		ticks = append(ticks, plot.Tick{Value: v, Label: formatGrouped(v, decimals)})
	}
	return ticks
}

// niceStep returns the multiple 1, 2, 2.5 or 5 of a power of ten nearest to raw
// on a logarithmic scale (raw > 0): 1,080 gives 1,000, 190 gives 200. It
// returns 0 when raw is not a positive finite number.
func niceStep(raw float64) float64 {
	if !(raw > 0) || math.IsInf(raw, 0) {
		return 0
	}
	pow := math.Pow(10, math.Floor(math.Log10(raw)))
	best, bestDist := 0.0, math.Inf(1)
	for _, m := range []float64{1, 2, 2.5, 5, 10} {
		if d := math.Abs(math.Log(m * pow / raw)); d < bestDist {
			best, bestDist = m*pow, d
		}
	}
	return best
}

// stepDecimals is the number of decimal places needed to print every multiple
// of step exactly: 0 for 500, 1 for 2.5 or 0.5, 2 for 0.25.
func stepDecimals(step float64) int {
	for d := 0; d < 10; d++ {
		scaled := step * math.Pow(10, float64(d))
		if math.Abs(scaled-math.Round(scaled)) < 1e-9*math.Max(1, scaled) {
			return d
		}
	}
	return 10
}

// formatGrouped prints a tick's value as every figure of the program is
// printed (present.Number): the given number of decimals and a comma between
// each group of three integer digits, formatGrouped(12500, 0) = "12,500",
// formatGrouped(-1234.5, 2) = "-1,234.50".
func formatGrouped(v float64, decimals int) string { return present.Number(v, decimals) }
