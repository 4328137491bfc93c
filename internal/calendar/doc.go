// Package calendar maps posting dates to accounting periods, steps between
// periods, groups them into fiscal years and says which periods are closed.
// It is pure: the caller passes the current time, and nothing here reads a
// clock, a file or the configuration.
//
// Kinds (config key calendar.period):
//
//   - month: calendar months, "2025-03". The fiscal year start only groups
//     months into fiscal years.
//   - week: ISO 8601 weeks (Monday to Sunday, week 1 holds the year's first
//     Thursday), "2025-W07", named by ISO week-year: 2024-12-30 is 2025-W01.
//   - 4-4-5, 4-5-4, 5-4-4: fiscal years of 52 or 53 weeks in four 13-week
//     quarters, each split into periods of the named weeks, "FY2025-P01" to
//     "FY2025-P12"; a 53rd week goes to P12.
//
// Week-based fiscal years start on the Monday nearest the 1st of the fiscal
// start month and are named by the calendar year they end in; fiscalyear.go
// writes the rule out.
//
// Within a kind, period names sort as strings in time order. The package
// does not store periods, read activity files or know which periods have
// postings; a period name of another kind is an error from Parse, and a
// programming error (panic) in Shift and Between.
package calendar
