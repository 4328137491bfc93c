package sqlite

import (
	"context"
	"database/sql"
	"errors"
	"fmt"
	"io/fs"
	"net/url"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"time"

	_ "github.com/mattn/go-sqlite3" // registers the "sqlite3" driver

	"github.com/costdrift/costdrift/internal/money"
)

// maxConns bounds the store's connections: one writer (SQLite has one at a
// time) and a few readers.
const maxConns = 4

// DB is an open store.
type DB struct {
	db   *sql.DB
	path string
	// Now is the clock; tests replace it.
	Now func() time.Time
	// Currency is the functional currency the store was created with.
	Currency money.Currency
	// dry, when set, is the one transaction a dry run works in; it is
	// rolled back at the end, so nothing is written.
	dry *sql.Tx
}

// conn is what both *sql.DB and *sql.Tx offer.
type conn interface {
	ExecContext(ctx context.Context, query string, args ...any) (sql.Result, error)
	QueryContext(ctx context.Context, query string, args ...any) (*sql.Rows, error)
	QueryRowContext(ctx context.Context, query string, args ...any) *sql.Row
}

// q is where statements go: the dry run's transaction, or the database.
func (db *DB) q() conn {
	if db.dry != nil {
		return db.dry
	}
	return db.db
}

// DryRun returns a view of the store in which every write lands in one
// transaction that rollback discards. Use it for a sync that must write
// nothing; use only the returned DB until rollback is called.
func (db *DB) DryRun(ctx context.Context) (dry *DB, rollback func(), err error) {
	tx, err := db.db.BeginTx(ctx, nil)
	if err != nil {
		return nil, nil, err
	}
	d := *db
	d.dry = tx
	return &d, func() { tx.Rollback() }, nil
}

// CheckCalendar remembers the calendar kind the store's periods were
// written with, and refuses another: stored periods would not parse.
func (db *DB) CheckCalendar(ctx context.Context, kind string) error {
	var stored string
	err := db.q().QueryRowContext(ctx, `SELECT value FROM store_meta WHERE key = 'calendar'`).Scan(&stored)
	if errors.Is(err, sql.ErrNoRows) {
		_, err = db.q().ExecContext(ctx, `INSERT INTO store_meta (key, value) VALUES ('calendar', ?)`, kind)
		return err
	}
	if err != nil {
		return err
	}
	if stored != kind {
		return fmt.Errorf("store %s holds %s periods but the config says calendar.period %s; sync into a new store to change calendars", db.path, stored, kind)
	}
	return nil
}

// Open opens the store at path, creating it owner-only (mode 0600) when it
// does not exist, and applies pending migrations. The store remembers its
// currency: opening it with another one is refused, since its minor units
// would be misread.
func Open(ctx context.Context, path string, currency money.Currency) (*DB, error) {
	dir := filepath.Dir(path)
	if st, err := os.Stat(dir); err != nil || !st.IsDir() {
		return nil, fmt.Errorf("store %s: folder %s does not exist; create it or change `store` in the config", path, dir)
	}
	// Create the file ourselves so that it never exists with wider
	// permissions; SQLite gives its -wal and -shm files the same mode.
	f, err := os.OpenFile(path, os.O_RDWR|os.O_CREATE, 0o600)
	if err != nil {
		return nil, fmt.Errorf("store %s: %w", path, err)
	}
	f.Close()

	q := url.Values{}
	q.Set("_journal_mode", "WAL")
	q.Set("_foreign_keys", "on")
	q.Set("_busy_timeout", "10000")
	q.Set("_synchronous", "NORMAL")
	// 64 MiB of page cache (a negative size is in KiB) keeps the indexes of a
	// large ledger in memory while a file loads; memory stays bounded.
	q.Set("_cache_size", "-65536")
	q.Set("_txlock", "immediate")
	// In a file: URI SQLite ends the path at '?' or '#' and decodes '%XX';
	// unescaped, such a name would open another file, with default
	// permissions, beside the owner-only one created above.
	uriPath := strings.NewReplacer("%", "%25", "?", "%3F", "#", "%23").Replace(path)
	sqldb, err := sql.Open("sqlite3", "file:"+uriPath+"?"+q.Encode())
	if err != nil {
		return nil, fmt.Errorf("store %s: %w", path, err)
	}
	// A few connections, kept open: every new SQLite connection parses the
	// schema and grows its own page cache, so a daemon reuses them rather
	// than opening and closing them as load comes and goes.
	sqldb.SetMaxOpenConns(maxConns)
	sqldb.SetMaxIdleConns(maxConns)
	db := &DB{db: sqldb, path: path, Now: time.Now, Currency: currency}
	if err := db.migrate(ctx); err != nil {
		sqldb.Close()
		return nil, fmt.Errorf("store %s: %w", path, err)
	}
	if err := db.checkCurrency(ctx); err != nil {
		sqldb.Close()
		return nil, fmt.Errorf("store %s: %w", path, err)
	}
	return db, nil
}

// Close closes the store.
func (db *DB) Close() error { return db.db.Close() }

// Path is the file the store lives in.
func (db *DB) Path() string { return db.path }

// SQL exposes the handle for read-only inspection in tests and tools.
func (db *DB) SQL() *sql.DB { return db.db }

// ReleaseMemory gives back the page cache of the store's idle connections
// (SQLite's PRAGMA shrink_memory on each of them). A daemon calls it between
// cycles, so that what it holds while it waits does not grow with the
// store; the next cycle reads the pages again (from the operating system's
// file cache, usually).
func (db *DB) ReleaseMemory(ctx context.Context) error {
	idle := db.db.Stats().Idle
	conns := make([]*sql.Conn, 0, idle)
	defer func() {
		for _, c := range conns {
			c.Close()
		}
	}()
	// Holding each connection while the next is taken makes every idle one
	// come out of the pool once.
	for range idle {
		c, err := db.db.Conn(ctx)
		if err != nil {
			return err
		}
		conns = append(conns, c)
		if _, err := c.ExecContext(ctx, `PRAGMA shrink_memory`); err != nil {
			return err
		}
	}
	return nil
}

func (db *DB) now() string { return db.Now().UTC().Format(time.RFC3339) }

func (db *DB) checkCurrency(ctx context.Context) error {
	var code string
	err := db.db.QueryRowContext(ctx, `SELECT value FROM store_meta WHERE key = 'currency'`).Scan(&code)
	if errors.Is(err, sql.ErrNoRows) {
		_, err = db.db.ExecContext(ctx, `INSERT INTO store_meta (key, value) VALUES ('currency', ?), ('minor_per_unit', ?)`,
			db.Currency.Code, strconv.FormatInt(pow10(db.Currency.Exponent), 10))
		return err
	}
	if err != nil {
		return err
	}
	if code != db.Currency.Code {
		return fmt.Errorf("it holds amounts in %s but the config says currency %s; use a new store for another currency", code, db.Currency.Code)
	}
	return nil
}

func pow10(n int32) int64 {
	p := int64(1)
	for range n {
		p *= 10
	}
	return p
}

// inTx runs fn in one transaction and commits it, or rolls back on error.
func (db *DB) inTx(ctx context.Context, fn func(*sql.Tx) error) error {
	if db.dry != nil {
		// Inside a dry run a savepoint stands in for the transaction.
		if _, err := db.dry.ExecContext(ctx, "SAVEPOINT batch"); err != nil {
			return err
		}
		if err := fn(db.dry); err != nil {
			db.dry.ExecContext(context.WithoutCancel(ctx), "ROLLBACK TO batch")
			db.dry.ExecContext(context.WithoutCancel(ctx), "RELEASE batch")
			return err
		}
		_, err := db.dry.ExecContext(ctx, "RELEASE batch")
		return err
	}
	tx, err := db.db.BeginTx(ctx, nil)
	if err != nil {
		return err
	}
	if err := fn(tx); err != nil {
		tx.Rollback()
		return err
	}
	return tx.Commit()
}

// Exists reports whether a store file is at path.
func Exists(path string) bool {
	_, err := os.Stat(path)
	return !errors.Is(err, fs.ErrNotExist)
}
