// Package analyze decides each cost object's behaviour from a panel: it
// fits every driver at every lag (linear and proportional) beside the
// constant model, corrects the slopes' p-values for the number of
// candidates tried, ranks the plausible drivers by leave-one-out error,
// classifies the cost as fixed, variable, mixed, unexplained or
// insufficient_data with a one-line reason, and computes the high-low
// estimate beside the regression.
//
// It is pure: panels in, fits and behaviours out; no store, clock or log.
// The numbers come from package fit; the rules are written on Classify.
package analyze
