// Package calendar maps posting dates to accounting periods and says which
// periods are closed. It is pure: the caller passes the current time.
//
// This version knows the calendar month ("2025-03"); the period is the
// posting date's month whatever the fiscal year start, which only groups
// periods into fiscal years.
package calendar
