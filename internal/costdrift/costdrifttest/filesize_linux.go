package costdrifttest

import (
	"syscall"
	"testing"
)

// WithFileSizeLimit runs fn while the kernel refuses to write any file of
// this process past limit bytes (RLIMIT_FSIZE). A write past the limit
// fails with EFBIG, "file too large", after the bytes below it were
// written, as a write on a full disk fails: it stands in for a full disk
// without root and a tiny file system. The Go runtime ignores the SIGXFSZ
// the kernel also sends. The limit is the whole process's: the test must
// not run beside others that write files.
func WithFileSizeLimit(tb testing.TB, limit uint64, fn func()) {
	tb.Helper()
	var old syscall.Rlimit
	if err := syscall.Getrlimit(syscall.RLIMIT_FSIZE, &old); err != nil {
		tb.Fatal(err)
	}
	if err := syscall.Setrlimit(syscall.RLIMIT_FSIZE, &syscall.Rlimit{Cur: limit, Max: old.Max}); err != nil {
		tb.Fatal(err)
	}
	defer func() {
		if err := syscall.Setrlimit(syscall.RLIMIT_FSIZE, &old); err != nil {
			tb.Fatal(err)
		}
	}()
	fn()
}
