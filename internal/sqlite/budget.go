package sqlite

import (
	"context"
	"database/sql"
	"math"
	"time"

	"github.com/costdrift/costdrift/internal/costdrift"
)

// SaveBudget stores a plan's activity and the budget computed from it
// under name (the plan column of plans and budget_lines) in one
// transaction, replacing what was saved under the same name before. Only
// the plans and budget_lines tables are written, so that a budget can be
// made while a daemon works on the rest of the store.
func (db *DB) SaveBudget(ctx context.Context, name string, values []costdrift.ActivityValue, lines []costdrift.BudgetLine, at time.Time) error {
	now := at.UTC().Format(time.RFC3339)
	return db.inTx(ctx, func(tx *sql.Tx) error {
		if err := savePlan(ctx, tx, name, values, now); err != nil {
			return err
		}
		if _, err := tx.ExecContext(ctx, `DELETE FROM budget_lines WHERE plan = ?`, name); err != nil {
			return err
		}
		stmt, err := tx.PrepareContext(ctx, `INSERT INTO budget_lines (plan, period, line, object, account, cost_center, class,
			driver, activity, driver2, activity2, objects, budget, low80, high80, low95, high95, se, df, warning, computed_at)
			VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?)`)
		if err != nil {
			return err
		}
		defer stmt.Close()
		for _, l := range lines {
			object, class := "", any(nil)
			if l.Kind == costdrift.LineObject {
				object, class = l.Object.String(), string(l.Class)
			}
			if _, err := stmt.ExecContext(ctx, name, l.Period, string(l.Kind), object, l.Object.Account, l.Object.CostCenter, class,
				nullString(l.Driver), num(l.Activity), nullString(l.Driver2), num(l.Activity2), l.Objects,
				num(l.Value), num(l.Low80), num(l.High80), num(l.Low95), num(l.High95), num(l.SE), num(l.DF),
				l.Warning, now); err != nil {
				return err
			}
		}
		return nil
	})
}

// SaveVariances stores a closed period's variance report under name,
// replacing the report saved under the same name before; plan names the
// plan file it was compared with ("" without one). The plan's activity is
// on the lines (planned_activity): plans holds the activity of saved
// budgets only, so that a report cannot replace a budget's plan.
func (db *DB) SaveVariances(ctx context.Context, name, period, plan string, lines []costdrift.VarianceLine, at time.Time) error {
	now := at.UTC().Format(time.RFC3339)
	return db.inTx(ctx, func(tx *sql.Tx) error {
		if _, err := tx.ExecContext(ctx, `DELETE FROM variance_lines WHERE name = ?`, name); err != nil {
			return err
		}
		stmt, err := tx.PrepareContext(ctx, `INSERT INTO variance_lines (name, period, plan, line, object, account, cost_center, class, driver,
			actual_activity, planned_activity, objects, actual, flexible_budget, low95, high95, static_budget,
			spending_variance, spending_mark, activity_variance, activity_mark, outside95, warning, computed_at)
			VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?)`)
		if err != nil {
			return err
		}
		defer stmt.Close()
		for _, l := range lines {
			object, class := "", any(nil)
			if l.Kind == costdrift.LineObject {
				object, class = l.Object.String(), string(l.Class)
			}
			spendingMark, activityMark := l.SpendingMark(), l.ActivityMark()
			if math.IsNaN(l.SpendingVariance) {
				spendingMark = ""
			}
			if math.IsNaN(l.ActivityVariance) {
				activityMark = ""
			}
			outside := 0
			if l.Outside95 {
				outside = 1
			}
			if _, err := stmt.ExecContext(ctx, name, period, plan, string(l.Kind), object, l.Object.Account, l.Object.CostCenter, class,
				nullString(l.Driver), num(l.ActualActivity), num(l.PlanActivity), l.Objects, l.Actual,
				num(l.Flexible.Value), num(l.Flexible.Low95), num(l.Flexible.High95), num(l.Static),
				num(l.SpendingVariance), spendingMark, num(l.ActivityVariance), activityMark, outside, l.Warning, now); err != nil {
				return err
			}
		}
		return nil
	})
}

func savePlan(ctx context.Context, tx *sql.Tx, plan string, values []costdrift.ActivityValue, now string) error {
	if _, err := tx.ExecContext(ctx, `DELETE FROM plans WHERE plan = ?`, plan); err != nil {
		return err
	}
	stmt, err := tx.PrepareContext(ctx, `INSERT INTO plans (plan, period, driver, cost_center, value, location, loaded_at) VALUES (?, ?, ?, ?, ?, ?, ?)`)
	if err != nil {
		return err
	}
	defer stmt.Close()
	for _, v := range values {
		if _, err := stmt.ExecContext(ctx, plan, v.Period, v.Driver, v.CostCenter, v.Value, v.Location, now); err != nil {
			return err
		}
	}
	return nil
}
