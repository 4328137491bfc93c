// Package alerts holds the rules that decide which conditions deserve an
// accountant's attention. Each rule reads what sync and analysis stored and
// returns alerts with a fingerprint, so that the same condition is one alert,
// updated on every evaluation, and resolves itself when a later evaluation
// no longer raises it.
//
// It is pure: behaviours in, alerts out; the store keeps them
// (sqlite.DB.ApplyAlerts) and the mail stage delivers them.
package alerts
