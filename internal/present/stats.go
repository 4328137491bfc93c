package present

import (
	"math"
	"strconv"
)

// AnalyticResolution is the finest p-value shown for a test whose p-value
// comes from a distribution (t, F, Hansen's approximation): below it a
// reader learns nothing more, and the tail of such an approximation is
// not accurate to more digits anyway (common practice: APA style reports
// p < .001).
const AnalyticResolution = 0.001

// BootstrapResolution is the finest p-value a bootstrap of the given
// number of resamples can give, 1/(B+1) (Davison and Hinkley, Bootstrap
// Methods and their Application, 1997, §4.2.1), and never finer than
// AnalyticResolution: 999 resamples resolve 0.001.
func BootstrapResolution(replicates int) float64 {
	if replicates <= 0 {
		return AnalyticResolution
	}
	return math.Max(1/float64(replicates+1), AnalyticResolution)
}

// PValue writes a p-value to three decimals, and one below the method's
// resolution as "< " the resolution: PValue(7.49e-156, 0.001) is
// "< 0.001", PValue(0.0213, 0.001) is "0.021". Without a resolution
// (0) AnalyticResolution applies.
func PValue(p, resolution float64) string {
	if math.IsNaN(p) || math.IsInf(p, 0) {
		return Missing
	}
	if resolution <= 0 {
		resolution = AnalyticResolution
	}
	if p < resolution {
		return "< " + trimZeros(strconv.FormatFloat(resolution, 'f', 6, 64))
	}
	return strconv.FormatFloat(math.Min(p, 1), 'f', 3, 64)
}

// SaneStatistic is the largest test statistic (F, t, χ²) shown as a
// number. A statistic beyond it comes from a residual spread of nearly
// zero on one side, as when a fixed cost steps from one exact amount to
// another: the number measures rounding, not evidence.
const SaneStatistic = 1e6

// ExactFit is what a statistic beyond SaneStatistic reads as.
const ExactFit = "exact fit"

// Statistic writes a test statistic with one decimal and thousands
// separators, and one beyond SaneStatistic, or infinite, as ExactFit.
func Statistic(v float64) string {
	switch {
	case math.IsNaN(v):
		return Missing
	case math.IsInf(v, 0) || math.Abs(v) > SaneStatistic:
		return ExactFit
	}
	return Number(v, 1)
}
