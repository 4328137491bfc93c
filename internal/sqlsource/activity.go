package sqlsource

import (
	"context"

	"github.com/costdrift/costdrift/internal/costdrift"
)

// ReadActivity runs the source's query and streams driver values to w. The
// result is in long form: period (YYYY-MM or a date), driver, value, and
// optionally cost_center (empty or NULL: company-wide) and unit. A wide
// table is turned long in SQL, one SELECT per driver joined by UNION ALL.
func ReadActivity(ctx context.Context, opt Options, w costdrift.SourceWriter) (Result, error) {
	return run(ctx, opt, func(cols []string) (rowFunc, error) {
		col, err := bindColumns(cols, opt.Columns, []string{"period", "driver", "value"}, []string{"cost_center", "unit"},
			"expected period, driver, value (long form)")
		if err != nil {
			return nil, err
		}
		return func(n int, vals []any) error {
			r := row{col: col, vals: vals, cols: cols}
			a := costdrift.ActivityValue{Source: opt.Source, Driver: r.text("driver"), CostCenter: r.text("cost_center"), Unit: r.text("unit")}
			var reason string
			a.Period, reason = period(r.get("period"), opt)
			k := key("period", a.Period, "driver", a.Driver, "cost centre", a.CostCenter)
			if reason == "" && a.Driver == "" {
				reason = "missing driver"
			}
			if reason == "" {
				a.Value, reason = quantity(r.get("value"), opt.Notation)
			}
			if reason != "" {
				return reject(w, opt, n, k, reason, r)
			}
			return w.Activity(a)
		}, nil
	})
}
