package sqlite

import (
	"context"
	"database/sql"
	"fmt"

	"github.com/costdrift/costdrift/internal/costdrift"
)

// SavedBudgetLine is one line of a saved budget as the flexible_budget
// view gives it: money rounded to the currency's minor unit, nil where
// there is no figure (the warning says why).
type SavedBudgetLine struct {
	Plan, Period, Line, Object, AccountName, CostCenter, Class, Driver string
	Activity, Budget, Low95, High95                                    *float64
	Objects                                                            int
	Warning                                                            string
}

// SavedVarianceLine is one line of a saved variance report as the
// spending_variances view gives it.
type SavedVarianceLine struct {
	Name, Period, Plan, Line, Object, AccountName, CostCenter, Class, Driver string
	ActualActivity, PlannedActivity                                          *float64
	Objects                                                                  int
	Actual                                                                   float64
	Flexible, Low95, High95, Spending, Static, ActivityVariance              *float64
	SpendingMark, ActivityMark                                               string
	Outside95                                                                bool
	Warning                                                                  string
}

// SavedNames lists the names budgets and variance reports were saved
// under, each in order.
func (db *DB) SavedNames(ctx context.Context) (budgets, variances []string, err error) {
	if budgets, err = db.strings(ctx, `SELECT DISTINCT plan FROM budget_lines ORDER BY plan`); err != nil {
		return nil, nil, fmt.Errorf("saved budgets: %w", err)
	}
	if variances, err = db.strings(ctx, `SELECT DISTINCT name FROM variance_lines ORDER BY name`); err != nil {
		return nil, nil, fmt.Errorf("saved variances: %w", err)
	}
	return budgets, variances, nil
}

func (db *DB) strings(ctx context.Context, query string, args ...any) ([]string, error) {
	rows, err := db.db.QueryContext(ctx, query, args...)
	if err != nil {
		return nil, err
	}
	defer rows.Close()
	var out []string
	for rows.Next() {
		var s string
		if err := rows.Scan(&s); err != nil {
			return nil, err
		}
		out = append(out, s)
	}
	return out, rows.Err()
}

// SavedBudget reads the budget saved under plan, in the view's order.
func (db *DB) SavedBudget(ctx context.Context, plan string) ([]SavedBudgetLine, error) {
	rows, err := db.db.QueryContext(ctx, `SELECT plan, period, line, object, account_name, cost_center, COALESCE(class, ''),
		COALESCE(driver, ''), activity, budget, low95, high95, objects, COALESCE(warning, '') FROM flexible_budget WHERE plan = ?`, plan)
	if err != nil {
		return nil, fmt.Errorf("saved budget %s: %w", plan, err)
	}
	defer rows.Close()
	var out []SavedBudgetLine
	for rows.Next() {
		var l SavedBudgetLine
		var activity, budget, low, high sql.NullFloat64
		if err := rows.Scan(&l.Plan, &l.Period, &l.Line, &l.Object, &l.AccountName, &l.CostCenter, &l.Class, &l.Driver,
			&activity, &budget, &low, &high, &l.Objects, &l.Warning); err != nil {
			return nil, fmt.Errorf("saved budget %s: %w", plan, err)
		}
		l.Activity, l.Budget, l.Low95, l.High95 = nullable(activity), nullable(budget), nullable(low), nullable(high)
		out = append(out, l)
	}
	return out, rows.Err()
}

// SavedVariance reads the variance report saved under name.
func (db *DB) SavedVariance(ctx context.Context, name string) ([]SavedVarianceLine, error) {
	rows, err := db.db.QueryContext(ctx, `SELECT name, period, plan, line, object, account_name, cost_center, COALESCE(class, ''),
		COALESCE(driver, ''), actual_activity, planned_activity, objects, actual, flexible_budget, low95, high95,
		spending_variance, spending_mark, static_budget, activity_variance, activity_mark, outside95, COALESCE(warning, '')
		FROM spending_variances WHERE name = ?`, name)
	if err != nil {
		return nil, fmt.Errorf("saved variances %s: %w", name, err)
	}
	defer rows.Close()
	var out []SavedVarianceLine
	for rows.Next() {
		var l SavedVarianceLine
		var actualAct, plannedAct, flex, low, high, spending, static, activity sql.NullFloat64
		if err := rows.Scan(&l.Name, &l.Period, &l.Plan, &l.Line, &l.Object, &l.AccountName, &l.CostCenter, &l.Class, &l.Driver,
			&actualAct, &plannedAct, &l.Objects, &l.Actual, &flex, &low, &high, &spending, &l.SpendingMark, &static, &activity,
			&l.ActivityMark, &l.Outside95, &l.Warning); err != nil {
			return nil, fmt.Errorf("saved variances %s: %w", name, err)
		}
		l.ActualActivity, l.PlannedActivity, l.Flexible, l.Low95, l.High95 = nullable(actualAct), nullable(plannedAct), nullable(flex), nullable(low), nullable(high)
		l.Spending, l.Static, l.ActivityVariance = nullable(spending), nullable(static), nullable(activity)
		out = append(out, l)
	}
	return out, rows.Err()
}

func nullable(v sql.NullFloat64) *float64 {
	if !v.Valid {
		return nil
	}
	return &v.Float64
}

// SourceFileRow is a file a source loaded, with the sync run that loaded
// it.
type SourceFileRow struct {
	Source, Path, LoadedAt string
	Rows                   int
	SyncRunID              int64
}

// SourceFileRows lists every file the store loaded, by source and path.
func (db *DB) SourceFileRows(ctx context.Context) ([]SourceFileRow, error) {
	rows, err := db.db.QueryContext(ctx, `SELECT source, path, loaded_at, rows, sync_run_id FROM source_files ORDER BY source, path`)
	if err != nil {
		return nil, fmt.Errorf("source files: %w", err)
	}
	defer rows.Close()
	var out []SourceFileRow
	for rows.Next() {
		var f SourceFileRow
		if err := rows.Scan(&f.Source, &f.Path, &f.LoadedAt, &f.Rows, &f.SyncRunID); err != nil {
			return nil, fmt.Errorf("source files: %w", err)
		}
		out = append(out, f)
	}
	return out, rows.Err()
}

// RejectFile is the rejects of one sync run and source in one file, the
// file as the reject locations name it ("file:line" without ":line").
type RejectFile struct {
	SyncRunID    int64
	Source, File string
}

// RejectsByFile counts the rejects by sync run, source and file. A
// location that is not "file:line" (a database row's key) counts under
// itself.
func (db *DB) RejectsByFile(ctx context.Context) (map[RejectFile]int, error) {
	// rtrim drops the line number, the substr its colon.
	rows, err := db.db.QueryContext(ctx, `SELECT sync_run_id, source,
		CASE WHEN rtrim(location, '0123456789') LIKE '%:' AND rtrim(location, '0123456789') <> location
			THEN substr(rtrim(location, '0123456789'), 1, length(rtrim(location, '0123456789')) - 1) ELSE location END AS file,
		COUNT(*) FROM rejects GROUP BY sync_run_id, source, file`)
	if err != nil {
		return nil, fmt.Errorf("rejects by file: %w", err)
	}
	defer rows.Close()
	out := map[RejectFile]int{}
	for rows.Next() {
		var k RejectFile
		var n int
		if err := rows.Scan(&k.SyncRunID, &k.Source, &k.File, &n); err != nil {
			return nil, fmt.Errorf("rejects by file: %w", err)
		}
		out[k] = n
	}
	return out, rows.Err()
}

// RecentRejects reads up to limit rejects, the newest sync's first, with
// how many the store holds in all.
func (db *DB) RecentRejects(ctx context.Context, limit int) ([]costdrift.Reject, int, error) {
	var total int
	if err := db.db.QueryRowContext(ctx, `SELECT COUNT(*) FROM rejects`).Scan(&total); err != nil {
		return nil, 0, fmt.Errorf("rejects: %w", err)
	}
	rows, err := db.db.QueryContext(ctx, `SELECT source, location, reason, raw FROM rejects ORDER BY sync_run_id DESC, id LIMIT ?`, limit)
	if err != nil {
		return nil, 0, fmt.Errorf("rejects: %w", err)
	}
	defer rows.Close()
	var out []costdrift.Reject
	for rows.Next() {
		var r costdrift.Reject
		if err := rows.Scan(&r.Source, &r.Location, &r.Reason, &r.Raw); err != nil {
			return nil, 0, fmt.Errorf("rejects: %w", err)
		}
		out = append(out, r)
	}
	return out, total, rows.Err()
}
