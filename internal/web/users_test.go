package web

import (
	"errors"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"golang.org/x/crypto/bcrypt"
)

// The users file holds bcrypt hashes, never the passwords, owner-only; a
// password verifies against its own hash only.
func TestUsersFile(t *testing.T) {
	dir := t.TempDir()
	path := filepath.Join(dir, "users")
	if err := AddUser(path, "ana.accountant", "correct horse battery"); err != nil {
		t.Fatal(err)
	}
	if err := AddUser(path, "ole.controller", "staple gun 2026"); err != nil {
		t.Fatal(err)
	}
	fi, err := os.Stat(path)
	if err != nil {
		t.Fatal(err)
	}
	if fi.Mode().Perm() != 0o600 {
		t.Errorf("users file mode %v, want 0600", fi.Mode().Perm())
	}
	text, _ := os.ReadFile(path)
	if strings.Contains(string(text), "correct horse") || strings.Contains(string(text), "staple gun") {
		t.Fatalf("a password is in the file:\n%s", text)
	}
	u, err := ReadUsers(path)
	if err != nil {
		t.Fatal(err)
	}
	if got := strings.Join(u.Names(), ","); got != "ana.accountant,ole.controller" {
		t.Errorf("names %q", got)
	}
	// A bcrypt hash as bcrypt itself reads it, at the default cost 10
	// (the package's DefaultCost).
	if cost, err := bcrypt.Cost(u["ana.accountant"]); err != nil || cost != 10 {
		t.Errorf("hash cost %d, %v; want 10", cost, err)
	}
	if !strings.HasPrefix(string(u["ana.accountant"]), "$2a$10$") || len(u["ana.accountant"]) != 60 {
		t.Errorf("not a bcrypt hash: %q", u["ana.accountant"])
	}
	for _, tc := range []struct {
		name, password string
		ok             bool
	}{
		{"ana.accountant", "correct horse battery", true},
		{"ana.accountant", "correct horse batter", false},
		{"ana.accountant", "staple gun 2026", false}, // another user's password
		{"ole.controller", "staple gun 2026", true},
		{"nobody", "correct horse battery", false},
		{"ana.accountant", "", false},
	} {
		if got := u.Verify(tc.name, tc.password); got != tc.ok {
			t.Errorf("Verify(%q, %q) = %v, want %v", tc.name, tc.password, got, tc.ok)
		}
	}
	// A new password replaces the old one.
	if err := AddUser(path, "ana.accountant", "a new password"); err != nil {
		t.Fatal(err)
	}
	u, _ = ReadUsers(path)
	if u.Verify("ana.accountant", "correct horse battery") || !u.Verify("ana.accountant", "a new password") {
		t.Error("the new password does not replace the old")
	}
	if err := RemoveUser(path, "ana.accountant"); err != nil {
		t.Fatal(err)
	}
	if err := RemoveUser(path, "ana.accountant"); !errors.Is(err, ErrNoSuchUser) {
		t.Errorf("removing twice: %v, want ErrNoSuchUser", err)
	}
	u, _ = ReadUsers(path)
	if got := strings.Join(u.Names(), ","); got != "ole.controller" {
		t.Errorf("after remove: %q", got)
	}
	if fi, _ := os.Stat(path); fi.Mode().Perm() != 0o600 {
		t.Errorf("rewritten users file mode %v, want 0600", fi.Mode().Perm())
	}
	entries, _ := os.ReadDir(dir)
	if len(entries) != 1 {
		t.Errorf("files left beside the users file: %v", entries)
	}
	for _, bad := range []struct{ name, password string }{
		{"", "long enough"}, {"a:b", "long enough"}, {"a b", "long enough"}, {"a\nb", "long enough"},
		{"ana", "short"}, {"ana", strings.Repeat("x", 73)},
	} {
		if err := AddUser(path, bad.name, bad.password); err == nil {
			t.Errorf("AddUser(%q, %d characters) accepted", bad.name, len(bad.password))
		}
	}
	writeFile := func(s string) { os.WriteFile(path, []byte(s), 0o600) }
	writeFile("ana.accountant:not-a-hash\n")
	if _, err := ReadUsers(path); err == nil {
		t.Error("a line without a bcrypt hash was read")
	}
}

// A page to go to after signing in stays on this site.
func TestLocalNext(t *testing.T) {
	for in, want := range map[string]string{
		"/objects?cc=WELD": "/objects?cc=WELD", "": "/", "https://elsewhere.example/": "/",
		"//elsewhere.example/": "/", `/\elsewhere.example/`: "/", "objects": "/",
	} {
		if got := localNext(in); got != want {
			t.Errorf("localNext(%q) = %q, want %q", in, got, want)
		}
	}
}

// An unknown name is checked against a real hash at the cost of the users'
// own, so that it takes as long as a known name's check.
func TestUnknownUserHashCostsAsMuchAsAUsersHash(t *testing.T) {
	cost, err := bcrypt.Cost(unknownUserHash)
	if err != nil {
		t.Fatal(err)
	}
	if cost != bcryptCost {
		t.Errorf("cost %d, want the users' %d", cost, bcryptCost)
	}
	if err := bcrypt.CompareHashAndPassword(unknownUserHash, []byte("not a user of this view")); err != nil {
		t.Errorf("not the hash of its phrase: %v", err)
	}
}
