package pipeline

import (
	"context"
	"fmt"
	"slices"
	"sort"
	"strings"

	"github.com/costdrift/costdrift/internal/alerts"
	"github.com/costdrift/costdrift/internal/costdrift"
	"github.com/costdrift/costdrift/internal/sqlite"
)

// quality reads, per configured ledger and activity source and period,
// the rows its files read and rejected.
func quality(ctx context.Context, e *Env, db *sqlite.DB) ([]alerts.PeriodQuality, error) {
	rows, err := db.SourcePeriods(ctx)
	if err != nil {
		return nil, err
	}
	configured := map[string]bool{}
	for _, s := range e.sources() {
		configured[s.src.Name] = true
	}
	rows = slices.DeleteFunc(rows, func(r costdrift.SourcePeriod) bool { return !configured[r.Source] })
	return alerts.Quality(rows), nil
}

// heldBack lists the incomplete source periods that hold an analysis back:
// those from the window's first period on, and those of a file rejected
// whole, whose period is not known.
func heldBack(quality []alerts.PeriodQuality, maxShare float64, from string) []alerts.PeriodQuality {
	var out []alerts.PeriodQuality
	for _, q := range quality {
		if q.Incomplete(maxShare) && (q.Period == "" || q.Period >= from) {
			out = append(out, q)
		}
	}
	return out
}

// mostlyRejected names every file loaded by these runs of which more than
// alerts.MostlyRejected of the rows were rejected, with its main reason.
func mostlyRejected(ctx context.Context, db *sqlite.DB, results []SourceResult) ([]string, error) {
	runs := map[int64]bool{}
	for _, r := range results {
		runs[r.Run.ID] = true
	}
	rows, err := db.SourcePeriods(ctx)
	if err != nil {
		return nil, err
	}
	type file struct {
		source, path, reason string
		stored, rejected     int
	}
	byPath := map[string]*file{}
	var paths []string
	for _, r := range rows {
		if !runs[r.SyncRunID] {
			continue
		}
		f, ok := byPath[r.Path]
		if !ok {
			f = &file{source: r.Source, path: r.Path}
			byPath[r.Path] = f
			paths = append(paths, r.Path)
		}
		f.stored += r.RowsStored
		f.rejected += r.RowsRejected
		if r.Reason != "" {
			f.reason = r.Reason
		}
	}
	sort.Strings(paths)
	var out []string
	for _, p := range paths {
		f := byPath[p]
		if read := f.stored + f.rejected; f.rejected > 0 && float64(f.rejected) > alerts.MostlyRejected*float64(read) {
			out = append(out, fmt.Sprintf("source %s: %s: %d of %d rows rejected, mostly: %s; its %d good rows are stored, and analysis holds back until the file is read again: fix the source's settings (or the file) and sync again",
				f.source, f.path, f.rejected, read, f.reason, f.stored))
		}
	}
	return out, nil
}

// driverWarnings warns of an activity source's drivers that have values in
// only some of its periods, and of driver names so close to another that
// one is likely the other misspelt.
func driverWarnings(ctx context.Context, db *sqlite.DB, source string) ([]string, error) {
	byDriver, err := db.DriverPeriods(ctx, source)
	if err != nil {
		return nil, err
	}
	all := map[string]bool{}
	var drivers []string
	for d, ps := range byDriver {
		drivers = append(drivers, d)
		for _, p := range ps {
			all[p] = true
		}
	}
	sort.Strings(drivers)
	periods := make([]string, 0, len(all))
	for p := range all {
		periods = append(periods, p)
	}
	sort.Strings(periods)
	var out []string
	for _, d := range drivers {
		have := byDriver[d]
		if len(have) == len(periods) {
			continue
		}
		var missing []string
		for _, p := range periods {
			if _, found := slices.BinarySearch(have, p); !found {
				missing = append(missing, p)
			}
		}
		shown := missing
		if len(shown) > 3 {
			shown = append(shown[:3:3], "…")
		}
		out = append(out, fmt.Sprintf("driver %s has values in %d of the source's %d periods (none in %s); a cost it drives has no driver value there",
			d, len(have), len(periods), strings.Join(shown, ", ")))
	}
	for i, a := range drivers {
		for _, b := range drivers[i+1:] {
			if n := editDistance(a, b); n <= closeNames(a, b) {
				out = append(out, fmt.Sprintf("drivers %s and %s differ by %d letter(s); if they are one driver, correct the name in the file", a, b, n))
			}
		}
	}
	return out, nil
}

// closeNames is the edit distance up to which two driver names are taken
// for one misspelt: two for names of six letters or more, else one.
func closeNames(a, b string) int {
	if min(len([]rune(a)), len([]rune(b))) >= 6 {
		return 2
	}
	return 1
}
