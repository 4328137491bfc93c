package pipeline

import (
	"context"
	"errors"
	"fmt"
	"math"
	"time"

	"github.com/costdrift/costdrift/internal/chart"
	"github.com/costdrift/costdrift/internal/costdrift"
	"github.com/costdrift/costdrift/internal/report"
	"github.com/costdrift/costdrift/internal/sqlite"
)

// History gathers one object's formulas over time, oldest first, with its
// alerts; with withChart, the chart of its cost over the latest analysis's
// window with the formula in force in each period and every change marked.
func History(ctx context.Context, e *Env, db *sqlite.DB, object string, withChart bool) (report.History, *chart.Timeline, error) {
	oa, err := db.ObjectAnalysis(ctx, object)
	switch {
	case errors.Is(err, sqlite.ErrNoAnalysis):
		return report.History{}, nil, errors.New("no analysis stored yet: run `costdrift analyze` first")
	case errors.Is(err, sqlite.ErrNotAnalysed):
		return report.History{}, nil, notAnalysed(ctx, e, db, object)
	case err != nil:
		return report.History{}, nil, fmt.Errorf("history %s: %w", object, err)
	}
	name := oa.Behaviour.Object.String()
	spans, err := db.BehaviourHistory(ctx, name)
	if err != nil {
		return report.History{}, nil, fmt.Errorf("history %s: %w", name, err)
	}
	alerts, err := db.Alerts(ctx, sqlite.AlertFilter{Status: sqlite.AlertStatusAll, Object: name})
	if err != nil {
		return report.History{}, nil, fmt.Errorf("history %s: %w", name, err)
	}
	names, err := db.AccountNames(ctx)
	if err != nil {
		return report.History{}, nil, fmt.Errorf("history %s: %w", name, err)
	}
	h := report.HistoryOf(name, names[oa.Behaviour.Object.Account], spans, alerts)
	if !withChart {
		return h, nil, nil
	}
	tl, err := historyTimeline(ctx, e, db, oa, spans, names[oa.Behaviour.Object.Account])
	if err != nil {
		return h, nil, fmt.Errorf("history %s: chart: %w", name, err)
	}
	return h, &tl, nil
}

// historyTimeline is the object's cost over the latest analysis's window,
// each period with the formula the history says was in force then, at the
// period's activity; every change of formula within the window marked.
func historyTimeline(ctx context.Context, e *Env, db *sqlite.DB, oa sqlite.ObjectAnalysis, spans []costdrift.BehaviourSpan,
	accountName string) (chart.Timeline, error) {
	b := oa.Behaviour
	maxLag := widestLag(oa.Settings, b.Lag)
	for _, s := range spans {
		maxLag = max(maxLag, s.Behaviour.Lag, s.Behaviour.Lag2)
	}
	t, err := timeline(ctx, e, db, db.CostPerPeriod, oa, accountName, "formulas over time", maxLag)
	if err != nil {
		return t, err
	}
	type series struct {
		driver string
		lag    int
	}
	values := map[series]map[string]float64{}
	valuesOf := func(driver string, lag int) (map[string]float64, error) {
		if driver == "" {
			return nil, nil
		}
		k := series{driver, lag}
		if v, ok := values[k]; ok {
			return v, nil
		}
		v, err := lagged(ctx, e, db, b.Object, oa.Run.Grain == costdrift.GrainAccount, driver, lag, oa.Run, maxLag)
		values[k] = v
		return v, err
	}
	starts := make([]time.Time, len(spans))
	for i, s := range spans {
		if starts[i], err = e.Calendar.Parse(s.From); err != nil {
			return t, fmt.Errorf("behaviour from %q: %w", s.From, err)
		}
	}
	t.Changes, t.BeforeLabel, t.FormulaLabel = nil, "earlier formulas", "current formula"
	inForce := -1
	for i := range t.Points {
		pt := &t.Points[i]
		at, err := e.Calendar.Parse(pt.Period)
		if err != nil {
			return t, err
		}
		span := -1
		for j := range spans {
			if !at.Before(starts[j]) {
				span = j
			}
		}
		pt.Before, pt.Formula = span < len(spans)-1, math.NaN()
		if span >= 0 {
			sb := spans[span].Behaviour
			x1, err := valuesOf(sb.Driver, sb.Lag)
			if err != nil {
				return t, err
			}
			x2, err := valuesOf(sb.Driver2, sb.Lag2)
			if err != nil {
				return t, err
			}
			pt.Formula = formulaAt(sb, x1, x2, pt.Period)
		}
		if span != inForce && i > 0 && span >= 0 {
			t.Changes = append(t.Changes, pt.Period)
		}
		inForce = span
	}
	return t, nil
}
