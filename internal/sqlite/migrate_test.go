package sqlite

import (
	"context"
	"database/sql"
	"path/filepath"
	"strings"
	"testing"
	"testing/fstest"
	"time"

	"github.com/costdrift/costdrift/migrations"
)

// bareDB opens an SQLite file with none of the store's migrations, to
// test the migration runner on migrations of the test's own.
func bareDB(t *testing.T) *DB {
	t.Helper()
	sqldb, err := sql.Open("sqlite3", "file:"+filepath.Join(t.TempDir(), "bare.db")+"?_foreign_keys=on&_txlock=immediate")
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { sqldb.Close() })
	return &DB{db: sqldb, Now: func() time.Time { return time.Date(2025, 6, 1, 6, 0, 0, 0, time.UTC) }, background: &background{}}
}

// storeBefore opens a bare store migrated up to, not including, schema
// version, for tests of what an upgrade does to rows stored before it; it
// also returns every embedded migration, to finish the upgrade with.
func storeBefore(t *testing.T, version int) (*DB, []migration) {
	t.Helper()
	ms, err := loadMigrations(migrations.FS)
	if err != nil {
		t.Fatal(err)
	}
	var before []migration
	for _, m := range ms {
		if m.version < version {
			before = append(before, m)
		}
	}
	db := bareDB(t)
	if err := db.applyMigrations(context.Background(), before); err != nil {
		t.Fatal(err)
	}
	return db, ms
}

// syncedFile records one sync run and one ledger file, 7, of source gl, as
// a store of any schema holds them.
func syncedFile(t *testing.T, db *DB) {
	t.Helper()
	mustExec(t, db, `INSERT INTO sync_runs (id, source, role, kind, started_at, status) VALUES (1, 'gl', 'ledger', 'csv', '2025-06-01T06:00:00Z', 'ok')`)
	mustExec(t, db, `INSERT INTO source_files (id, source, path, size, sha256, rows, loaded_at, sync_run_id)
		VALUES (7, 'gl', '/books/gl.csv', 10, 'abc', 2, '2025-06-01T06:00:00Z', 1)`)
}

func TestEmbeddedMigrationsRecordedOnce(t *testing.T) {
	ms, err := loadMigrations(migrations.FS)
	if err != nil {
		t.Fatal(err)
	}
	if len(ms) == 0 {
		t.Fatal("no embedded migrations")
	}
	var want strings.Builder
	for _, m := range ms {
		want.WriteString(m.name + "\n")
	}
	path := filepath.Join(t.TempDir(), "costdrift.db")
	db, _ := mustOpenAt(t, path, eur)
	recorded := func(db *DB) string {
		return dump(t, db, `SELECT version, name, applied_at FROM schema_migrations ORDER BY version`)
	}
	names := dump(t, db, `SELECT name FROM schema_migrations ORDER BY version`)
	if names != quoteLines(want.String()) {
		t.Errorf("schema_migrations names:\n%s\nwant\n%s", names, want.String())
	}
	if got := count(t, db, "schema_migrations"); got != len(ms) {
		t.Errorf("%d rows in schema_migrations, want %d", got, len(ms))
	}
	if SchemaVersion() != ms[len(ms)-1].version {
		t.Errorf("SchemaVersion %d, want %d", SchemaVersion(), ms[len(ms)-1].version)
	}
	before := recorded(db)

	// A second Open applies nothing: the records, and their times, stay.
	second, _ := mustOpenAt(t, path, eur)
	if after := recorded(second); after != before {
		t.Errorf("second Open changed schema_migrations:\n%s\nwas\n%s", after, before)
	}
}

// quoteLines quotes each line the way dump renders a text column.
func quoteLines(s string) string {
	var b strings.Builder
	for _, l := range strings.Split(strings.TrimSuffix(s, "\n"), "\n") {
		b.WriteString(`"` + l + `"` + "\n")
	}
	return b.String()
}

func TestApplyMigrationsInNumericOrder(t *testing.T) {
	// Each migration depends on the one before it, and their names sort
	// differently as text ("10_" < "2_" < "9_"): only numeric order works.
	fsys := fstest.MapFS{
		"10_rate.sql":  {Data: []byte(`ALTER TABLE driver ADD COLUMN rate REAL;`)},
		"1_driver.sql": {Data: []byte(`CREATE TABLE driver (name TEXT PRIMARY KEY);`)},
		"2_unit.sql":   {Data: []byte(`ALTER TABLE driver ADD COLUMN unit TEXT; INSERT INTO driver (name, unit) VALUES ('machine_hours', 'h');`)},
		"9_index.sql":  {Data: []byte(`CREATE INDEX driver_unit ON driver (unit);`)},
		"README.md":    {Data: []byte("not a migration")},
	}
	ms, err := loadMigrations(fsys)
	if err != nil {
		t.Fatal(err)
	}
	var order []string
	for _, m := range ms {
		order = append(order, m.name)
	}
	if got, want := strings.Join(order, " "), "1_driver.sql 2_unit.sql 9_index.sql 10_rate.sql"; got != want {
		t.Errorf("order %s, want %s", got, want)
	}
	db := bareDB(t)
	ctx := context.Background()
	if err := db.applyMigrations(ctx, ms); err != nil {
		t.Fatal(err)
	}
	got := dump(t, db, `SELECT version, name, applied_at FROM schema_migrations ORDER BY version`)
	want := "int64:1|\"1_driver.sql\"|\"2025-06-01T06:00:00Z\"\n" +
		"int64:2|\"2_unit.sql\"|\"2025-06-01T06:00:00Z\"\n" +
		"int64:9|\"9_index.sql\"|\"2025-06-01T06:00:00Z\"\n" +
		"int64:10|\"10_rate.sql\"|\"2025-06-01T06:00:00Z\"\n"
	if got != want {
		t.Errorf("schema_migrations:\n%s\nwant\n%s", got, want)
	}
	if got := dump(t, db, `SELECT name, unit, rate FROM driver`); got != "\"machine_hours\"|\"h\"|NULL\n" {
		t.Errorf("driver table: %s", got)
	}
	// Applying the same set again runs nothing (2_unit.sql would add its row twice).
	if err := db.applyMigrations(ctx, ms); err != nil {
		t.Fatal(err)
	}
	if n := count(t, db, "driver"); n != 1 {
		t.Errorf("%d driver rows after a second run, want 1", n)
	}
}

func TestApplyMigrationsFailureRollsBackOnlyItself(t *testing.T) {
	good := fstest.MapFS{
		"0001_a.sql": {Data: []byte(`CREATE TABLE a (x INTEGER);`)},
	}
	broken := fstest.MapFS{
		"0001_a.sql": good["0001_a.sql"],
		// The first statement succeeds, the second fails: the table b must
		// not survive, nor a record of version 2.
		"0002_b.sql": {Data: []byte(`CREATE TABLE b (x INTEGER); INSERT INTO no_such_table VALUES (1);`)},
	}
	db := bareDB(t)
	ctx := context.Background()
	ms, err := loadMigrations(broken)
	if err != nil {
		t.Fatal(err)
	}
	err = db.applyMigrations(ctx, ms)
	if err == nil || !strings.Contains(err.Error(), "migration 0002_b.sql: no such table: no_such_table") {
		t.Fatalf("error %v, want one naming 0002_b.sql and the missing table", err)
	}
	if got := dump(t, db, `SELECT version, name FROM schema_migrations`); got != "int64:1|\"0001_a.sql\"\n" {
		t.Errorf("schema_migrations after the failure: %q, want version 1 only", got)
	}
	if got := dump(t, db, `SELECT name FROM sqlite_master WHERE type = 'table' AND name IN ('a', 'b') ORDER BY name`); got != "\"a\"\n" {
		t.Errorf("tables after the failure: %q, want a only", got)
	}

	// Fixed, the second migration applies alone on the next run.
	fixed := fstest.MapFS{
		"0001_a.sql": good["0001_a.sql"],
		"0002_b.sql": {Data: []byte(`CREATE TABLE b (x INTEGER); INSERT INTO a VALUES (1);`)},
	}
	ms, err = loadMigrations(fixed)
	if err != nil {
		t.Fatal(err)
	}
	if err := db.applyMigrations(ctx, ms); err != nil {
		t.Fatal(err)
	}
	if got := dump(t, db, `SELECT version FROM schema_migrations ORDER BY version`); got != "int64:1\nint64:2\n" {
		t.Errorf("schema_migrations: %q, want versions 1 and 2", got)
	}
}

func TestApplyMigrationsRefusesNewerStore(t *testing.T) {
	db := bareDB(t)
	ctx := context.Background()
	ms, err := loadMigrations(fstest.MapFS{"1_a.sql": {Data: []byte(`CREATE TABLE a (x);`)}, "3_c.sql": {Data: []byte(`CREATE TABLE c (x);`)}})
	if err != nil {
		t.Fatal(err)
	}
	if err := db.applyMigrations(ctx, ms); err != nil {
		t.Fatal(err)
	}
	err = db.applyMigrations(ctx, ms[:1])
	if err == nil || !strings.Contains(err.Error(), "written by a newer costdrift (schema 3; this build knows up to 1)") {
		t.Errorf("error %v, want the newer-version refusal", err)
	}
}

func TestLoadMigrationsErrors(t *testing.T) {
	sql := &fstest.MapFile{Data: []byte(`SELECT 1;`)}
	tests := []struct {
		name string
		fsys fstest.MapFS
		want string
	}{
		{"duplicate number", fstest.MapFS{"0001_a.sql": sql, "0002_b.sql": sql, "2_c.sql": sql},
			"migrations 0002_b.sql and 2_c.sql share a number"},
		{"no number", fstest.MapFS{"0001_a.sql": sql, "initial.sql": sql},
			"migration initial.sql: name must start with a number and an underscore"},
		{"words before the underscore", fstest.MapFS{"first_a.sql": sql},
			"migration first_a.sql: name must start with a number and an underscore"},
		{"number zero", fstest.MapFS{"0000_a.sql": sql},
			"migration 0000_a.sql: name must start with a number and an underscore"},
		{"negative number", fstest.MapFS{"-1_a.sql": sql},
			"migration -1_a.sql: name must start with a number and an underscore"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			ms, err := loadMigrations(tc.fsys)
			if err == nil || err.Error() != tc.want {
				t.Errorf("loadMigrations = %d migrations, error %v; want error %q", len(ms), err, tc.want)
			}
		})
	}
	ms, err := loadMigrations(fstest.MapFS{})
	if err != nil || len(ms) != 0 {
		t.Errorf("empty folder: %d migrations, error %v", len(ms), err)
	}
}
