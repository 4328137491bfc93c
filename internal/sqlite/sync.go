package sqlite

import (
	"context"
	"database/sql"
	"encoding/json"
	"errors"
	"fmt"
	"hash/maphash"
	"math"
	"regexp"
	"strings"
	"sync"
	"sync/atomic"
	"time"

	"github.com/costdrift/costdrift/internal/costdrift"
)

// BeginSync records the start of syncing one source. Runs that a killed
// process left "running" are first marked failed, so sync_runs never claims
// a sync is under way when none is.
func (db *DB) BeginSync(ctx context.Context, run *costdrift.SyncRun) error {
	run.StartedAt = db.Now().UTC()
	run.Status = "running"
	if run.Reasons == nil {
		run.Reasons = map[string]int{}
	}
	if _, err := db.q().ExecContext(ctx, `UPDATE sync_runs SET status = 'failed', finished_at = ?,
		error = 'interrupted: the process stopped before this sync finished; nothing of an unfinished file was kept'
		WHERE status = 'running' AND source = ?`, run.StartedAt.Format(time.RFC3339), run.Source); err != nil {
		return fmt.Errorf("sync %s: %w", run.Source, err)
	}
	res, err := db.q().ExecContext(ctx, `INSERT INTO sync_runs (source, role, kind, started_at, status) VALUES (?, ?, ?, ?, 'running')`,
		run.Source, string(run.Role), run.Kind, run.StartedAt.Format(time.RFC3339))
	if err != nil {
		return fmt.Errorf("sync %s: %w", run.Source, err)
	}
	run.ID, err = res.LastInsertId()
	return err
}

// FinishSync records how a sync run ended: ok, or failed with cause.
func (db *DB) FinishSync(ctx context.Context, run *costdrift.SyncRun, cause error) error {
	run.FinishedAt = db.Now().UTC()
	run.Status = "ok"
	var errText, reasons, warnings any
	if cause != nil {
		run.Status, run.Error = "failed", cause.Error()
		errText = run.Error
	}
	if len(run.Reasons) > 0 {
		j, _ := json.Marshal(run.Reasons)
		reasons = string(j)
	}
	if len(run.Warnings) > 0 {
		warnings = strings.Join(run.Warnings, "\n")
	}
	// A fresh context: a cancelled sync must still say that it failed.
	_, err := db.q().ExecContext(context.WithoutCancel(ctx), `UPDATE sync_runs SET finished_at = ?, status = ?, files = ?,
		files_skipped = ?, rows_read = ?, rows_loaded = ?, rows_unchanged = ?, rows_replaced = ?, rows_rejected = ?,
		reasons = ?, warnings = ?, duration_ms = ?, error = ? WHERE id = ?`,
		run.FinishedAt.Format(time.RFC3339), run.Status, run.Files, run.FilesSkipped, run.RowsRead, run.RowsLoaded,
		run.RowsUnchanged, run.RowsReplaced, run.RowsRejected, reasons, warnings,
		run.FinishedAt.Sub(run.StartedAt).Milliseconds(), errText, run.ID)
	if err != nil {
		return fmt.Errorf("sync %s: record run: %w", run.Source, err)
	}
	return nil
}

// LoadSource syncs one batch that is not a file: it records the run, stores
// the rows in one transaction (rows already stored with the same values
// count as unchanged), and records how it ended. A failed batch keeps
// nothing.
func (db *DB) LoadSource(ctx context.Context, run *costdrift.SyncRun, fill func(costdrift.SourceWriter) error) error {
	if err := db.BeginSync(ctx, run); err != nil {
		return err
	}
	err := db.LoadQuery(ctx, run, false, "", func(w costdrift.SourceWriter) (string, error) { return "", fill(w) })
	if ferr := db.FinishSync(ctx, run, err); err == nil {
		err = ferr
	}
	if err != nil {
		return fmt.Errorf("sync %s: %w", run.Source, err)
	}
	return nil
}

// LoadQuery stores the rows of a database query in one transaction. With
// full, the query returned everything: rows of the source it no longer
// returns are removed (counted as replaced). fill may return a new watermark,
// which is stored with the rows and with settings, the reading settings it
// was read with.
func (db *DB) LoadQuery(ctx context.Context, run *costdrift.SyncRun, full bool, settings string, fill func(costdrift.SourceWriter) (string, error)) error {
	before := snapshot(run)
	err := db.inTx(ctx, func(tx *sql.Tx) error {
		mode := modeUpsert
		if full {
			mode = modeRefresh
		}
		rejectsFrom, err := lastRejectID(ctx, tx)
		if err != nil {
			return err
		}
		w, err := newWriter(ctx, tx, run, mode, 0)
		if err != nil {
			return err
		}
		defer w.close()
		mark, err := fill(w)
		if err != nil {
			return err
		}
		if full {
			if err := w.dropUnseen(); err != nil {
				return err
			}
		}
		if err := recordQueryPeriods(ctx, tx, run, full, rejectsFrom); err != nil {
			return err
		}
		if mark != "" {
			_, err = tx.ExecContext(ctx, `INSERT INTO source_watermarks (source, value, updated_at, reading_settings) VALUES (?, ?, ?, ?)
				ON CONFLICT (source) DO UPDATE SET value = excluded.value, updated_at = excluded.updated_at,
				reading_settings = excluded.reading_settings`, run.Source, mark, db.now(), nullString(settings))
		}
		return err
	})
	if err != nil {
		keepReadCount(run, before)
	}
	return err
}

// Watermark returns the newest watermark a source has stored, if any, and
// the reading settings it was read with ("" when unknown).
func (db *DB) Watermark(ctx context.Context, source string) (value, settings string, ok bool, err error) {
	err = db.q().QueryRowContext(ctx, `SELECT value, COALESCE(reading_settings, '') FROM source_watermarks WHERE source = ?`, source).
		Scan(&value, &settings)
	if errors.Is(err, sql.ErrNoRows) {
		return "", "", false, nil
	}
	return value, settings, err == nil, err
}

// SourceFiles lists the files a source has loaded.
func (db *DB) SourceFiles(ctx context.Context, source string) ([]costdrift.SourceFile, error) {
	rows, err := db.q().QueryContext(ctx, `SELECT id, source, path, size, sha256, rows, COALESCE(reading_settings, '')
		FROM source_files WHERE source = ? ORDER BY path`, source)
	if err != nil {
		return nil, err
	}
	defer rows.Close()
	var out []costdrift.SourceFile
	for rows.Next() {
		var f costdrift.SourceFile
		if err := rows.Scan(&f.ID, &f.Source, &f.Path, &f.Size, &f.SHA256, &f.Rows, &f.Settings); err != nil {
			return nil, err
		}
		out = append(out, f)
	}
	return out, rows.Err()
}

// KeepSettings records the reading settings of a file loaded before the
// store kept them, as the settings it was read with: the file is not read
// again for them, and a later change of settings is seen.
func (db *DB) KeepSettings(ctx context.Context, file costdrift.SourceFile) error {
	_, err := db.q().ExecContext(ctx, `UPDATE source_files SET reading_settings = ? WHERE id = ? AND reading_settings IS NULL`,
		file.Settings, file.ID)
	return err
}

// LoadFile stores one file in one transaction: the rows the file loaded
// before are removed, what fill writes is stored, and the file's
// fingerprint is recorded with them, so a reader never sees half a file and
// a process killed mid-file leaves the store as it was. A row whose key
// another file of the source loaded is taken over (a restatement moved
// between files); a key repeated inside the file is rejected.
func (db *DB) LoadFile(ctx context.Context, run *costdrift.SyncRun, file costdrift.SourceFile, fill func(costdrift.SourceWriter) error) error {
	before := snapshot(run)
	err := db.inTx(ctx, func(tx *sql.Tx) error {
		var id int64
		err := tx.QueryRowContext(ctx, `SELECT id FROM source_files WHERE source = ? AND path = ?`, file.Source, file.Path).Scan(&id)
		switch {
		case errors.Is(err, sql.ErrNoRows):
			res, err := tx.ExecContext(ctx, `INSERT INTO source_files (source, path, size, sha256, rows, loaded_at, sync_run_id)
				VALUES (?, ?, ?, ?, 0, ?, ?)`, file.Source, file.Path, file.Size, file.SHA256, db.now(), run.ID)
			if err != nil {
				return err
			}
			id, _ = res.LastInsertId()
		case err != nil:
			return err
		default:
			for _, table := range []string{"gl_lines", "activity", "accounts"} {
				res, err := tx.ExecContext(ctx, `DELETE FROM `+table+` WHERE source_file_id = ?`, id)
				if err != nil {
					return err
				}
				n, _ := res.RowsAffected()
				run.RowsReplaced += int(n)
			}
			if err := dropDisplacedVersions(ctx, tx, id); err != nil {
				return err
			}
		}
		loadedBefore := run.RowsLoaded
		rejectsFrom, err := lastRejectID(ctx, tx)
		if err != nil {
			return err
		}
		w, err := newWriter(ctx, tx, run, modeFile, id)
		if err != nil {
			return err
		}
		defer w.close()
		p := newPipeline(w)
		if err := fill(p); err != nil {
			p.finish()
			return err
		}
		if err := p.finish(); err != nil {
			return err
		}
		// Keys this file restated before and no longer carries go back to
		// the files that still hold them.
		if _, err := giveBack(ctx, tx, id); err != nil {
			return err
		}
		// Every row stored by this load, new or taken over from another
		// file, now belongs to this file; its old rows were removed above.
		rows := run.RowsLoaded - loadedBefore
		if _, err := tx.ExecContext(ctx, `UPDATE source_files SET size = ?, sha256 = ?, rows = ?, loaded_at = ?, sync_run_id = ?,
			reading_settings = ? WHERE id = ?`,
			file.Size, file.SHA256, rows, db.now(), run.ID, nullString(file.Settings), id); err != nil {
			return err
		}
		if err := recordPeriods(ctx, tx, run, id, w.periods, rejectsFrom); err != nil {
			return err
		}
		if run.Role == costdrift.RoleLedger {
			return unbalanced(ctx, tx, run, id, file.Path, &w.balance)
		}
		return nil
	})
	if err != nil {
		keepReadCount(run, before)
	}
	return err
}

// unbalanced warns when entries of a file do not sum to zero. It is a
// warning, not a reject: an export may carry only the expense side.
func unbalanced(ctx context.Context, tx *sql.Tx, run *costdrift.SyncRun, fileID int64, path string, b *balance) error {
	b.close()
	off := 0
	switch {
	case b.overflow && b.runsExact():
		// Every entry's lines came together, and each run's sum is
		// exact: the runs that did not balance are the entries.
		off = b.runs
	case b.overflow:
		// The total is zero exactly when both parts are, once the rest's
		// whole billions are carried (joinParts).
		err := tx.QueryRowContext(ctx, `SELECT COALESCE(SUM(billions + rest / 1000000000 <> 0 OR rest % 1000000000 <> 0), 0) FROM
			(SELECT SUM(amount_minor / 1000000000) AS billions, SUM(amount_minor % 1000000000) AS rest
			 FROM gl_lines WHERE source_file_id = ? GROUP BY entry_id)`, fileID).Scan(&off)
		if err != nil {
			return err
		}
	case len(b.suspects) > 0:
		// The suspects' totals over the source, a thousand entries a
		// query (each by the key's index), zero as in the case above; a
		// total beyond int64 is not zero either.
		entries := make([]string, 0, len(b.suspects))
		for entry := range b.suspects {
			entries = append(entries, entry)
		}
		err := inChunks(entries, func(in string, args []any) error {
			var n int
			err := tx.QueryRowContext(ctx, `SELECT COALESCE(SUM(billions + rest / 1000000000 <> 0 OR rest % 1000000000 <> 0), 0) FROM
				(SELECT SUM(amount_minor / 1000000000) AS billions, SUM(amount_minor % 1000000000) AS rest
				 FROM gl_lines WHERE source = ? AND entry_id IN (`+in+`) GROUP BY entry_id)`, append([]any{run.Source}, args...)...).Scan(&n)
			off += n
			return err
		})
		if err != nil {
			return err
		}
	}
	if off > 0 {
		noun := "entries do"
		if off == 1 {
			noun = "entry does"
		}
		run.Warnings = append(run.Warnings, fmt.Sprintf("%s: %d %s not balance (debits minus credits is not zero); the file may hold only part of each entry", path, off, noun))
	}
	return nil
}

// snapshot copies a run's counts, reasons included, before a batch.
func snapshot(run *costdrift.SyncRun) costdrift.SyncRun {
	s := *run
	s.Reasons = make(map[string]int, len(run.Reasons))
	for k, v := range run.Reasons {
		s.Reasons[k] = v
	}
	return s
}

// keepReadCount undoes the counts of a batch that was rolled back, keeping
// only how many rows were read: nothing of the batch is in the store.
func keepReadCount(run *costdrift.SyncRun, before costdrift.SyncRun) {
	read := run.RowsRead
	*run = before
	run.RowsRead = read
}

// ForgetFile removes the rows a file loaded and the record of the file, for
// a file that is gone for good. Keys it had taken over from other files of
// the source go back to those files, in the same transaction. It returns
// how many rows were removed and how many were given back.
func (db *DB) ForgetFile(ctx context.Context, source, path string) (removed, givenBack int, err error) {
	err = db.inTx(ctx, func(tx *sql.Tx) error {
		var id int64
		if err := tx.QueryRowContext(ctx, `SELECT id FROM source_files WHERE source = ? AND path = ?`, source, path).Scan(&id); err != nil {
			if errors.Is(err, sql.ErrNoRows) {
				return fmt.Errorf("source %s has loaded no file %s: %w", source, path, ErrUnknownFile)
			}
			return err
		}
		for _, table := range []string{"gl_lines", "activity", "accounts"} {
			res, err := tx.ExecContext(ctx, `DELETE FROM `+table+` WHERE source_file_id = ?`, id)
			if err != nil {
				return err
			}
			n, _ := res.RowsAffected()
			removed += int(n)
		}
		if err := dropDisplacedVersions(ctx, tx, id); err != nil {
			return err
		}
		n, err := giveBack(ctx, tx, id)
		if err != nil {
			return err
		}
		givenBack = n
		if _, err := tx.ExecContext(ctx, `DELETE FROM source_periods WHERE source_file_id = ?`, id); err != nil {
			return err
		}
		_, err = tx.ExecContext(ctx, `DELETE FROM source_files WHERE id = ?`, id)
		return err
	})
	if err != nil {
		return 0, 0, err
	}
	return removed, givenBack, nil
}

// ErrUnknownFile is returned by ForgetFile for a file the source never loaded.
var ErrUnknownFile = errors.New("unknown file")

// writeMode says how a writer treats a key that is already stored.
type writeMode int

const (
	modeUpsert  writeMode = iota // update when the values differ
	modeRefresh                  // upsert, and remember the key so unseen rows can be dropped
	modeFile                     // the file's own old rows are gone: a stored key is another file's, or a repeat
)

// writer stores one batch through prepared statements.
type writer struct {
	ctx    context.Context
	tx     *sql.Tx
	run    *costdrift.SyncRun
	mode   writeMode
	fileID any // NULL for query sources
	stmts  map[string]*sql.Stmt

	pending     []costdrift.LedgerLine // ledger lines of a file not yet stored
	batchInsert string
	batchArgs   []any
	// rowByRow says the store's rowids do not ascend from the largest (it
	// holds the largest rowid SQLite can give), so that a batch INSERT
	// cannot tell which lines it stored: every line goes row by row.
	rowByRow bool
	balance  balance
	// periods counts the ledger lines or activity values stored, by
	// period: what a file delivered per period (recordPeriods).
	periods map[string]int
}

var tableSQL = map[string]struct{ insert, upsertWhere, seen, lookup, takeOver string }{
	"gl": {
		insert: `INSERT INTO gl_lines (source, entry_id, line, posted_on, period, account, cost_center, amount_minor, description, sync_run_id, source_file_id)
			VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?)`,
		upsertWhere: ` ON CONFLICT (source, entry_id, line) DO UPDATE SET
			posted_on = excluded.posted_on, period = excluded.period, account = excluded.account,
			cost_center = excluded.cost_center, amount_minor = excluded.amount_minor,
			description = excluded.description, sync_run_id = excluded.sync_run_id
			WHERE posted_on IS NOT excluded.posted_on OR period IS NOT excluded.period OR account IS NOT excluded.account
			OR cost_center IS NOT excluded.cost_center OR amount_minor IS NOT excluded.amount_minor
			OR description IS NOT excluded.description`,
		seen:   `INSERT OR IGNORE INTO temp.seen_gl (entry_id, line) VALUES (?, ?)`,
		lookup: `SELECT source_file_id, posted_on, period, account, cost_center, amount_minor, description FROM gl_lines WHERE source = ? AND entry_id = ? AND line = ?`,
		takeOver: `UPDATE gl_lines SET posted_on = ?, period = ?, account = ?, cost_center = ?, amount_minor = ?, description = ?,
			sync_run_id = ?, source_file_id = ? WHERE source = ? AND entry_id = ? AND line = ?`,
	},
	"activity": {
		insert: `INSERT INTO activity (source, period, driver, cost_center, value, unit, sync_run_id, source_file_id) VALUES (?, ?, ?, ?, ?, ?, ?, ?)`,
		upsertWhere: ` ON CONFLICT (source, period, driver, cost_center) DO UPDATE SET
			value = excluded.value, unit = excluded.unit, sync_run_id = excluded.sync_run_id
			WHERE value IS NOT excluded.value OR unit IS NOT excluded.unit`,
		seen:     `INSERT OR IGNORE INTO temp.seen_activity (period, driver, cost_center) VALUES (?, ?, ?)`,
		lookup:   `SELECT source_file_id, value, unit FROM activity WHERE source = ? AND period = ? AND driver = ? AND cost_center = ?`,
		takeOver: `UPDATE activity SET value = ?, unit = ?, sync_run_id = ?, source_file_id = ? WHERE source = ? AND period = ? AND driver = ? AND cost_center = ?`,
	},
	"accounts": {
		insert: `INSERT INTO accounts (source, account, name, type, account_group, sync_run_id, source_file_id) VALUES (?, ?, ?, ?, ?, ?, ?)`,
		upsertWhere: ` ON CONFLICT (source, account) DO UPDATE SET
			name = excluded.name, type = excluded.type, account_group = excluded.account_group, sync_run_id = excluded.sync_run_id
			WHERE name IS NOT excluded.name OR type IS NOT excluded.type OR account_group IS NOT excluded.account_group`,
		seen:     `INSERT OR IGNORE INTO temp.seen_accounts (account) VALUES (?)`,
		lookup:   `SELECT source_file_id, name, type, account_group FROM accounts WHERE source = ? AND account = ?`,
		takeOver: `UPDATE accounts SET name = ?, type = ?, account_group = ?, sync_run_id = ?, source_file_id = ? WHERE source = ? AND account = ?`,
	},
}

func newWriter(ctx context.Context, tx *sql.Tx, run *costdrift.SyncRun, mode writeMode, fileID int64) (*writer, error) {
	w := &writer{ctx: ctx, tx: tx, run: run, mode: mode, stmts: map[string]*sql.Stmt{}, periods: map[string]int{}}
	if fileID != 0 {
		w.fileID = fileID
	}
	if run.Reasons == nil {
		run.Reasons = map[string]int{}
	}
	if mode == modeFile {
		// SQLite gives a new row the largest rowid plus one, unless the
		// largest is the maximum already: then a free one at random.
		var top int64
		if err := tx.QueryRowContext(ctx, `SELECT IFNULL(MAX(rowid), 0) FROM gl_lines`).Scan(&top); err != nil {
			return nil, err
		}
		w.rowByRow = top > math.MaxInt64/2
	}
	if mode == modeRefresh {
		for _, q := range []string{
			`CREATE TEMP TABLE IF NOT EXISTS seen_gl (entry_id TEXT, line INTEGER, PRIMARY KEY (entry_id, line))`,
			`CREATE TEMP TABLE IF NOT EXISTS seen_activity (period TEXT, driver TEXT, cost_center TEXT, PRIMARY KEY (period, driver, cost_center))`,
			`CREATE TEMP TABLE IF NOT EXISTS seen_accounts (account TEXT PRIMARY KEY)`,
			`DELETE FROM temp.seen_gl`, `DELETE FROM temp.seen_activity`, `DELETE FROM temp.seen_accounts`,
		} {
			if _, err := tx.ExecContext(ctx, q); err != nil {
				return nil, err
			}
		}
	}
	return w, nil
}

// stmt prepares a statement once per batch.
func (w *writer) stmt(q string) (*sql.Stmt, error) {
	if s, ok := w.stmts[q]; ok {
		return s, nil
	}
	s, err := w.tx.PrepareContext(w.ctx, q)
	if err != nil {
		return nil, err
	}
	w.stmts[q] = s
	return s, nil
}

func (w *writer) exec(q string, args ...any) (int64, error) {
	s, err := w.stmt(q)
	if err != nil {
		return 0, err
	}
	res, err := s.ExecContext(w.ctx, args...)
	if err != nil {
		return 0, err
	}
	return res.RowsAffected()
}

func (w *writer) close() {
	for _, s := range w.stmts {
		s.Close()
	}
}

// store writes one row by the writer's mode. key are the key columns after
// source; values the others, in the order of the table's lookup query.
func (w *writer) store(table string, key, values []any, location string) error {
	q := tableSQL[table]
	row := append(append([]any{w.run.Source}, key...), values...)
	row = append(row, w.run.ID, w.fileID)
	switch w.mode {
	case modeUpsert, modeRefresh:
		n, err := w.exec(q.insert+q.upsertWhere, row...)
		if err != nil {
			return err
		}
		w.count(n)
		if w.mode == modeRefresh {
			_, err = w.exec(q.seen, key...)
		}
		return err
	}
	n, err := w.exec(q.insert+` ON CONFLICT DO NOTHING`, row...)
	if err != nil || n == 1 {
		w.run.RowsLoaded += int(n)
		return err
	}
	// The key is stored already: by another file, or earlier in this one.
	stored := make([]any, len(values)+1)
	ptrs := make([]any, len(stored))
	for i := range stored {
		ptrs[i] = &stored[i]
	}
	s, err := w.stmt(q.lookup)
	if err != nil {
		return err
	}
	if err := s.QueryRowContext(w.ctx, append([]any{w.run.Source}, key...)...).Scan(ptrs...); err != nil {
		return err
	}
	if owner, ok := stored[0].(int64); ok && w.fileID != nil && owner == w.fileID.(int64) {
		// The key goes in the location, so that reasons group by kind.
		reason := "duplicate key with different values inside one load; the first row was kept"
		if sameValues(stored[1:], values) {
			reason = exactRepeat + "; it was counted once"
		}
		location = location + " (key " + keyText(key) + ")"
		return w.Reject(costdrift.Reject{Source: w.run.Source, Location: location, Reason: reason, Raw: rawText(key, values)})
	}
	if owner, ok := stored[0].(int64); ok {
		if err := w.displace(table, key, owner); err != nil {
			return err
		}
	}
	args := append(append(append([]any{}, values...), w.run.ID, w.fileID, w.run.Source), key...)
	if _, err := w.exec(q.takeOver, args...); err != nil {
		return err
	}
	w.run.RowsLoaded++
	if !sameValues(stored[1:], values) {
		// Another file's row was overwritten: a restatement.
		w.run.RowsReplaced++
	}
	return nil
}

func (w *writer) count(n int64) {
	if n > 0 {
		w.run.RowsLoaded++
	} else {
		w.run.RowsUnchanged++
	}
}

// dropUnseen removes the rows of a query source that its full refresh did
// not return.
func (w *writer) dropUnseen() error {
	for _, q := range []string{
		`DELETE FROM gl_lines WHERE source = ? AND source_file_id IS NULL AND NOT EXISTS
			(SELECT 1 FROM temp.seen_gl s WHERE s.entry_id = gl_lines.entry_id AND s.line = gl_lines.line)`,
		`DELETE FROM activity WHERE source = ? AND source_file_id IS NULL AND NOT EXISTS
			(SELECT 1 FROM temp.seen_activity s WHERE s.period = activity.period AND s.driver = activity.driver AND s.cost_center = activity.cost_center)`,
		`DELETE FROM accounts WHERE source = ? AND source_file_id IS NULL AND NOT EXISTS
			(SELECT 1 FROM temp.seen_accounts s WHERE s.account = accounts.account)`,
	} {
		res, err := w.tx.ExecContext(w.ctx, q, w.run.Source)
		if err != nil {
			return err
		}
		n, _ := res.RowsAffected()
		w.run.RowsReplaced += int(n)
	}
	return nil
}

func (w *writer) LedgerLine(l costdrift.LedgerLine) error {
	if w.mode == modeFile {
		// New files are the bulk of a sync: their lines go in batches.
		w.pending = append(w.pending, l)
		if len(w.pending) == ledgerBatch {
			return w.flush()
		}
		return nil
	}
	return w.storeLine(l)
}

func (w *writer) storeLine(l costdrift.LedgerLine) error {
	rejected, loaded := w.run.RowsRejected, w.run.RowsLoaded
	err := w.store("gl", []any{l.EntryID, l.Line}, []any{l.PostedOn, l.Period, l.Account, l.CostCenter, l.AmountMinor, l.Description},
		fmt.Sprintf("entry %s line %d", l.EntryID, l.Line))
	if err == nil && w.run.RowsRejected == rejected {
		w.balance.add(l)
	}
	if w.run.RowsLoaded > loaded {
		w.periods[l.Period]++
	}
	return err
}

// insertRows runs a batch INSERT through the driver's query path, which
// binds every value and steps the statement in one call into SQLite, where
// the exec path makes one call per bound value: for a hundred rows of eight
// values, eight hundred calls fewer.
func insertRows(ctx context.Context, s *sql.Stmt, args []any) error {
	rows, err := s.QueryContext(ctx, args...)
	if err != nil {
		return err
	}
	for rows.Next() {
	}
	if err := rows.Err(); err != nil {
		rows.Close()
		return err
	}
	return rows.Close()
}

// quoteSQL writes s as an SQL string literal.
func quoteSQL(s string) string {
	return "'" + strings.ReplaceAll(s, "'", "''") + "'"
}

// balance follows the entries of a file as its lines are stored, to warn of
// entries that do not sum to zero without a query over the whole file: an
// entry whose lines follow one another is checked as it ends; one whose
// lines are scattered is a suspect, checked against the store at the end.
type balance struct {
	entry    string
	sum      int64
	wrapped  bool // sum left int64 on the way: only the store can tell the total
	started  bool
	suspects map[string]struct{}
	overflow bool // too many suspects to check one by one

	// For a file of many unbalanced entries: how many runs of lines
	// closed unbalanced, and whether that count is the number of
	// entries of the file that do not balance. It is unless an entry
	// whose lines did not balance comes back later in the file (its
	// total is then the store's to tell), or a run's sum left int64.
	// unbalancedSeen is a Bloom filter of the entries whose runs closed
	// unbalanced: it may wrongly say an entry came back (the store is
	// then asked, as before), never that one did not.
	runs           int
	unbalancedSeen []uint64
	seed           maphash.Seed
	cameBack       bool
	anyWrapped     bool
}

// bloomBits is the size of the filter, 16 MiB, taken only by a file of
// more than maxSuspects unbalanced entries. It is a blocked filter (Putze,
// Sanders and Singler 2007, "Cache-, hash- and space-efficient Bloom
// filters", WEA 2007, LNCS 4525): an entry's bloomProbes bits all lie in one
// block of 512 bits, a cache line, so that adding or asking costs one miss
// of the processor's cache, not one a probe. Over a file of a million
// unbalanced entries the store is then asked when it need not be about one
// time in 200 (with the blocks' entries Poisson-distributed, 3.8 a block on
// average: 5·10⁻⁹ a question at the end, less before); four probes spread
// over the whole filter asked it one time in two.
const (
	bloomBits   = 1 << 27
	bloomBlock  = 512 // bits; 64 bytes
	bloomProbes = 8
)

// probes are the filter's bits for an entry: a block, and bloomProbes bits
// in it of 9 bits each, five from the hash's bits above the block's and
// three from a mix of the whole hash (the finaliser of SplitMix64; Steele,
// Lea and Flood 2014, "Fast splittable pseudorandom number generators",
// OOPSLA 2014). Positions drawn by double hashing inside so small a block
// put two entries of a block on the same bits one time in 131,072, and
// asked wrongly a thousand times as often.
func (b *balance) probes(entry string) (block uint64, bits [bloomProbes]uint64) {
	h := maphash.String(b.seed, entry)
	block = (h & (bloomBits/bloomBlock - 1)) * (bloomBlock / 64)
	g := h ^ h>>30
	g *= 0xbf58476d1ce4e5b9
	g ^= g >> 27
	g *= 0x94d049bb133111eb
	g ^= g >> 31
	r := h >> 18
	for i := range bits {
		if i < 5 {
			bits[i], r = r&(bloomBlock-1), r>>9
		} else {
			bits[i], g = g&(bloomBlock-1), g>>9
		}
	}
	return block, bits
}

func (b *balance) mayHaveClosedUnbalanced(entry string) bool {
	if b.unbalancedSeen == nil {
		return false
	}
	block, bits := b.probes(entry)
	for _, i := range bits {
		if b.unbalancedSeen[block+i/64]&(1<<(i%64)) == 0 {
			return false
		}
	}
	return true
}

func (b *balance) markUnbalanced(entry string) {
	if b.unbalancedSeen == nil {
		b.seed = maphash.MakeSeed()
		b.unbalancedSeen = make([]uint64, bloomBits/64)
	}
	block, bits := b.probes(entry)
	for _, i := range bits {
		b.unbalancedSeen[block+i/64] |= 1 << (i % 64)
	}
}

// runsExact says runs is the number of the file's entries that do not
// balance.
func (b *balance) runsExact() bool { return !b.cameBack && !b.anyWrapped }

// maxSuspects bounds the memory the check takes, whatever the file's size.
const maxSuspects = 10000

func (b *balance) add(l costdrift.LedgerLine) {
	if b.started && l.EntryID == b.entry {
		sum := b.sum + l.AmountMinor
		// Signed overflow: two addends of one sign, a sum of the other.
		if (l.AmountMinor > 0 && sum < b.sum) || (l.AmountMinor < 0 && sum > b.sum) {
			b.wrapped = true
		}
		b.sum = sum
		return
	}
	b.close()
	if b.closedUnbalanced(l.EntryID) {
		b.cameBack = true
	}
	b.entry, b.sum, b.wrapped, b.started = l.EntryID, l.AmountMinor, false, true
}

func (b *balance) close() {
	if !b.started || b.sum == 0 && !b.wrapped {
		return
	}
	b.runs++
	b.anyWrapped = b.anyWrapped || b.wrapped
	if b.suspects == nil {
		b.suspects = map[string]struct{}{}
	}
	if _, ok := b.suspects[b.entry]; ok || len(b.suspects) < maxSuspects {
		b.suspects[b.entry] = struct{}{}
		return
	}
	if !b.overflow {
		b.overflow = true
		for entry := range b.suspects {
			b.markUnbalanced(entry)
		}
	}
	if !b.cameBack {
		b.markUnbalanced(b.entry)
	}
}

// closedUnbalanced says whether a run of the entry's lines may have closed
// unbalanced already: exactly while the suspects are few, by the filter
// once they are many.
func (b *balance) closedUnbalanced(entry string) bool {
	if b.overflow {
		// The filter holds the suspects too.
		return b.mayHaveClosedUnbalanced(entry)
	}
	_, ok := b.suspects[entry]
	return ok
}

// ledgerBatch is how many ledger lines one INSERT carries. Fewer round
// trips through database/sql and cgo make a file load several times faster,
// and each call into SQLite long enough to hand its thread's Go processor
// over costs a few context switches, fewer with fewer calls; 500 rows × 8
// bound values stay far below SQLite's limit of 32,766.
const ledgerBatch = 500

// flush stores the pending ledger lines of a file with one multi-row
// INSERT. The lines it could not store met a stored key (a repeat inside
// the file, or a line another file loaded) and take the row-by-row path
// that decides between the two.
func (w *writer) flush() error {
	batch := w.pending
	w.pending = w.pending[:0]
	return w.storeBatch(batch, nil)
}

// storeBatches stores ledger lines of a file in batches of ledgerBatch, in
// order; the last may be short. args are the lines' values as the INSERT
// binds them (batchValues), or nil.
func (w *writer) storeBatches(lines []costdrift.LedgerLine, args []any) error {
	for len(lines) > 0 {
		n := min(len(lines), ledgerBatch)
		var a []any
		if args != nil {
			a, args = args[:n*valuesPerLine], args[n*valuesPerLine:]
		}
		if err := w.storeBatch(lines[:n], a); err != nil {
			return err
		}
		lines = lines[n:]
	}
	return nil
}

// valuesPerLine is how many values the batch INSERT binds for a line.
const valuesPerLine = 8

// batchValues appends a line's values as the batch INSERT binds them.
// Putting each in an interface takes an allocation or two: the pipeline
// does it on the reading goroutine, not on the one that waits for SQLite.
func batchValues(args []any, l costdrift.LedgerLine) []any {
	return append(args, l.EntryID, l.Line, l.PostedOn, l.Period, l.Account, l.CostCenter, l.AmountMinor, l.Description)
}

// storeBatch stores ledger lines of a file, a batch with one INSERT.
//
// The INSERT skips a line whose key is stored already (OR IGNORE) rather
// than failing: a statement that may fail part way must keep a journal of
// every page it changes, to undo them, and that journal, written for each
// batch to a temporary file, was most of the system time of a large load.
// (The ledger's foreign keys are checked at commit, schema 16, for the
// same reason.) The lines stored take the rowids after the largest before
// the statement, which tells them from the lines it skipped.
func (w *writer) storeBatch(batch []costdrift.LedgerLine, args []any) error {
	if len(batch) == 0 {
		return nil
	}
	if len(batch) < 2 || w.rowByRow {
		for _, l := range batch {
			if err := w.storeLine(l); err != nil {
				return err
			}
		}
		return nil
	}
	if w.batchInsert == "" {
		w.batchInsert = w.insertSQL(ledgerBatch)
		w.batchArgs = make([]any, 0, ledgerBatch*valuesPerLine)
	}
	// The last batch of a file is short: it has a statement of its own.
	query := w.batchInsert
	if len(batch) != ledgerBatch {
		query = w.insertSQL(len(batch))
	}
	if args == nil {
		args = w.batchArgs[:0]
		for _, l := range batch {
			args = batchValues(args, l)
		}
	}
	s, err := w.stmt(query)
	if err != nil {
		return err
	}
	if err := insertRows(w.ctx, s, args); err != nil {
		return err
	}
	stored, last, err := w.lastInsert()
	if err != nil {
		return err
	}
	if stored == int64(len(batch)) {
		// Every line was new: the bulk of a sync.
		w.run.RowsLoaded += len(batch)
		for _, l := range batch {
			w.periods[l.Period]++
			w.balance.add(l)
		}
		return nil
	}
	return w.settleBatch(batch, stored, last)
}

// insertSQL is the INSERT of n ledger lines of the writer's file. The
// source, run and file are the same for every line: written into the
// statement once, they are not bound for each line (each bound value is a
// call into SQLite). The source name is quoted as an SQL string; the ids
// are integers.
func (w *writer) insertSQL(n int) string {
	row := fmt.Sprintf("(%s,?,?,?,?,?,?,?,?,%d,%d)", quoteSQL(w.run.Source), w.run.ID, w.fileID)
	var b strings.Builder
	b.WriteString(`INSERT OR IGNORE INTO gl_lines (source, entry_id, line, posted_on, period, account, cost_center, amount_minor, description, sync_run_id, source_file_id) VALUES `)
	for i := range n {
		if i > 0 {
			b.WriteByte(',')
		}
		b.WriteString(row)
	}
	return b.String()
}

// lastInsert says how many rows the last INSERT stored and the rowid of the
// last of them.
func (w *writer) lastInsert() (stored, last int64, err error) {
	s, err := w.stmt(`SELECT changes(), last_insert_rowid()`)
	if err != nil {
		return 0, 0, err
	}
	err = s.QueryRowContext(w.ctx).Scan(&stored, &last)
	return stored, last, err
}

// settleBatch finishes a batch whose INSERT skipped some lines: in the
// batch's order, a line the INSERT stored is counted, and any other takes
// the row-by-row path, which rejects a repeat inside the file (the first
// line of a key, stored, came before it) and takes over a line another
// file loaded, exactly as if the batch had gone row by row.
func (w *writer) settleBatch(batch []costdrift.LedgerLine, stored, last int64) error {
	type key struct {
		entry string
		line  int
	}
	fresh := make(map[key]bool, stored)
	if stored > 0 {
		rows, err := w.tx.QueryContext(w.ctx, `SELECT entry_id, line FROM gl_lines WHERE rowid > ? AND rowid <= ?`, last-stored, last)
		if err != nil {
			return err
		}
		for rows.Next() {
			var k key
			if err := rows.Scan(&k.entry, &k.line); err != nil {
				rows.Close()
				return err
			}
			fresh[k] = true
		}
		if err := rows.Close(); err != nil {
			return err
		}
		if len(fresh) != int(stored) {
			return fmt.Errorf("batch of %d lines: %d stored, but %d found under their rowids", len(batch), stored, len(fresh))
		}
	}
	for _, l := range batch {
		k := key{l.EntryID, l.Line}
		if fresh[k] {
			// Only the first line of a key was stored by the INSERT.
			delete(fresh, k)
			w.run.RowsLoaded++
			w.periods[l.Period]++
			w.balance.add(l)
			continue
		}
		if err := w.storeLine(l); err != nil {
			return err
		}
	}
	return nil
}

func (w *writer) Activity(a costdrift.ActivityValue) error {
	loaded := w.run.RowsLoaded
	err := w.store("activity", []any{a.Period, a.Driver, a.CostCenter}, []any{a.Value, a.Unit},
		fmt.Sprintf("%s %s %s", a.Period, a.Driver, a.CostCenter))
	if w.run.RowsLoaded > loaded {
		w.periods[a.Period]++
	}
	return err
}

func (w *writer) Account(a costdrift.Account) error {
	return w.store("accounts", []any{a.Account}, []any{a.Name, a.Type, a.Group}, "account "+a.Account)
}

func (w *writer) Reject(r costdrift.Reject) error {
	w.run.RowsRejected++
	w.run.Reasons[ReasonKind(r.Reason)]++
	_, err := w.exec(`INSERT INTO rejects (sync_run_id, source, location, reason, raw) VALUES (?, ?, ?, ?, ?)`,
		w.run.ID, w.run.Source, r.Location, r.Reason, r.Raw)
	return err
}

var (
	quoted = regexp.MustCompile(`"[^"]*"|'[^']*'`)
	digits = regexp.MustCompile(`[0-9]+`)
)

// ReasonKind groups reject reasons for counting: quoted values and numbers
// are blanked and the text is cut at the first colon, so "bad date
// \"2026-13-01\": want YYYY-MM-DD" counts as "bad date".
func ReasonKind(reason string) string {
	r := quoted.ReplaceAllString(reason, "")
	if i := strings.IndexAny(r, ":;("); i >= 0 {
		r = r[:i]
	}
	r = digits.ReplaceAllString(r, "N")
	return strings.Join(strings.Fields(r), " ")
}

func keyText(key []any) string {
	parts := make([]string, len(key))
	for i, k := range key {
		parts[i] = fmt.Sprint(k)
	}
	return strings.Join(parts, "/")
}

func rawText(key, values []any) string {
	parts := make([]string, 0, len(key)+len(values))
	for _, v := range append(append([]any{}, key...), values...) {
		parts = append(parts, fmt.Sprint(v))
	}
	return strings.Join(parts, ",")
}

// sameValues compares stored column values with the ones being written.
func sameValues(stored, values []any) bool {
	for i := range values {
		a, b := stored[i], values[i]
		switch bv := b.(type) {
		case int:
			b = int64(bv)
		case string:
			if s, ok := a.([]byte); ok {
				a = string(s)
			}
		}
		if fmt.Sprint(a) != fmt.Sprint(b) {
			return false
		}
	}
	return true
}

// SyncRuns returns the most recent sync runs, newest first.
func (db *DB) SyncRuns(ctx context.Context, limit int) ([]costdrift.SyncRun, error) {
	rows, err := db.q().QueryContext(ctx, `SELECT id, source, role, kind, started_at, COALESCE(finished_at, ''), status, files,
		files_skipped, rows_read, rows_loaded, rows_unchanged, rows_replaced, rows_rejected, COALESCE(reasons, ''),
		COALESCE(warnings, ''), COALESCE(error, '') FROM sync_runs ORDER BY id DESC LIMIT ?`, limit)
	if err != nil {
		return nil, err
	}
	defer rows.Close()
	var runs []costdrift.SyncRun
	for rows.Next() {
		var r costdrift.SyncRun
		var role, started, finished, reasons, warnings string
		if err := rows.Scan(&r.ID, &r.Source, &role, &r.Kind, &started, &finished, &r.Status, &r.Files, &r.FilesSkipped,
			&r.RowsRead, &r.RowsLoaded, &r.RowsUnchanged, &r.RowsReplaced, &r.RowsRejected, &reasons, &warnings, &r.Error); err != nil {
			return nil, err
		}
		r.Role = costdrift.Role(role)
		r.StartedAt, _ = time.Parse(time.RFC3339, started)
		r.FinishedAt, _ = time.Parse(time.RFC3339, finished)
		if reasons != "" {
			if err := json.Unmarshal([]byte(reasons), &r.Reasons); err != nil {
				return nil, fmt.Errorf("sync run %d: reasons: %w", r.ID, err)
			}
		}
		if warnings != "" {
			r.Warnings = strings.Split(warnings, "\n")
		}
		runs = append(runs, r)
	}
	return runs, rows.Err()
}

// pipeline hands a file's rows to a goroutine that stores them, so that
// reading and parsing the next rows overlaps with SQLite storing the last
// ones (the machine has more than one core; the store has one writer).
// Rows reach the store in the order they were written.
type pipeline struct {
	w       *writer
	pending []costdrift.LedgerLine
	args    []any // pending's values as the batch INSERT binds them
	jobs    chan func() error
	done    chan struct{}
	err     error // the first error of a job; read after done
	failed  atomic.Bool
	once    sync.Once
}

func newPipeline(w *writer) *pipeline {
	p := &pipeline{w: w, jobs: make(chan func() error, 8), done: make(chan struct{})}
	go func() {
		defer close(p.done)
		for job := range p.jobs {
			if p.err != nil {
				continue // drain: nothing more is stored after a failure
			}
			if err := job(); err != nil {
				p.err = err
				p.failed.Store(true)
			}
		}
	}()
	return p
}

func (p *pipeline) submit(job func() error) error {
	if p.failed.Load() {
		return p.finish()
	}
	p.jobs <- job
	return nil
}

// finish stores what is pending, waits for the goroutine and returns the
// first error. It may be called more than once.
func (p *pipeline) finish() error {
	p.once.Do(func() {
		if len(p.pending) > 0 && !p.failed.Load() {
			lines := p.pending
			args := p.args
			p.jobs <- func() error { return p.w.storeBatches(lines, args) }
		}
		close(p.jobs)
		<-p.done
	})
	return p.err
}

// handOver is how many ledger lines the pipeline hands to the storing
// goroutine at a time: two batches, so that the two goroutines wake each
// other a thousand times in a million lines rather than ten thousand.
const handOver = 2 * ledgerBatch

func (p *pipeline) LedgerLine(l costdrift.LedgerLine) error {
	p.pending = append(p.pending, l)
	p.args = batchValues(p.args, l)
	if len(p.pending) < handOver {
		return nil
	}
	lines, args := p.pending, p.args
	p.pending = make([]costdrift.LedgerLine, 0, handOver)
	p.args = make([]any, 0, handOver*valuesPerLine)
	return p.submit(func() error { return p.w.storeBatches(lines, args) })
}

func (p *pipeline) Activity(a costdrift.ActivityValue) error {
	return p.submit(func() error { return p.w.Activity(a) })
}

func (p *pipeline) Account(a costdrift.Account) error {
	return p.submit(func() error { return p.w.Account(a) })
}

func (p *pipeline) Reject(r costdrift.Reject) error {
	return p.submit(func() error { return p.w.Reject(r) })
}
