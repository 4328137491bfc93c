package web

import (
	"bufio"
	"bytes"
	"errors"
	"fmt"
	"io"
	"os"
	"sort"
	"strings"

	"golang.org/x/crypto/bcrypt"

	"github.com/costdrift/costdrift/internal/atomicfile"
)

// A users file holds one "name:bcrypt-hash" a line, written owner-only:
// the hashes are not the passwords, but they can be guessed at offline.
const usersFileMode = 0o600

// bcryptCost is the work of one hash; bcrypt's default (10) takes tens of
// milliseconds, which a sign-in does not notice and a guesser does.
const bcryptCost = bcrypt.DefaultCost

// ErrNoSuchUser is what removing a name the file does not hold returns.
var ErrNoSuchUser = errors.New("no such user")

// Users are the names and hashes of a users file.
type Users map[string][]byte

// ReadUsers reads the users file at path; a file that does not exist
// holds no users.
func ReadUsers(path string) (Users, error) {
	b, err := os.ReadFile(path)
	if errors.Is(err, os.ErrNotExist) {
		return Users{}, nil
	}
	if err != nil {
		return nil, fmt.Errorf("users file: %w", err)
	}
	u := Users{}
	sc := bufio.NewScanner(bytes.NewReader(b))
	for n := 1; sc.Scan(); n++ {
		line := strings.TrimSpace(sc.Text())
		if line == "" {
			continue
		}
		name, hash, ok := strings.Cut(line, ":")
		if !ok || checkUserName(name) != nil {
			return nil, fmt.Errorf("users file %s: line %d is not name:hash", path, n)
		}
		if _, err := bcrypt.Cost([]byte(hash)); err != nil {
			return nil, fmt.Errorf("users file %s: line %d: %w", path, n, err)
		}
		u[name] = []byte(hash)
	}
	return u, nil
}

// Names are the users in order.
func (u Users) Names() []string {
	names := make([]string, 0, len(u))
	for n := range u {
		names = append(names, n)
	}
	sort.Strings(names)
	return names
}

// Verify says whether password is name's. An unknown name costs a hash
// all the same, so that the time taken does not tell which names exist.
func (u Users) Verify(name, password string) bool {
	hash, ok := u[name]
	if !ok {
		bcrypt.CompareHashAndPassword(unknownUserHash, []byte(password))
		return false
	}
	return bcrypt.CompareHashAndPassword(hash, []byte(password)) == nil
}

// unknownUserHash is compared against when the name is unknown: the hash of
// "not a user of this view" at bcryptCost. It is written out rather than
// computed when the package loads, which would cost every command of the
// program a hash (tens of milliseconds) before it does anything.
var unknownUserHash = []byte("$2a$10$d6MZAyV4dtIaV9gmXqtTwOZmPePvrfNAzHrL5t2tdo.Wvs5qseON.")

// checkUserName keeps a name to one field of a line and one word of the
// audit trail.
func checkUserName(name string) error {
	switch {
	case name == "":
		return errors.New("user name: empty")
	case len(name) > 64:
		return errors.New("user name: longer than 64 characters")
	case strings.ContainsAny(name, ": \t\r\n"):
		return fmt.Errorf("user name %q: no colon, space or line break", name)
	}
	for _, r := range name {
		if r < 0x20 || r == 0x7f {
			return fmt.Errorf("user name %q: no control characters", name)
		}
	}
	return nil
}

// AddUser sets name's password in the users file at path, adding the
// name or replacing its hash; the file is rewritten whole, owner-only.
func AddUser(path, name, password string) error {
	if err := checkUserName(name); err != nil {
		return err
	}
	if len(password) < 8 {
		return errors.New("password: at least 8 characters")
	}
	if len(password) > 72 {
		return errors.New("password: at most 72 bytes (bcrypt reads no further)")
	}
	u, err := ReadUsers(path)
	if err != nil {
		return err
	}
	hash, err := bcrypt.GenerateFromPassword([]byte(password), bcryptCost)
	if err != nil {
		return fmt.Errorf("hash password: %w", err)
	}
	u[name] = hash
	return u.write(path)
}

// RemoveUser takes name out of the users file at path.
func RemoveUser(path, name string) error {
	u, err := ReadUsers(path)
	if err != nil {
		return err
	}
	if _, ok := u[name]; !ok {
		return fmt.Errorf("%q: %w", name, ErrNoSuchUser)
	}
	delete(u, name)
	return u.write(path)
}

func (u Users) write(path string) error {
	return atomicfile.Write(path, usersFileMode, func(w io.Writer) error {
		for _, n := range u.Names() {
			if _, err := fmt.Fprintf(w, "%s:%s\n", n, u[n]); err != nil {
				return err
			}
		}
		return nil
	})
}
