package alerts

import (
	"fmt"
	"sort"

	"github.com/costdrift/costdrift/internal/costdrift"
)

// MostlyRejected: a file with more than this share of its rows rejected
// fails the sync (README, When a sync goes wrong).
const MostlyRejected = 0.5

// PeriodQuality is what a source's files delivered for one period: rows
// read and rejected, and the file with the most rejects and its main
// reason.
type PeriodQuality struct {
	Source   string
	Period   string // "" = a file whose every row was rejected
	Read     int
	Rejected int
	File     string
	Reason   string
}

// Incomplete reports whether more than maxShare of the period's rows were
// rejected.
func (q PeriodQuality) Incomplete(maxShare float64) bool {
	return q.Rejected > 0 && float64(q.Rejected) > maxShare*float64(q.Read)
}

// Quality adds up the files' rows per source and period, in that order.
func Quality(rows []costdrift.SourcePeriod) []PeriodQuality {
	type key struct{ source, period string }
	byKey := map[key]*PeriodQuality{}
	worst := map[key]int{}
	var keys []key
	for _, r := range rows {
		k := key{r.Source, r.Period}
		q, ok := byKey[k]
		if !ok {
			q = &PeriodQuality{Source: r.Source, Period: r.Period}
			byKey[k] = q
			keys = append(keys, k)
		}
		q.Read += r.Read()
		q.Rejected += r.RowsRejected
		if r.RowsRejected > worst[k] {
			worst[k] = r.RowsRejected
			q.File, q.Reason = r.Path, r.Reason
		}
	}
	sort.Slice(keys, func(i, j int) bool {
		if keys[i].source != keys[j].source {
			return keys[i].source < keys[j].source
		}
		return keys[i].period < keys[j].period
	})
	out := make([]PeriodQuality, len(keys))
	for i, k := range keys {
		out[i] = *byKey[k]
	}
	return out
}

// DataQuality raises data_quality (warning) for every source and period of
// which more than maxShare of the rows were rejected: the analysis holds
// back while it is open, since costs or drivers counted from part of a
// period would read as a change in behaviour.
func DataQuality(quality []PeriodQuality, maxShare float64) []costdrift.Alert {
	var out []costdrift.Alert
	for _, q := range quality {
		if !q.Incomplete(maxShare) {
			continue
		}
		when := q.Period
		if when == "" {
			when = "a period not known (no row of the file was stored)"
		}
		out = append(out, costdrift.Alert{
			Kind: costdrift.AlertDataQuality, Object: q.Source, Severity: costdrift.SeverityWarning, Period: q.Period,
			Message: fmt.Sprintf("source %s, %s: %d of %d rows rejected (%.0f %%), most in %s: %s; every cost object is held back from analysis until the period is clean: "+
				"fix the source's settings or the file and run costdrift sync: a file is read again when it or its reading settings change",
				q.Source, when, q.Rejected, q.Read, 100*float64(q.Rejected)/float64(q.Read), q.File, q.Reason),
			Fingerprint: costdrift.Fingerprint(costdrift.AlertDataQuality, q.Source, q.Period),
			Evidence: costdrift.AlertEvidence{Period: new(q.Period), RowsRead: new(q.Read), RowsRejected: new(q.Rejected),
				File: new(q.File), Reason: new(q.Reason)},
		})
	}
	return out
}
