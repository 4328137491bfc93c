// Package series turns stored ledger totals and activity into the panel the
// analysis fits: the window of closed periods, cost per cost object per
// period, and driver values per period, calendar aware.
//
// It is pure: the caller passes the rows and the current time. It decides
// which periods count and what a missing value means; it fits nothing.
package series
