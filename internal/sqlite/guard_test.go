package sqlite

import (
	"context"
	"database/sql"
	"errors"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"syscall"
	"testing"
)

// An existing store with a looser mode (copied in, or created by hand) is
// made owner-only when it is opened to write, with its -wal and -shm.
func TestOpenTightensLooseMode(t *testing.T) {
	path := filepath.Join(t.TempDir(), "costdrift.db")
	db, err := Open(context.Background(), path, eur)
	if err != nil {
		t.Fatal(err)
	}
	mustExec(t, db, `INSERT INTO store_meta (key, value) VALUES ('probe', 'x')`)
	db.Close()
	for _, p := range []string{path, path + "-wal", path + "-shm"} {
		os.WriteFile(p, nil, 0o666) // creates the side files if the close removed them
		if err := os.Chmod(p, 0o666); err != nil {
			t.Fatal(err)
		}
	}
	db, err = Open(context.Background(), path, eur)
	if err != nil {
		t.Fatal(err)
	}
	defer db.Close()
	for _, p := range []string{path, path + "-wal", path + "-shm"} {
		st, err := os.Stat(p)
		if err != nil {
			t.Fatal(err)
		}
		if st.Mode().Perm() != 0o600 {
			t.Errorf("%s mode %v after opening to write, want -rw-------", filepath.Base(p), st.Mode().Perm())
		}
	}
}

// A database of something else named as the store is refused, untouched:
// not adopted, and no table of ours left in it.
func TestOpenRefusesForeignDatabase(t *testing.T) {
	path := filepath.Join(t.TempDir(), "crm.db")
	other, err := sql.Open("sqlite3", "file:"+path)
	if err != nil {
		t.Fatal(err)
	}
	if _, err := other.Exec(`CREATE TABLE customers (id INTEGER PRIMARY KEY, name TEXT); INSERT INTO customers VALUES (1, 'x')`); err != nil {
		t.Fatal(err)
	}
	other.Close()
	before, _ := os.ReadFile(path)
	for _, open := range []func(context.Context, string, any) error{
		func(ctx context.Context, p string, _ any) error {
			db, err := Open(ctx, p, eur)
			closeIf(db)
			return err
		},
		func(ctx context.Context, p string, _ any) error {
			db, err := OpenToRead(ctx, p, eur)
			closeIf(db)
			return err
		},
	} {
		err := open(context.Background(), path, nil)
		if err == nil || !strings.Contains(err.Error(), "is not a costdrift store") || !strings.Contains(err.Error(), "customers") {
			t.Errorf("opening a foreign database: %v", err)
		}
	}
	after, _ := os.ReadFile(path)
	if string(before) != string(after) {
		t.Errorf("the foreign database changed when it was refused")
	}
	// A file that is not SQLite at all says so.
	junk := filepath.Join(t.TempDir(), "notes.db")
	os.WriteFile(junk, []byte(strings.Repeat("not a database\n", 400)), 0o600)
	if _, err := Open(context.Background(), junk, eur); err == nil || !strings.Contains(err.Error(), "is not a costdrift store") {
		t.Errorf("opening a text file as the store: %v", err)
	}
}

func closeIf(db *DB) {
	if db != nil {
		db.Close()
	}
}

// A store that cannot be written opens for reading: reports work from a
// copy on a read-only medium; a write is refused with a clear message.
// Root writes any file whatever its mode, so as root the check runs again
// in a child process as the unprivileged user nobody.
func TestOpenToReadReadOnlyStore(t *testing.T) {
	if path := os.Getenv("COSTDRIFT_TEST_READ_ONLY_STORE"); path != "" {
		checkReadOnlyStore(t, path)
		return
	}
	dir := t.TempDir()
	path := filepath.Join(dir, "costdrift.db")
	db, err := Open(context.Background(), path, eur)
	if err != nil {
		t.Fatal(err)
	}
	mustExec(t, db, `INSERT INTO store_meta (key, value) VALUES ('probe', 'x')`)
	db.Close()
	if err := os.Chmod(path, 0o444); err != nil {
		t.Fatal(err)
	}
	if os.Geteuid() != 0 {
		if err := os.Chmod(dir, 0o555); err != nil {
			t.Fatal(err)
		}
		defer os.Chmod(dir, 0o755)
		checkReadOnlyStore(t, path)
		return
	}
	// The child needs to reach the store and run a copy of this binary.
	bin := filepath.Join(dir, "sqlite.test")
	self, err := os.ReadFile(os.Args[0])
	if err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(bin, self, 0o755); err != nil {
		t.Fatal(err)
	}
	for _, d := range []string{dir, filepath.Dir(dir)} {
		if err := os.Chmod(d, 0o755); err != nil {
			t.Fatal(err)
		}
	}
	cmd := exec.Command(bin, "-test.run", "^TestOpenToReadReadOnlyStore$", "-test.v")
	cmd.Env = append(os.Environ(), "COSTDRIFT_TEST_READ_ONLY_STORE="+path)
	cmd.SysProcAttr = &syscall.SysProcAttr{Credential: &syscall.Credential{Uid: 65534, Gid: 65534}}
	out, err := cmd.CombinedOutput()
	if err != nil || !strings.Contains(string(out), "--- PASS: TestOpenToReadReadOnlyStore") {
		t.Errorf("as nobody: %v\n%s", err, out)
	}
}

func checkReadOnlyStore(t *testing.T, path string) {
	ro, err := OpenToRead(context.Background(), path, eur)
	if err != nil {
		t.Fatalf("OpenToRead of a read-only store: %v", err)
	}
	defer ro.Close()
	if !ro.ReadOnly() {
		t.Errorf("store not marked read-only")
	}
	var v string
	if err := ro.SQL().QueryRow(`SELECT value FROM store_meta WHERE key = 'probe'`).Scan(&v); err != nil || v != "x" {
		t.Errorf("reading a read-only store: %q, %v", v, err)
	}
	if err := ro.CheckCalendar(context.Background(), "month"); err != nil {
		t.Errorf("CheckCalendar on a read-only store without a calendar yet: %v", err)
	}
	if _, err := ro.SQL().Exec(`INSERT INTO store_meta (key, value) VALUES ('w', 'x')`); err == nil {
		t.Errorf("a write into a read-only store succeeded")
	}
	if _, err := Open(context.Background(), path, eur); err == nil || !strings.Contains(err.Error(), "cannot be written") {
		t.Errorf("opening a read-only store to write: %v", err)
	}
}

// A corrupt page is found when the store is opened to write, and nothing
// is written; the message names the check and what to do.
func TestOpenRefusesCorruptStore(t *testing.T) {
	path := filepath.Join(t.TempDir(), "costdrift.db")
	db, err := Open(context.Background(), path, eur)
	if err != nil {
		t.Fatal(err)
	}
	mustExec(t, db, `INSERT INTO sync_runs (id, source, role, kind, started_at, status) VALUES (1, 'gl', 'ledger', 'csv', '2026-01-05', 'ok')`)
	for i := range 2000 {
		mustExec(t, db, `INSERT INTO gl_lines (source, entry_id, line, posted_on, period, account, amount_minor, sync_run_id)
			VALUES ('gl', ?, 1, '2026-01-05', '2026-01', '6100', 100, 1)`, i)
	}
	var root, pageSize int64
	db.SQL().QueryRow(`SELECT rootpage FROM sqlite_master WHERE type = 'index' AND tbl_name = 'gl_lines' ORDER BY name LIMIT 1`).Scan(&root)
	db.SQL().QueryRow(`PRAGMA page_size`).Scan(&pageSize)
	db.Close()
	f, err := os.OpenFile(path, os.O_RDWR, 0)
	if err != nil {
		t.Fatal(err)
	}
	// Scribble over the index's root page after its header.
	if _, err := f.WriteAt([]byte(strings.Repeat("\xff\x00\x13", 300)), (root-1)*pageSize+12); err != nil {
		t.Fatal(err)
	}
	f.Close()
	before, _ := os.ReadFile(path)
	_, err = Open(context.Background(), path, eur)
	if !errors.Is(err, ErrCorrupt) || !strings.Contains(err.Error(), "PRAGMA quick_check") {
		t.Fatalf("opening a corrupt store to write: %v", err)
	}
	after, _ := os.ReadFile(path)
	if string(before) != string(after) {
		t.Errorf("the corrupt store changed when it was refused")
	}
}
