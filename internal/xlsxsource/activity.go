package xlsxsource

import (
	"context"
	"fmt"
	"strings"

	"github.com/costdrift/costdrift/internal/costdrift"
)

// ReadActivity streams driver values to w. The long form has the columns
// period, driver, value and optionally cost_center and unit; the wide form
// has period (and optionally cost_center) and one column per driver. The
// layout is detected from the header unless opt.Layout says it.
func ReadActivity(ctx context.Context, path, display string, opt Options, w costdrift.SourceWriter) (int, error) {
	t, err := open(path, display, opt.Sheet)
	if err != nil {
		return 0, err
	}
	defer t.close()

	layout := opt.Layout
	if layout == "" {
		layout = "wide"
		if col := bindHeader(t.header, opt.Columns, []string{"driver", "value"}, nil); len(col) == 2 {
			layout = "long"
		}
	}
	const hint = "expected period, driver, value (long form) or period and one column per driver (wide form)"
	var drivers []int // wide form: the columns that hold drivers
	if layout == "long" {
		if err := t.bind(opt.Columns, []string{"period", "driver", "value"}, []string{"cost_center", "unit"}, hint); err != nil {
			return 0, err
		}
	} else {
		if err := t.bind(opt.Columns, []string{"period"}, []string{"cost_center"}, hint); err != nil {
			return 0, err
		}
		for i, h := range t.header {
			if i != t.col["period"] && !(t.has("cost_center") && i == t.col["cost_center"]) && strings.TrimSpace(h) != "" {
				drivers = append(drivers, i)
			}
		}
		if len(drivers) == 0 {
			return 0, fmt.Errorf("%s: wide-form header has a period column but no driver columns (found: %s)", t.location(), t.found())
		}
	}

	return t.each(ctx, func() error {
		var values []costdrift.ActivityValue
		reason := t.overflow()
		if reason == "" {
			values, reason = activityRow(t, opt, layout, drivers)
		}
		if reason != "" {
			return t.reject(opt, w, reason)
		}
		for _, a := range values {
			a.Location = t.location()
			if err := w.Activity(a); err != nil {
				return err
			}
		}
		return nil
	})
}

// activityRow reads the values of the current row, all of them or none, so
// that a wide row is stored whole or rejected whole.
func activityRow(t *table, opt Options, layout string, drivers []int) ([]costdrift.ActivityValue, string) {
	period, reason := period(t.field("period"), opt, t.date1904)
	if reason != "" {
		return nil, reason
	}
	cc, reason := t.text("cost_center")
	if reason != "" {
		return nil, reason
	}
	if layout == "long" {
		a := costdrift.ActivityValue{Source: opt.Source, Period: period, CostCenter: cc}
		if a.Driver, reason = t.text("driver"); reason != "" {
			return nil, reason
		}
		if a.Driver == "" {
			return nil, "missing driver"
		}
		if a.Unit, reason = t.text("unit"); reason != "" {
			return nil, reason
		}
		if a.Value, reason = value(t.field("value"), opt.Notation); reason != "" {
			return nil, reason
		}
		return []costdrift.ActivityValue{a}, ""
	}
	values := make([]costdrift.ActivityValue, 0, len(drivers))
	for _, i := range drivers {
		var c cell
		if i < len(t.cells) {
			c = t.cells[i]
		}
		if c.text = strings.TrimSpace(c.text); c.text == "" {
			continue // no value for this driver in this period
		}
		driver := strings.TrimSpace(t.header[i])
		v, why := value(c, opt.Notation)
		if why != "" {
			return nil, driver + ": " + why
		}
		values = append(values, costdrift.ActivityValue{Source: opt.Source, Period: period, Driver: driver, CostCenter: cc, Value: v})
	}
	return values, ""
}
