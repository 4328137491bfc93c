package xlsxsource

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
	t, err := open(path, display, opt.Sheet)
	if err != nil {
		return 0, err
	}
	defer t.close()
	h, err := canon.BindActivity(t.header, opt.Columns, opt.Layout)
	if err != nil {
		return 0, fmt.Errorf("%s: %w", t.location(), err)
	}
	rules := opt.rules()
	bound := h.Bound()
	var row canon.Row
	values := make([]canon.Cell, len(h.Drivers))
	var out []costdrift.ActivityValue
	return t.each(ctx, func() error {
		reason := t.overflow()
		if reason == "" {
			t.fill(&row, bound, opt)
			if h.Wide {
				// A wide row is stored whole or rejected whole.
				for i, d := range h.Drivers {
					values[i] = t.canonical(canon.Value, t.at(d.Index), opt)
				}
				out, reason = rules.WideActivity(&row, h.Drivers, values, out)
			} else {
				var a costdrift.ActivityValue
				a, reason = rules.Activity(&row)
				out = append(out[:0], a)
			}
		}
		if reason != "" {
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
