// Package chart draws the cost-volume scatter diagram a cost accountant uses to
// judge a cost formula: one dot per period (activity on the horizontal axis, cost
// on the vertical), the fitted formula
//
//	cost = Fixed + Rate·activity
//
// drawn only across the relevant range, or, for a step cost, one horizontal
// segment per level; optionally an older formula drawn dashed, the high and low
// activity points of the high-low method joined by a thin line, and outliers in
// their own marker. Output is PNG or SVG.
//
// The package owns the layout, the palette, the tick labels (grouped by
// thousands, 12,500) and the checks that reject a chart that cannot be drawn
// honestly (no points, NaN or infinite values, indices out of range). It uses
// the Liberation fonts compiled into gonum.org/v1/plot: no system font is read
// and nothing is fetched at run time.
//
// It must not open the store, fit anything, read the clock or log: callers pass
// the numbers they already have and get bytes back on an io.Writer (or a file
// written with mode 0600 by WriteFile, because ledger figures are confidential).
package chart
