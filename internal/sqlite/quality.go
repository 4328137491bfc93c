package sqlite

import (
	"context"
	"database/sql"
	"fmt"
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
func recordPeriods(ctx context.Context, tx *sql.Tx, run *costdrift.SyncRun, fileID, rejectsFrom int64) error {
	if _, err := tx.ExecContext(ctx, `DELETE FROM source_periods WHERE source_file_id = ?`, fileID); err != nil {
		return err
	}
	table := map[costdrift.Role]string{costdrift.RoleLedger: "gl_lines", costdrift.RoleActivity: "activity"}[run.Role]
	if table == "" {
		return nil // accounts have no period
	}
	rows, err := tx.QueryContext(ctx, `SELECT period, COUNT(*) FROM `+table+` WHERE source_file_id = ? GROUP BY period ORDER BY period`, fileID)
	if err != nil {
		return err
	}
	stored := map[string]int{}
	newest := ""
	for rows.Next() {
		var p string
		var n int
		if err := rows.Scan(&p, &n); err != nil {
			rows.Close()
			return err
		}
		stored[p] = n
		newest = p
	}
	if err := rows.Close(); err != nil {
		return err
	}
	rejected, reason, err := loadRejects(ctx, tx, run.ID, rejectsFrom)
	if err != nil {
		return err
	}
	if rejected > 0 {
		if _, ok := stored[newest]; !ok {
			stored[newest] = 0 // newest is "": nothing stored
		}
	}
	for p, n := range stored {
		r, why := 0, ""
		if p == newest {
			r, why = rejected, reason
		}
		if _, err := tx.ExecContext(ctx, `INSERT INTO source_periods (source_file_id, source, period, rows_stored, rows_rejected, reason, sync_run_id)
			VALUES (?, ?, ?, ?, ?, ?, ?)`, fileID, run.Source, p, n, r, why, run.ID); err != nil {
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

// SourcePeriods lists what every loaded file delivered per period, by
// source, period and file.
func (db *DB) SourcePeriods(ctx context.Context) ([]costdrift.SourcePeriod, error) {
	rows, err := db.db.QueryContext(ctx, `SELECT p.source, f.path, p.period, p.rows_stored, p.rows_rejected, p.reason, p.sync_run_id
		FROM source_periods p JOIN source_files f ON f.id = p.source_file_id ORDER BY p.source, p.period, f.path`)
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
