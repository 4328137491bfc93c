package sqlite

import (
	"context"
	"database/sql"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"net/url"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"sync"
	"syscall"
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
	// readOnly is set when the store was opened read-only.
	readOnly bool
	// checked is when the store last passed its quick check, as far as
	// this writer knows (zero when it does not): the stamp it leaves at
	// Close (checkstamp.go). checkedHere: the check ran at this open.
	checked     time.Time
	checkedHere bool
	// dry, when set, is the one transaction a dry run works in; it is
	// rolled back at the end, so nothing is written.
	dry *sql.Tx
	// background is the work a writer left running past its return (an
	// analysis's checkpoint), which Close waits for; shared with a dry
	// run's view.
	background *background
}

// background counts the work left running past a writer's return, and
// holds the store's file as the program itself opened it, to flush it
// to disk after a checkpoint (flushStore).
type background struct {
	sync.WaitGroup
	mu   sync.Mutex
	file *os.File
}

// flushStore flushes the store's file to disk: what a checkpoint copied
// into it, which SQLite flushes only once the checkpoint has copied the
// whole log. While the analysis's checkpoint runs, the alerts are raised
// and written to the log, so the checkpoint cannot be whole, and the flush
// of the analysis's 40 MB would fall to the next checkpoint, the one a
// delivery's record makes, in the foreground. The file stays open until
// Close: closing a descriptor of a file drops every POSIX lock the process
// holds on it, SQLite's included, so it is closed only after SQLite's
// connections are.
func (bg *background) flushStore(path string) error {
	bg.mu.Lock()
	defer bg.mu.Unlock()
	if bg.file == nil {
		f, err := os.OpenFile(path, os.O_RDWR, 0)
		if err != nil {
			return err
		}
		bg.file = f
	}
	return syncFile(bg.file)
}

// syncFile flushes f to disk; tests watch it.
var syncFile = (*os.File).Sync

// close closes the file flushStore opened, once SQLite's connections are
// closed.
func (bg *background) close() error {
	bg.mu.Lock()
	defer bg.mu.Unlock()
	if bg.file == nil {
		return nil
	}
	err := bg.file.Close()
	bg.file = nil
	return err
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
		if db.readOnly {
			return nil // nothing was synced into it yet
		}
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

// Open opens the store at path to write, creating it owner-only (mode
// 0600) when it does not exist, and applies pending migrations. An existing
// store is made owner-only too, with its -wal and -shm files; a file that
// is not a costdrift store, or one that fails SQLite's quick check, is
// refused untouched. The store remembers its currency: opening it with
// another one is refused, since its minor units would be misread.
func Open(ctx context.Context, path string, currency money.Currency) (*DB, error) {
	return open(ctx, path, currency, true)
}

// OpenToRead opens an existing store for a command that reads. A store this
// user cannot write (a copy on a read-only medium, a file owned by the
// daemon's account) opens read-only, as long as it needs no migration.
func OpenToRead(ctx context.Context, path string, currency money.Currency) (*DB, error) {
	return open(ctx, path, currency, false)
}

func open(ctx context.Context, path string, currency money.Currency, toWrite bool) (*DB, error) {
	dir := filepath.Dir(path)
	if st, err := os.Stat(dir); err != nil || !st.IsDir() {
		return nil, fmt.Errorf("store %s: folder %s does not exist; create it or change `store` in the config", path, dir)
	}
	// Whether the store needs its quick check is decided on the file as
	// it is before any connection opens it, which creates a -wal file.
	var checked time.Time
	notDue := false
	if toWrite {
		checked, notDue = checkNotDue(path, time.Now())
	}
	readOnly, err := prepareFile(path, toWrite)
	if err != nil {
		return nil, err
	}

	q := url.Values{}
	q.Set("_foreign_keys", "on")
	q.Set("_busy_timeout", "10000")
	// The page cache (cacheBytes) is given in pages of the store's size: a
	// size in KiB is turned into pages at the default page size when the
	// connection opens, before SQLite has read the file's own, and a store
	// of larger pages would get a cache as many times larger.
	q.Set("_cache_size", strconv.Itoa(cacheBytes/storePageSize(path)))
	if readOnly {
		q.Set("mode", "ro")
		// No writer has the store open (the last one to close removes the
		// -wal and -shm files), and a reader that may not create them can
		// only read the file as it is.
		if !Exists(path+"-shm") && !Exists(path+"-wal") {
			q.Set("immutable", "1")
		}
	} else {
		q.Set("_synchronous", "NORMAL")
		q.Set("_txlock", "immediate")
	}
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
	db := &DB{db: sqldb, path: path, Now: time.Now, Currency: currency, readOnly: readOnly, background: &background{}}
	fail := func(err error) (*DB, error) {
		sqldb.Close()
		return nil, fmt.Errorf("store %s: %w", path, err)
	}
	if err := db.checkOurs(ctx); err != nil {
		return fail(err)
	}
	if toWrite {
		// The stamp goes now: from here on this writer may change the
		// file, and only a clean Close describes it again.
		os.Remove(stampPath(path))
		if !notDue {
			if err := db.Check(ctx); err != nil {
				return fail(err)
			}
			db.checkedHere = true
		} else {
			db.checked = checked
		}
	}
	if !readOnly {
		if err := setFileFormat(ctx, sqldb); err != nil {
			return fail(err)
		}
	}
	if err := db.migrate(ctx); err != nil {
		return fail(err)
	}
	if err := db.checkCurrency(ctx); err != nil {
		return fail(err)
	}
	return db, nil
}

// pageSize is the page size of a new store, in bytes. SQLite's default is
// 4096; a large ledger loads with a quarter of the writes and reads of the
// file at 16384, and its b-trees are a level shallower.
const pageSize = 16384

// cacheBytes is the page cache of each connection. A page SQLite has to
// read again comes from the operating system's file cache, a copy away, so
// a larger cache mostly holds a second copy of what that cache holds, and
// costs the memory and the page faults of filling it: with 64 MiB, the
// analysis of 10,000 objects peaked at 243 MiB and that of 100,000 at
// 443 MiB; with 8 MiB at 154 and 310 MiB, no slower, nor was the sync of a
// million ledger lines in random key order (110 MiB instead of 171). Side
// by side in one run: README, Developing.
const cacheBytes = 8 << 20

// storePageSize is the page size of the store at path as its header gives
// it, or pageSize for a new (empty) store, which setFileFormat creates
// with it. A file that is not an SQLite database (refused later) counts
// as SQLite's default.
func storePageSize(path string) int {
	head := make([]byte, 18)
	f, err := os.Open(path)
	if err != nil {
		return pageSize
	}
	defer f.Close()
	n, _ := io.ReadFull(f, head)
	switch {
	case n == 0:
		return pageSize
	case n < len(head) || string(head[:len(sqliteHeader)]) != sqliteHeader:
		return 4096
	}
	// Bytes 16 and 17, big-endian; 1 stands for 65536 (sqlite.org,
	// "Database File Format", section 1.3.2).
	size := int(head[16])<<8 | int(head[17])
	if size == 1 {
		size = 65536
	}
	if size < 512 || size&(size-1) != 0 {
		return 4096
	}
	return size
}

// setFileFormat gives a new store its page size and puts a store in WAL
// mode. Both are written into the file and stay for every later
// connection; it is done once the file is known to be ours. The page size
// of an existing store stays as it is: changing it means rewriting the
// whole file.
func setFileFormat(ctx context.Context, sqldb *sql.DB) error {
	// One connection: the page size applies to the file the connection
	// that set it creates, and switching to WAL creates it.
	c, err := sqldb.Conn(ctx)
	if err != nil {
		return err
	}
	defer c.Close()
	if _, err := c.ExecContext(ctx, fmt.Sprintf(`PRAGMA page_size = %d`, pageSize)); err != nil {
		return err
	}
	_, err = c.ExecContext(ctx, `PRAGMA journal_mode = WAL`)
	return err
}

// prepareFile creates the store file owner-only, or makes an existing one
// owner-only when it is opened to write. It reports whether the store can
// only be read: an existing file this user may not write, opened to read.
func prepareFile(path string, toWrite bool) (readOnly bool, err error) {
	// Create the file ourselves so that it never exists with wider
	// permissions; SQLite gives its -wal and -shm files the same mode.
	f, err := os.OpenFile(path, os.O_RDWR|os.O_CREATE, 0o600)
	if err != nil {
		cannotWrite := Exists(path) && (errors.Is(err, fs.ErrPermission) || errors.Is(err, syscall.EROFS))
		switch {
		case cannotWrite && !toWrite:
			return true, nil
		case cannotWrite:
			return false, fmt.Errorf("store %s cannot be written by this user (%v): run the command as the store's owner, or copy the store to change it", path, unwrapPathError(err))
		}
		return false, fmt.Errorf("store %s: %w", path, err)
	}
	defer f.Close()
	if !toWrite {
		return false, nil
	}
	// Ledger data can be personal (payroll by cost centre): a store that
	// was copied in with a looser mode is made owner-only before anything
	// is written into it, and so are its -wal and -shm files.
	for _, p := range []string{path, path + "-wal", path + "-shm"} {
		st, err := os.Stat(p)
		if errors.Is(err, fs.ErrNotExist) && p != path {
			continue
		}
		if err != nil {
			return false, fmt.Errorf("store %s: %w", path, err)
		}
		if perm := st.Mode().Perm(); perm&0o077 != 0 {
			if err := os.Chmod(p, perm&0o700|0o600); err != nil {
				return false, fmt.Errorf("store %s has mode %04o, readable by others, and cannot be made owner-only (%v): run chmod 600 %s as its owner", p, perm, unwrapPathError(err), p)
			}
		}
	}
	return false, nil
}

func unwrapPathError(err error) error {
	var pe *fs.PathError
	if errors.As(err, &pe) {
		return pe.Err
	}
	return err
}

// sqliteHeader starts every SQLite database file.
const sqliteHeader = "SQLite format 3\x00"

// checkOurs refuses a file that is not a costdrift store: another
// program's SQLite database, or no database at all. An empty file is a
// new store. Nothing is written before this check, so a refused file is
// left as it was.
func (db *DB) checkOurs(ctx context.Context) error {
	f, err := os.Open(db.path)
	if err != nil {
		return err
	}
	head := make([]byte, len(sqliteHeader))
	n, _ := io.ReadFull(f, head)
	f.Close()
	switch {
	case n == 0:
		return nil
	case string(head[:n]) != sqliteHeader:
		return errors.New("it is not a costdrift store: the file is not an SQLite database; name a new file in `store` in the config")
	}
	rows, err := db.db.QueryContext(ctx, `SELECT name FROM sqlite_master WHERE type = 'table' AND name NOT LIKE 'sqlite_%' ORDER BY name`)
	if err != nil {
		return fmt.Errorf("it cannot be read as an SQLite database: %w", err)
	}
	defer rows.Close()
	var tables []string
	for rows.Next() {
		var name string
		if err := rows.Scan(&name); err != nil {
			return err
		}
		if name == "schema_migrations" {
			return nil
		}
		tables = append(tables, name)
	}
	if err := rows.Err(); err != nil {
		return err
	}
	if len(tables) == 0 {
		return nil
	}
	if len(tables) > 5 {
		tables = append(tables[:5], "…")
	}
	return fmt.Errorf("it is not a costdrift store: it is an SQLite database of something else (tables %s); costdrift will not write into it; name a new file in `store` in the config",
		strings.Join(tables, ", "))
}

// ErrCorrupt is returned when the store fails SQLite's quick check.
var ErrCorrupt = errors.New("the store is damaged")

// Check runs SQLite's quick check (PRAGMA quick_check: every page and
// b-tree well formed, every record readable; index contents are not
// compared with their tables) and returns ErrCorrupt, with what it found,
// when the store is damaged. Writing into a damaged store can spread the
// damage, so the commands that write run it first, unless the file is
// as costdrift left it after a clean check less than CheckEvery ago
// (checkstamp.go); the daemon runs it before every cycle.
func (db *DB) Check(ctx context.Context) error {
	rows, err := db.db.QueryContext(ctx, `PRAGMA quick_check(5)`)
	if ctx.Err() != nil {
		// Stopped before it ended: it found nothing, and says so.
		return fmt.Errorf("quick check of the store stopped: %w", ctx.Err())
	}
	if err != nil {
		return fmt.Errorf("%w: PRAGMA quick_check failed: %v; restore the store from a backup", ErrCorrupt, err)
	}
	defer rows.Close()
	var found []string
	for rows.Next() {
		var line string
		if err := rows.Scan(&line); err != nil {
			return err
		}
		if line != "ok" {
			found = append(found, line)
		}
	}
	if err := rows.Err(); err != nil {
		if ctx.Err() != nil {
			return fmt.Errorf("quick check of the store stopped: %w", ctx.Err())
		}
		return fmt.Errorf("%w: PRAGMA quick_check failed: %v; restore the store from a backup", ErrCorrupt, err)
	}
	if len(found) > 0 {
		return fmt.Errorf("%w: PRAGMA quick_check found %s; nothing was written: restore the store from a backup (or recover it with the sqlite3 shell's .recover)",
			ErrCorrupt, strings.Join(found, "; "))
	}
	db.checked = time.Now()
	return nil
}

// ReadOnly reports whether the store was opened read-only.
func (db *DB) ReadOnly() bool { return db.readOnly }

// Close closes the store. A writer that closes it cleanly leaves a stamp
// of the file beside it, so that the next writer need not check it again
// within CheckEvery (checkstamp.go).
func (db *DB) Close() error {
	db.background.Wait()
	err := db.db.Close()
	if cerr := db.background.close(); err == nil {
		err = cerr
	}
	if err == nil && !db.readOnly && !db.checked.IsZero() {
		writeStamp(db.path, db.checked)
	}
	return err
}

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
	if errors.Is(err, sql.ErrNoRows) && db.readOnly {
		return nil
	}
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
