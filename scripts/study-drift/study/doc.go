// Package study measures the drift alerts of the analysis over a portfolio
// of invented cost objects rolled forward month by month: how many stable
// objects get a warning or critical behaviour alert on one analysis and over
// a year of analyses, and how soon and how well dated a known shift is
// alerted (README, Drift: the portfolio study).
//
// Its generator is its own: drivers on a shared business cycle, costs of
// every class with additive or proportional noise, drawn from a seed. It
// does not use the engine's test fixtures, so the study does not grade the
// engine on the data the engine was tuned on.
//
// Each month-end the study does what the store does around an analysis:
// every object is analysed (analyze.Object) with its current behaviour as
// the prior, its behaviour history is kept as the store keeps it (a change
// of class or driver without a break waits for a second analysis), and the
// alerts are raised by alerts.Behaviour from the current behaviour and the
// one it replaced; an alert counts when its fingerprint first reaches
// warning. It runs in memory, without the SQLite store and the CSV sources,
// so that a year of a 2,400-object portfolio runs in seconds.
package study
