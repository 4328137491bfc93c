package sqlsource

import (
	"context"

	"github.com/costdrift/costdrift/internal/canon"
	"github.com/costdrift/costdrift/internal/costdrift"
)

var activityColumns = canon.Columns{
	Required: canon.LongActivityColumns.Required,
	Optional: canon.LongActivityColumns.Optional,
	Hint:     "expected period, driver, value (long form)",
}

// ReadActivity runs the source's query and streams driver values to w. The
// result is in long form: period (YYYY-MM or a date), driver, value, and
// optionally cost_center (empty or NULL: company-wide) and unit. A wide
// table is turned long in SQL, one SELECT per driver joined by UNION ALL.
func ReadActivity(ctx context.Context, opt Options, w costdrift.SourceWriter) (Result, error) {
	rules := opt.rules()
	return run(ctx, opt, func(cols []string) (rowFunc, error) {
		res, err := bindResult(cols, opt, activityColumns)
		if err != nil {
			return nil, err
		}
		return func(n int, vals []any) error {
			res.read(vals)
			a, reason := rules.Activity(&res.row)
			if reason != "" {
				k := key("period", a.Period, "driver", res.text(canon.Driver), "cost centre", res.text(canon.CostCenter))
				return reject(w, opt, n, k, reason, res)
			}
			return w.Activity(a)
		}, nil
	})
}
