package sqlite

import (
	"context"
	"database/sql"
	"fmt"
	"time"

	"github.com/costdrift/costdrift/internal/costdrift"
)

// LoadSource records a sync run for one source and calls fill with a writer
// that stores rows in one transaction. The batch commits when fill returns
// nil; otherwise nothing of it is kept, and the run is recorded as failed
// with the error. Rows already stored with the same values count as
// unchanged and are not rewritten, so syncing the same data twice changes
// nothing.
func (db *DB) LoadSource(ctx context.Context, run *costdrift.SyncRun, fill func(costdrift.SourceWriter) error) error {
	run.StartedAt = db.Now().UTC()
	run.Status = "running"
	res, err := db.db.ExecContext(ctx, `INSERT INTO sync_runs (source, role, kind, started_at, status) VALUES (?, ?, ?, ?, 'running')`,
		run.Source, string(run.Role), run.Kind, run.StartedAt.Format(time.RFC3339))
	if err != nil {
		return fmt.Errorf("sync %s: %w", run.Source, err)
	}
	run.ID, _ = res.LastInsertId()

	err = db.inTx(ctx, func(tx *sql.Tx) error {
		w, err := newWriter(ctx, tx, run)
		if err != nil {
			return err
		}
		defer w.close()
		if err := fill(w); err != nil {
			return err
		}
		return nil
	})
	run.FinishedAt = db.Now().UTC()
	run.Status = "ok"
	if err != nil {
		run.Status, run.Error = "failed", err.Error()
		// Nothing of the batch was kept.
		run.RowsLoaded, run.RowsUnchanged, run.RowsRejected = 0, 0, 0
	}
	var errText any
	if run.Error != "" {
		errText = run.Error
	}
	// The record is written with a fresh context: a cancelled sync must
	// still say that it failed.
	_, uerr := db.db.ExecContext(context.WithoutCancel(ctx), `UPDATE sync_runs SET finished_at = ?, status = ?, files = ?, rows_read = ?,
		rows_loaded = ?, rows_unchanged = ?, rows_rejected = ?, error = ? WHERE id = ?`,
		run.FinishedAt.Format(time.RFC3339), run.Status, run.Files, run.RowsRead, run.RowsLoaded, run.RowsUnchanged, run.RowsRejected, errText, run.ID)
	if err != nil {
		return fmt.Errorf("sync %s: %w", run.Source, err)
	}
	if uerr != nil {
		return fmt.Errorf("sync %s: record run: %w", run.Source, uerr)
	}
	return nil
}

// writer stores one batch through prepared upserts.
type writer struct {
	ctx                           context.Context
	run                           *costdrift.SyncRun
	ledger, activity, acct, rejct *sql.Stmt
}

func newWriter(ctx context.Context, tx *sql.Tx, run *costdrift.SyncRun) (*writer, error) {
	w := &writer{ctx: ctx, run: run}
	var err error
	prep := func(q string) *sql.Stmt {
		if err != nil {
			return nil
		}
		var s *sql.Stmt
		s, err = tx.PrepareContext(ctx, q)
		return s
	}
	// An upsert whose WHERE clause is false changes no row: a re-sync of
	// identical data reports zero rows affected.
	w.ledger = prep(`INSERT INTO gl_lines (source, entry_id, line, posted_on, period, account, cost_center, amount_minor, description, sync_run_id)
		VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?)
		ON CONFLICT (source, entry_id, line) DO UPDATE SET
			posted_on = excluded.posted_on, period = excluded.period, account = excluded.account,
			cost_center = excluded.cost_center, amount_minor = excluded.amount_minor,
			description = excluded.description, sync_run_id = excluded.sync_run_id
		WHERE posted_on IS NOT excluded.posted_on OR period IS NOT excluded.period OR account IS NOT excluded.account
			OR cost_center IS NOT excluded.cost_center OR amount_minor IS NOT excluded.amount_minor
			OR description IS NOT excluded.description`)
	w.activity = prep(`INSERT INTO activity (source, period, driver, cost_center, value, unit, sync_run_id)
		VALUES (?, ?, ?, ?, ?, ?, ?)
		ON CONFLICT (source, period, driver, cost_center) DO UPDATE SET
			value = excluded.value, unit = excluded.unit, sync_run_id = excluded.sync_run_id
		WHERE value IS NOT excluded.value OR unit IS NOT excluded.unit`)
	w.acct = prep(`INSERT INTO accounts (source, account, name, type, account_group, sync_run_id)
		VALUES (?, ?, ?, ?, ?, ?)
		ON CONFLICT (source, account) DO UPDATE SET
			name = excluded.name, type = excluded.type, account_group = excluded.account_group, sync_run_id = excluded.sync_run_id
		WHERE name IS NOT excluded.name OR type IS NOT excluded.type OR account_group IS NOT excluded.account_group`)
	w.rejct = prep(`INSERT INTO rejects (sync_run_id, source, location, reason, raw) VALUES (?, ?, ?, ?, ?)`)
	if err != nil {
		w.close()
		return nil, err
	}
	return w, nil
}

func (w *writer) close() {
	for _, s := range []*sql.Stmt{w.ledger, w.activity, w.acct, w.rejct} {
		if s != nil {
			s.Close()
		}
	}
}

func (w *writer) count(res sql.Result, err error) error {
	if err != nil {
		return err
	}
	n, err := res.RowsAffected()
	if err != nil {
		return err
	}
	if n > 0 {
		w.run.RowsLoaded++
	} else {
		w.run.RowsUnchanged++
	}
	return nil
}

func (w *writer) LedgerLine(l costdrift.LedgerLine) error {
	return w.count(w.ledger.ExecContext(w.ctx, w.run.Source, l.EntryID, l.Line, l.PostedOn, l.Period, l.Account,
		l.CostCenter, l.AmountMinor, l.Description, w.run.ID))
}

func (w *writer) Activity(a costdrift.ActivityValue) error {
	return w.count(w.activity.ExecContext(w.ctx, w.run.Source, a.Period, a.Driver, a.CostCenter, a.Value, a.Unit, w.run.ID))
}

func (w *writer) Account(a costdrift.Account) error {
	return w.count(w.acct.ExecContext(w.ctx, w.run.Source, a.Account, a.Name, a.Type, a.Group, w.run.ID))
}

func (w *writer) Reject(r costdrift.Reject) error {
	w.run.RowsRejected++
	_, err := w.rejct.ExecContext(w.ctx, w.run.ID, w.run.Source, r.Location, r.Reason, r.Raw)
	return err
}

// SyncRuns returns the most recent sync runs, newest first.
func (db *DB) SyncRuns(ctx context.Context, limit int) ([]costdrift.SyncRun, error) {
	rows, err := db.db.QueryContext(ctx, `SELECT id, source, role, kind, started_at, COALESCE(finished_at, ''), status, files,
		rows_read, rows_loaded, rows_unchanged, rows_rejected, COALESCE(error, '') FROM sync_runs ORDER BY id DESC LIMIT ?`, limit)
	if err != nil {
		return nil, err
	}
	defer rows.Close()
	var runs []costdrift.SyncRun
	for rows.Next() {
		var r costdrift.SyncRun
		var role, started, finished string
		if err := rows.Scan(&r.ID, &r.Source, &role, &r.Kind, &started, &finished, &r.Status, &r.Files,
			&r.RowsRead, &r.RowsLoaded, &r.RowsUnchanged, &r.RowsRejected, &r.Error); err != nil {
			return nil, err
		}
		r.Role = costdrift.Role(role)
		r.StartedAt, _ = time.Parse(time.RFC3339, started)
		r.FinishedAt, _ = time.Parse(time.RFC3339, finished)
		runs = append(runs, r)
	}
	return runs, rows.Err()
}
