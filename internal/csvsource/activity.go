package csvsource

import (
	"context"
	"fmt"

	"github.com/costdrift/costdrift/internal/canon"
	"github.com/costdrift/costdrift/internal/costdrift"
)

// ReadActivity streams driver values to w. The long form has the columns
// period, driver, value and optionally cost_center and unit; the wide form
// has period (and optionally cost_center) and one column per driver. The
// layout is detected from the header unless opt.Layout says it
// (canon.BindActivity).
func ReadActivity(ctx context.Context, path, display string, opt Options, w costdrift.SourceWriter) (int, error) {
	t, closer, err := open(path, display, opt)
	if err != nil {
		return 0, err
	}
	defer closer.Close()
	h, err := canon.BindActivity(t.header, opt.Columns, opt.Layout)
	if err != nil {
		return 0, fmt.Errorf("%s: %w", display, err)
	}
	rules := opt.rules()
	bound := h.Bound()
	var row canon.Row
	if !h.Wide {
		return t.rows(ctx, display, opt, w, func(rec []string) error {
			if reason := t.rowProblem(rec); reason != "" {
				return t.reject(opt, w, reason)
			}
			fill(&row, bound, rec)
			a, reason := rules.Activity(&row)
			if reason != "" {
				return t.reject(opt, w, reason)
			}
			a.Location = t.location()
			return w.Activity(a)
		})
	}
	values := make([]canon.Cell, len(h.Drivers))
	var out []costdrift.ActivityValue
	return t.rows(ctx, display, opt, w, func(rec []string) error {
		if reason := t.rowProblem(rec); reason != "" {
			return t.reject(opt, w, reason)
		}
		fill(&row, bound, rec)
		for i, d := range h.Drivers {
			values[i] = canon.TextCell(rec[d.Index])
		}
		var reason string
		if out, reason = rules.WideActivity(&row, h.Drivers, values, out); reason != "" {
			return t.reject(opt, w, reason)
		}
		for _, a := range out {
			a.Location = t.location()
			if err := w.Activity(a); err != nil {
				return err
			}
		}
		return nil
	})
}
