package sqlite

import (
	"context"
	"database/sql"
	"fmt"
	"io/fs"
	"sort"
	"strconv"
	"strings"

	"github.com/costdrift/costdrift/migrations"
)

// migration is one numbered SQL file.
type migration struct {
	version int
	name    string
	sql     string
}

func loadMigrations(fsys fs.FS) ([]migration, error) {
	names, err := fs.Glob(fsys, "*.sql")
	if err != nil {
		return nil, err
	}
	var ms []migration
	for _, name := range names {
		num, _, ok := strings.Cut(name, "_")
		v, err := strconv.Atoi(num)
		if !ok || err != nil || v <= 0 {
			return nil, fmt.Errorf("migration %s: name must start with a number and an underscore", name)
		}
		body, err := fs.ReadFile(fsys, name)
		if err != nil {
			return nil, err
		}
		ms = append(ms, migration{version: v, name: name, sql: string(body)})
	}
	sort.Slice(ms, func(i, j int) bool { return ms[i].version < ms[j].version })
	for i := 1; i < len(ms); i++ {
		if ms[i].version == ms[i-1].version {
			return nil, fmt.Errorf("migrations %s and %s share a number", ms[i-1].name, ms[i].name)
		}
	}
	return ms, nil
}

// SchemaVersion is the newest migration this build knows.
func SchemaVersion() int {
	ms, err := loadMigrations(migrations.FS)
	if err != nil || len(ms) == 0 {
		panic(fmt.Sprintf("sqlite: embedded migrations: %v", err))
	}
	return ms[len(ms)-1].version
}

func (db *DB) migrate(ctx context.Context) error {
	ms, err := loadMigrations(migrations.FS)
	if err != nil {
		return err
	}
	return db.applyMigrations(ctx, ms)
}

// applyMigrations applies every migration newer than the store's, each in
// one transaction with its record, and refuses a store written by a newer
// version of costdrift.
func (db *DB) applyMigrations(ctx context.Context, ms []migration) error {
	if db.readOnly {
		return db.checkNoneMissing(ctx, ms)
	}
	if _, err := db.db.ExecContext(ctx, `CREATE TABLE IF NOT EXISTS schema_migrations (
		version INTEGER PRIMARY KEY, name TEXT NOT NULL, applied_at TEXT NOT NULL)`); err != nil {
		return fmt.Errorf("migrations: %w", err)
	}
	applied := map[int]bool{}
	current := 0
	rows, err := db.db.QueryContext(ctx, `SELECT version FROM schema_migrations`)
	if err != nil {
		return fmt.Errorf("migrations: %w", err)
	}
	for rows.Next() {
		var v int
		if err := rows.Scan(&v); err != nil {
			rows.Close()
			return fmt.Errorf("migrations: %w", err)
		}
		applied[v] = true
		current = max(current, v)
	}
	rows.Close()
	known := 0
	if len(ms) > 0 {
		known = ms[len(ms)-1].version
	}
	if current > known {
		return fmt.Errorf("it was written by a newer costdrift (schema %d; this build knows up to %d): upgrade costdrift, or restore the backup taken before the upgrade", current, known)
	}
	// Every migration not yet recorded is applied, in order: one numbered
	// below the store's newest (added on a branch, say) is not skipped.
	for _, m := range ms {
		if applied[m.version] {
			continue
		}
		err := db.inTx(ctx, func(tx *sql.Tx) error {
			if _, err := tx.ExecContext(ctx, m.sql); err != nil {
				return err
			}
			_, err := tx.ExecContext(ctx, `INSERT INTO schema_migrations (version, name, applied_at) VALUES (?, ?, ?)`,
				m.version, m.name, db.now())
			return err
		})
		if err != nil {
			return fmt.Errorf("migration %s: %w", m.name, err)
		}
	}
	return nil
}

// checkNoneMissing is the check of a store opened read-only: it cannot be
// migrated, so it must need no migration.
func (db *DB) checkNoneMissing(ctx context.Context, ms []migration) error {
	applied := map[int]bool{}
	rows, err := db.db.QueryContext(ctx, `SELECT version FROM schema_migrations`)
	if err != nil {
		return fmt.Errorf("it cannot be written, and it has no schema yet: run `costdrift sync` as its owner first (%v)", err)
	}
	defer rows.Close()
	newest := 0
	for rows.Next() {
		var v int
		if err := rows.Scan(&v); err != nil {
			return err
		}
		applied[v] = true
		newest = max(newest, v)
	}
	if err := rows.Err(); err != nil {
		return err
	}
	if known := ms[len(ms)-1].version; newest > known {
		return fmt.Errorf("it was written by a newer costdrift (schema %d; this build knows up to %d): upgrade costdrift", newest, known)
	}
	for _, m := range ms {
		if !applied[m.version] {
			return fmt.Errorf("it cannot be written and needs migration %s first: run a command that writes (costdrift sync) as its owner", m.name)
		}
	}
	return nil
}
