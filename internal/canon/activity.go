package canon

import "github.com/costdrift/costdrift/internal/costdrift"

// Activity reads one row of the long form (period, driver, value, and
// cost_center and unit where present) into an activity value, or says why
// it cannot be stored. The value comes back filled as far as it was read,
// for the source to name the row by; its Location is the source's to set.
func (r *Rules) Activity(row *Row) (costdrift.ActivityValue, string) {
	a := costdrift.ActivityValue{Source: r.Source}
	var why string
	if a.Period, why = r.period(&row[Period]); why != "" {
		return a, why
	}
	if a.CostCenter, why = row.text(CostCenter); why != "" {
		return a, why
	}
	if a.Driver, why = row.text(Driver); why != "" {
		return a, why
	}
	if a.Driver == "" {
		return a, "missing driver"
	}
	if a.Unit, why = row.text(Unit); why != "" {
		return a, why
	}
	a.Value, why = r.Quantity(&row[Value])
	return a, why
}

// WideActivity reads one row of the wide form: the period and cost centre
// from row, and values[i], the cell under drivers[i], as that driver's
// value; an empty cell is no value for its driver in that period. A row is
// stored whole or rejected whole, so the reason names the first driver
// whose value cannot be read. The values are appended to out[:0].
func (r *Rules) WideActivity(row *Row, drivers []DriverColumn, values []Cell, out []costdrift.ActivityValue) ([]costdrift.ActivityValue, string) {
	out = out[:0]
	period, why := r.period(&row[Period])
	if why != "" {
		return out, why
	}
	cc, why := row.text(CostCenter)
	if why != "" {
		return out, why
	}
	for i := range values {
		if values[i].empty() {
			continue
		}
		v, why := r.Quantity(&values[i])
		if why != "" {
			return out[:0], drivers[i].Name + ": " + why
		}
		out = append(out, costdrift.ActivityValue{Source: r.Source, Period: period, Driver: drivers[i].Name, CostCenter: cc, Value: v})
	}
	return out, ""
}

// Account reads one row of the chart of accounts, or says why it cannot be
// stored.
func (r *Rules) Account(row *Row) (costdrift.Account, string) {
	a := costdrift.Account{Source: r.Source}
	var why string
	for _, f := range [...]struct {
		col Column
		to  *string
	}{{Account, &a.Account}, {AccountName, &a.Name}, {AccountType, &a.Type}, {AccountGroup, &a.Group}} {
		if *f.to, why = row.text(f.col); why != "" {
			return a, why
		}
	}
	if a.Account == "" {
		return a, "missing account"
	}
	return a, ""
}
