package pipeline

import (
	"errors"
	"fmt"
	"io/fs"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"syscall"
)

// storeLock is an exclusive flock(2) on a file beside the store, held by
// the one process that may write the store: the daemon for its whole life,
// or a writing command for its run. The lock goes with the process, so a
// killed holder never leaves a stale lock behind; the file keeps the pid of
// the last holder only so that a refusal can name it.
type storeLock struct {
	f *os.File
}

// lockPath is the lock file of the store at storePath.
func lockPath(storePath string) string { return storePath + ".lock" }

// lockStore takes the lock or refuses at once, naming the process that
// holds it.
func lockStore(storePath string) (*storeLock, error) {
	path := lockPath(storePath)
	f, err := os.OpenFile(path, os.O_RDWR|os.O_CREATE, 0o600)
	if errors.Is(err, fs.ErrNotExist) {
		return nil, fmt.Errorf("store %s: folder %s does not exist; create it or change `store` in the config", storePath, filepath.Dir(storePath))
	}
	if err != nil {
		return nil, fmt.Errorf("store lock %s: %w", path, err)
	}
	if err := syscall.Flock(int(f.Fd()), syscall.LOCK_EX|syscall.LOCK_NB); err != nil {
		holder, _ := os.ReadFile(path)
		f.Close()
		if errors.Is(err, syscall.EWOULDBLOCK) {
			pid := strings.TrimSpace(string(holder))
			if _, perr := strconv.Atoi(pid); perr != nil {
				pid = "unknown"
			}
			return nil, fmt.Errorf("store %s is in use by process %s (a running `costdrift run` or another writing command; lock file %s)", storePath, pid, path)
		}
		return nil, fmt.Errorf("store lock %s: %w", path, err)
	}
	if err := f.Truncate(0); err == nil {
		_, err = f.WriteAt([]byte(strconv.Itoa(os.Getpid())+"\n"), 0)
	}
	if err != nil {
		f.Close() // closing releases the lock
		return nil, fmt.Errorf("store lock %s: %w", path, err)
	}
	return &storeLock{f: f}, nil
}

// release gives the lock up. The file stays: removing it would let a
// process that opened the old file and one that creates a new one both
// believe they hold the lock.
func (l *storeLock) release() {
	if l == nil || l.f == nil {
		return
	}
	syscall.Flock(int(l.f.Fd()), syscall.LOCK_UN)
	l.f.Close()
	l.f = nil
}
