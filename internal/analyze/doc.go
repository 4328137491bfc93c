// Package analyze decides each cost object's behaviour from a panel: it
// fits every driver at every lag (linear and proportional) beside the
// constant model, corrects the slopes' p-values for the number of
// candidates tried, ranks the plausible drivers by leave-one-out error,
// classifies the cost as fixed, variable, mixed, unexplained or
// insufficient_data with a one-line reason, and computes the high-low
// estimate beside the regression.
//
// It then tests the behaviour's own model for a break (breaks.go; README,
// Drift): a fixed cost's level, a variable cost's cost per unit, a step
// cost's step-model residuals, a mixed cost's fixed part by weighted least
// squares and then both coefficients, the newest periods against the rest;
// a late break is dated by least squares. ControlBreaks weighs the breaks
// of a whole analysis together at a false-discovery rate (Benjamini and
// Hochberg 1995); the caller runs it over all results of one analysis
// before storing them.
//
// It is pure: panels in, fits and behaviours out; no store, clock or log.
// The numbers come from package fit; the rules are written on Classify.
package analyze
