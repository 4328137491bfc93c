package costdrifttest

import (
	"bytes"
	"flag"
	"os"
	"os/exec"
	"regexp"
	"strings"
	"syscall"
	"testing"
)

// WithFileSizeLimit runs fn while the kernel refuses to write any file of
// this process past limit bytes (RLIMIT_FSIZE). A write past the limit
// fails with EFBIG, "file too large", after the bytes below it were
// written, as a write on a full disk fails: it stands in for a full disk
// without root and a tiny file system. The Go runtime ignores the SIGXFSZ
// the kernel also sends. The limit is the whole process's: the test must
// not run beside others that write files, and must call OutsideTestCache
// first.
func WithFileSizeLimit(tb testing.TB, limit uint64, fn func()) {
	tb.Helper()
	if testLogKept() {
		tb.Fatal("WithFileSizeLimit while go test keeps its log of opened files: call OutsideTestCache first")
	}
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

// OutsideTestCache runs the calling test again, alone, in a child process
// of the test binary when go test keeps its log of the files and variables
// a test reads (the log behind its cache of results, written as the test
// runs), and reports true: the caller returns, and the child's result is
// the test's. A file size limit (WithFileSizeLimit) holds for every file of
// the process, that log among them, and a write of the log past it fails
// the whole run. In the child, and in a run without the log (go test
// -count=1, as make test runs), it reports false and the test goes on.
func OutsideTestCache(t *testing.T) bool {
	t.Helper()
	if !testLogKept() {
		return false
	}
	parts := strings.Split(t.Name(), "/")
	for i, p := range parts {
		parts[i] = "^" + regexp.QuoteMeta(p) + "$"
	}
	cmd := exec.Command(os.Args[0], "-test.run="+strings.Join(parts, "/"), "-test.count=1", "-test.v")
	out, err := cmd.CombinedOutput()
	if err != nil {
		t.Fatalf("%s, run again in a child process without go test's log of opened files, failed: %v\n%s", t.Name(), err, out)
	}
	if !bytes.Contains(out, []byte("--- PASS: "+t.Name()+" ")) {
		t.Fatalf("%s, run again in a child process, did not pass:\n%s", t.Name(), out)
	}
	return true
}

// testLogKept reports whether go test keeps its log of the files the tests
// open (the -test.testlogfile it passes when it may cache the results).
func testLogKept() bool {
	f := flag.Lookup("test.testlogfile")
	return f != nil && f.Value.String() != ""
}
