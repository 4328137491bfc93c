package sqlite

import (
	"context"
	"database/sql"
	"fmt"
	"slices"
	"strings"

	"github.com/costdrift/costdrift/internal/costdrift"
)

// lastRejectID is the newest reject's id, so that a load can tell its own
// rejects from those before it.
func lastRejectID(ctx context.Context, tx *sql.Tx) (int64, error) {
	var id int64
	err := tx.QueryRowContext(ctx, `SELECT COALESCE(MAX(id), 0) FROM rejects`).Scan(&id)
	return id, err
}

// recordPeriods replaces what a ledger or activity file delivered per
// period: its stored rows by period, and its rejects (those after
// rejectsFrom) counted against its newest period, with the most frequent
// reason.
func recordPeriods(ctx context.Context, tx *sql.Tx, run *costdrift.SyncRun, fileID int64, periods map[string]int, rejectsFrom int64) error {
	if _, err := tx.ExecContext(ctx, `DELETE FROM source_periods WHERE source_file_id = ?`, fileID); err != nil {
		return err
	}
	if run.Role != costdrift.RoleLedger && run.Role != costdrift.RoleActivity {
		return nil // accounts have no period
	}
	// The load counted what it stored, by period: the file's rows, since
	// its old rows were removed before it. Counted there, not read back,
	// so that a large file is not read again from the store.
	stored := make([]periodCount, 0, len(periods))
	for p, n := range periods {
		stored = append(stored, periodCount{period: p, n: n})
	}
	slices.SortFunc(stored, func(a, b periodCount) int { return strings.Compare(a.period, b.period) })
	return insertPeriods(ctx, tx, run, fileID, stored, rejectsFrom)
}

// recordQueryPeriods is recordPeriods for a database source, whose rows
// have no file: a full refresh replaces the counts of every period, a
// watermark read those of the periods it stored rows in, each period
// counted whole. The load's rejects count against the newest of them.
func recordQueryPeriods(ctx context.Context, tx *sql.Tx, run *costdrift.SyncRun, full bool, rejectsFrom int64) error {
	table := map[costdrift.Role]string{costdrift.RoleLedger: "gl_lines", costdrift.RoleActivity: "activity"}[run.Role]
	if table == "" {
		return nil
	}
	own := `source = ? AND source_file_id IS NULL`
	if full {
		if _, err := tx.ExecContext(ctx, `DELETE FROM source_periods WHERE `+own, run.Source); err != nil {
			return err
		}
	} else if _, err := tx.ExecContext(ctx, `DELETE FROM source_periods WHERE `+own+` AND (period = '' OR period IN
		(SELECT DISTINCT period FROM `+table+` WHERE source = ? AND sync_run_id = ?))`, run.Source, run.Source, run.ID); err != nil {
		return err
	}
	q := `SELECT period, COUNT(*) FROM ` + table + ` WHERE ` + own + ` GROUP BY period ORDER BY period`
	args := []any{run.Source}
	if !full {
		q = `SELECT period, COUNT(*) FROM ` + table + ` WHERE ` + own + ` AND period IN
			(SELECT DISTINCT period FROM ` + table + ` WHERE source = ? AND sync_run_id = ?) GROUP BY period ORDER BY period`
		args = append(args, run.Source, run.ID)
	}
	stored, err := periodCounts(ctx, tx, q, args...)
	if err != nil {
		return err
	}
	return insertPeriods(ctx, tx, run, 0, stored, rejectsFrom)
}

// periodCounts runs a query of period and count, in period order.
func periodCounts(ctx context.Context, tx *sql.Tx, query string, args ...any) ([]periodCount, error) {
	rows, err := tx.QueryContext(ctx, query, args...)
	if err != nil {
		return nil, err
	}
	defer rows.Close()
	var out []periodCount
	for rows.Next() {
		var c periodCount
		if err := rows.Scan(&c.period, &c.n); err != nil {
			return nil, err
		}
		out = append(out, c)
	}
	return out, rows.Err()
}

type periodCount struct {
	period string
	n      int
}

// insertPeriods records the rows stored per period, with the load's
// rejects (those after rejectsFrom) counted against the newest period, or
// against ” when nothing was stored. fileID 0 is a database source.
func insertPeriods(ctx context.Context, tx *sql.Tx, run *costdrift.SyncRun, fileID int64, stored []periodCount, rejectsFrom int64) error {
	rejected, reason, err := loadRejects(ctx, tx, run.ID, rejectsFrom)
	if err != nil {
		return err
	}
	if rejected > 0 && len(stored) == 0 {
		stored = []periodCount{{period: ""}}
	}
	var file any
	if fileID != 0 {
		file = fileID
	}
	for i, c := range stored {
		r, why := 0, ""
		if i == len(stored)-1 {
			r, why = rejected, reason
		}
		if _, err := tx.ExecContext(ctx, `INSERT INTO source_periods (source_file_id, source, period, rows_stored, rows_rejected, reason, sync_run_id)
			VALUES (?, ?, ?, ?, ?, ?, ?)`, file, run.Source, c.period, c.n, r, why, run.ID); err != nil {
			return err
		}
	}
	return nil
}

// exactRepeat begins the reason of a row that repeats an earlier row of the
// same load exactly: it is rejected, but nothing of it is missing.
const exactRepeat = "duplicate key repeating an earlier row exactly"

// loadRejects counts a load's rejects, but for exact repeats, and finds
// their most frequent kind of reason, returning the first reason of that
// kind as written.
func loadRejects(ctx context.Context, tx *sql.Tx, runID, after int64) (int, string, error) {
	rows, err := tx.QueryContext(ctx, `SELECT reason FROM rejects WHERE sync_run_id = ? AND id > ? ORDER BY id`, runID, after)
	if err != nil {
		return 0, "", err
	}
	defer rows.Close()
	kinds := map[string]int{}
	example := map[string]string{}
	total, top := 0, ""
	for rows.Next() {
		var r string
		if err := rows.Scan(&r); err != nil {
			return 0, "", err
		}
		if strings.HasPrefix(r, exactRepeat) {
			continue
		}
		total++
		k := ReasonKind(r)
		if _, ok := example[k]; !ok {
			example[k] = r
		}
		kinds[k]++
		if kinds[k] > kinds[top] || (kinds[k] == kinds[top] && k < top) {
			top = k
		}
	}
	return total, example[top], rows.Err()
}

// SourcePeriods lists what every loaded file, and every database source's
// query, delivered per period, by source, period and file; a query is
// named "the query" where a file gives its path.
func (db *DB) SourcePeriods(ctx context.Context) ([]costdrift.SourcePeriod, error) {
	rows, err := db.db.QueryContext(ctx, `SELECT p.source, IFNULL(f.path, 'the query'), p.period, p.rows_stored, p.rows_rejected, p.reason, p.sync_run_id
		FROM source_periods p LEFT JOIN source_files f ON f.id = p.source_file_id ORDER BY p.source, p.period, 2`)
	if err != nil {
		return nil, fmt.Errorf("read source periods: %w", err)
	}
	defer rows.Close()
	var out []costdrift.SourcePeriod
	for rows.Next() {
		var p costdrift.SourcePeriod
		if err := rows.Scan(&p.Source, &p.Path, &p.Period, &p.RowsStored, &p.RowsRejected, &p.Reason, &p.SyncRunID); err != nil {
			return nil, fmt.Errorf("read source periods: %w", err)
		}
		out = append(out, p)
	}
	return out, rows.Err()
}

// DriverPeriods lists, per driver of an activity source, the periods it has
// values for, in order.
func (db *DB) DriverPeriods(ctx context.Context, source string) (map[string][]string, error) {
	rows, err := db.db.QueryContext(ctx, `SELECT DISTINCT driver, period FROM activity WHERE source = ? ORDER BY driver, period`, source)
	if err != nil {
		return nil, fmt.Errorf("read driver periods: %w", err)
	}
	defer rows.Close()
	out := map[string][]string{}
	for rows.Next() {
		var d, p string
		if err := rows.Scan(&d, &p); err != nil {
			return nil, fmt.Errorf("read driver periods: %w", err)
		}
		out[d] = append(out[d], p)
	}
	return out, rows.Err()
}
