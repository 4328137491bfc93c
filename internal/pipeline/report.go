package pipeline

import (
	"bytes"
	"context"
	"fmt"

	"github.com/costdrift/costdrift/internal/chart"
	"github.com/costdrift/costdrift/internal/report"
	"github.com/costdrift/costdrift/internal/sqlite"
)

// ReportCharts draws each object's charts as SVG documents for the HTML
// report, by object: its cost over time, and for an object with a driver
// its cost against that driver, as `costdrift explain --chart` draws them.
// An object whose data the store lacks (no periods) gets none.
func ReportCharts(ctx context.Context, e *Env, db *sqlite.DB, objects []string) (map[string][][]byte, error) {
	names, err := db.AccountNames(ctx)
	if err != nil {
		return nil, fmt.Errorf("report charts: %w", err)
	}
	out := make(map[string][][]byte, len(objects))
	for _, object := range objects {
		oa, err := db.ObjectAnalysis(ctx, object)
		if err != nil {
			return nil, fmt.Errorf("report charts: %s: %w", object, err)
		}
		b := oa.Behaviour
		name := names[b.Object.Account]
		formula := report.Formula(b)
		maxLag := widestLag(oa.Settings, b.Lag)
		tl, err := timeline(ctx, e, db, db.CostPerPeriod, oa, name, formula, maxLag)
		if err != nil {
			continue // no periods to draw
		}
		var buf bytes.Buffer
		if err := tl.WriteSVG(&buf, chart.DefaultWidthPt, chart.DefaultHeightPt); err != nil {
			return nil, fmt.Errorf("report charts: %s: %w", object, err)
		}
		out[object] = append(out[object], bytes.Clone(buf.Bytes()))
		if b.Driver == "" {
			continue
		}
		pts, err := analysedPoints(ctx, e, db, db.CostPerPeriod, oa, maxLag)
		if err != nil {
			return nil, fmt.Errorf("report charts: %s: %w", object, err)
		}
		sc, err := scatter(ctx, e, db, oa, pts, name, formula, maxLag)
		if err != nil {
			continue // no period with both cost and activity
		}
		buf.Reset()
		if err := sc.WriteSVG(&buf, chart.DefaultWidthPt, chart.DefaultHeightPt); err != nil {
			return nil, fmt.Errorf("report charts: %s: %w", object, err)
		}
		out[object] = append(out[object], bytes.Clone(buf.Bytes()))
	}
	return out, nil
}
