package sqlite

import (
	"context"
	"database/sql"
	"strings"
)

// fileTable names the columns of a table that files load rows into: the
// key after source, and the values.
type fileTable struct {
	name        string
	key, values []string
}

var fileTables = map[string]fileTable{
	"gl":       {"gl_lines", []string{"entry_id", "line"}, []string{"posted_on", "period", "account", "cost_center", "amount_minor", "description"}},
	"activity": {"activity", []string{"period", "driver", "cost_center"}, []string{"value", "unit"}},
	"accounts": {"accounts", []string{"account"}, []string{"name", "type", "account_group"}},
}

// keyMatch is the SQL condition that a row of t.name (aliased s) has the
// key of the displaced row d.
func (t fileTable) keyMatch() string {
	parts := []string{"s.source = d.source"}
	for _, k := range t.key {
		parts = append(parts, "s."+k+" = d."+k)
	}
	return strings.Join(parts, " AND ")
}

func (t fileTable) columns() string {
	return strings.Join(append(append([]string{"source"}, t.key...), t.values...), ", ") + ", sync_run_id, source_file_id"
}

// displace keeps the stored version of a key that another file of the same
// source is taking over, and counts it out of its file's rows. The key is
// given back when the taking file is forgotten or no longer carries it.
func (w *writer) displace(table string, key []any, owner int64) error {
	t := fileTables[table]
	where := make([]string, len(t.key))
	for i, k := range t.key {
		where[i] = k + " = ?"
	}
	q := `INSERT OR REPLACE INTO displaced_` + t.name + ` (` + t.columns() + `, displaced_by) SELECT ` + t.columns() +
		`, ? FROM ` + t.name + ` WHERE source = ? AND ` + strings.Join(where, " AND ")
	if _, err := w.exec(q, append([]any{w.fileID, w.run.Source}, key...)...); err != nil {
		return err
	}
	_, err := w.exec(`UPDATE source_files SET rows = rows - 1 WHERE id = ?`, owner)
	return err
}

// dropDisplacedVersions removes the versions a file held behind other files'
// restatements: its rows are being removed or replaced, so what it said
// before no longer stands.
func dropDisplacedVersions(ctx context.Context, tx *sql.Tx, fileID int64) error {
	for _, t := range fileTables {
		if _, err := tx.ExecContext(ctx, `DELETE FROM displaced_`+t.name+` WHERE source_file_id = ?`, fileID); err != nil {
			return err
		}
	}
	return nil
}

// giveBack restores the versions that file fileID had displaced and whose
// key is no longer stored, to the files that still hold them, and returns
// how many rows came back. A displaced version whose key another file holds
// now waits behind that file instead.
func giveBack(ctx context.Context, tx *sql.Tx, fileID int64) (int, error) {
	restored := 0
	for _, t := range fileTables {
		d := "displaced_" + t.name
		res, err := tx.ExecContext(ctx, `INSERT OR IGNORE INTO `+t.name+` (`+t.columns()+`) SELECT `+t.columns()+` FROM `+d+` d
			WHERE d.displaced_by = ? AND NOT EXISTS (SELECT 1 FROM `+t.name+` s WHERE `+t.keyMatch()+`)
			ORDER BY d.rowid DESC`, fileID)
		if err != nil {
			return restored, err
		}
		n, _ := res.RowsAffected()
		restored += int(n)
		back := `FROM ` + d + ` d JOIN ` + t.name + ` s ON ` + t.keyMatch() + ` AND s.source_file_id = d.source_file_id WHERE d.displaced_by = ?`
		if _, err := tx.ExecContext(ctx, `UPDATE source_files SET rows = rows +
			(SELECT COUNT(*) `+back+` AND d.source_file_id = source_files.id)
			WHERE id IN (SELECT d.source_file_id `+back+`)`, fileID, fileID); err != nil {
			return restored, err
		}
		if _, err := tx.ExecContext(ctx, `DELETE FROM `+d+` WHERE rowid IN (SELECT d.rowid `+back+`)`, fileID); err != nil {
			return restored, err
		}
		holder := `(SELECT s.source_file_id FROM ` + t.name + ` s WHERE ` + t.keyMatch() + `)`
		if _, err := tx.ExecContext(ctx, `UPDATE `+d+` AS d SET displaced_by = `+holder+`
			WHERE d.displaced_by = ? AND `+holder+` IS NOT NULL`, fileID); err != nil {
			return restored, err
		}
		// A key now held by a database query's row belongs to no file
		// that could give it back.
		if _, err := tx.ExecContext(ctx, `DELETE FROM `+d+` AS d WHERE d.displaced_by = ? AND `+holder+` IS NULL`, fileID); err != nil {
			return restored, err
		}
	}
	return restored, nil
}
