package atomicfile

import (
	"bytes"
	"errors"
	"io"
	"io/fs"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// earlier is a good earlier export the tests write over.
const earlier = "line,period,object\nobject,2026-07,6100/WELD\n"

// existing writes earlier to name in a fresh folder with mode 0644 (as a
// file copied in or written by another tool) and returns its path.
func existing(t *testing.T, name string) string {
	t.Helper()
	path := filepath.Join(t.TempDir(), name)
	if err := os.WriteFile(path, []byte(earlier), 0o644); err != nil {
		t.Fatal(err)
	}
	if err := os.Chmod(path, 0o644); err != nil { // whatever the umask
		t.Fatal(err)
	}
	return path
}

// intact fails the test unless path holds earlier with its mode 0644 and
// its folder holds nothing else: no temporary file is left behind.
func intact(t *testing.T, path string) {
	t.Helper()
	got, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	if !bytes.Equal(got, []byte(earlier)) {
		t.Errorf("the earlier file changed: %d bytes starting %q, want %q", len(got), got[:min(len(got), 60)], earlier)
	}
	if st, err := os.Stat(path); err != nil || st.Mode().Perm() != 0o644 {
		t.Errorf("the earlier file's mode changed: %v", st.Mode())
	}
	onlyFile(t, path)
}

// onlyFile fails the test when path's folder holds anything but path.
func onlyFile(t *testing.T, path string) {
	t.Helper()
	entries, err := os.ReadDir(filepath.Dir(path))
	if err != nil {
		t.Fatal(err)
	}
	for _, e := range entries {
		if e.Name() != filepath.Base(path) {
			t.Errorf("%s left behind beside %s", e.Name(), filepath.Base(path))
		}
	}
}

func writeString(s string) func(io.Writer) error {
	return func(w io.Writer) error {
		_, err := io.WriteString(w, s)
		return err
	}
}

// A new export replaces the earlier one whole, owner-only even where the
// earlier file was readable by others.
func TestWriteReplacesTheFileOwnerOnly(t *testing.T) {
	path := existing(t, "budget.csv")
	if err := Write(path, 0o600, writeString("new export\n")); err != nil {
		t.Fatal(err)
	}
	if got, err := os.ReadFile(path); err != nil || string(got) != "new export\n" {
		t.Errorf("content %q, %v", got, err)
	}
	if st, err := os.Stat(path); err != nil || st.Mode().Perm() != 0o600 {
		t.Errorf("mode %v, want 0600", st.Mode().Perm())
	}
	onlyFile(t, path)

	fresh := filepath.Join(t.TempDir(), "chart.svg")
	if err := Write(fresh, 0o600, writeString("<svg/>")); err != nil {
		t.Fatal(err)
	}
	if st, err := os.Stat(fresh); err != nil || st.Mode().Perm() != 0o600 {
		t.Errorf("new file mode %v, want 0600", st.Mode().Perm())
	}
}

// failingWriter passes its first limit bytes on and then fails, as a disk
// fills up in the middle of an export.
type failingWriter struct {
	w     io.Writer
	limit int
}

var errDiskFull = errors.New("no space left on device (injected)")

func (f *failingWriter) Write(p []byte) (int, error) {
	if len(p) > f.limit {
		n, _ := f.w.Write(p[:f.limit])
		f.limit = 0
		return n, errDiskFull
	}
	f.limit -= len(p)
	return f.w.Write(p)
}

// A render that fails half-way, here through a writer that stops after
// 100 kB of a 1 MB export (more than the buffer holds, so part of it has
// reached the temporary file), leaves the earlier file byte for byte and
// no temporary file; the render's error comes back as it is.
func TestFailedWriteKeepsTheEarlierFile(t *testing.T) {
	path := existing(t, "budget.csv")
	line := strings.Repeat("object,2026-07,6100/WELD,1234.56\n", 32)
	err := Write(path, 0o600, func(w io.Writer) error {
		fw := &failingWriter{w: w, limit: 100_000}
		for range 1_000_000 / len(line) {
			if _, err := io.WriteString(fw, line); err != nil {
				return err
			}
		}
		return nil
	})
	if !errors.Is(err, errDiskFull) {
		t.Fatalf("error %v, want the writer's", err)
	}
	intact(t, path)
}

// The kernel's own refusal, as on a full disk, is checked in
// atomicfile_linux_test.go.

// WriteNew takes a name only once, and leaves nothing when it fails.
func TestWriteNew(t *testing.T) {
	path := existing(t, "message.eml")
	if err := WriteNew(path, 0o600, writeString("other")); !errors.Is(err, fs.ErrExist) {
		t.Errorf("WriteNew over an existing file: %v, want fs.ErrExist", err)
	}
	intact(t, path)

	dir := t.TempDir()
	fresh := filepath.Join(dir, "costdrift.yaml")
	render := errors.New("render failed")
	if err := WriteNew(fresh, 0o600, func(w io.Writer) error {
		io.WriteString(w, "store: costdrift.db\n")
		return render
	}); !errors.Is(err, render) {
		t.Errorf("WriteNew with a failing render: %v", err)
	}
	if entries, _ := os.ReadDir(dir); len(entries) != 0 {
		t.Errorf("a failed WriteNew left %v", entries)
	}
	if err := WriteNew(fresh, 0o600, writeString("store: costdrift.db\n")); err != nil {
		t.Fatal(err)
	}
	if got, _ := os.ReadFile(fresh); string(got) != "store: costdrift.db\n" {
		t.Errorf("content %q", got)
	}
}

// A link is kept and the file it points to replaced; a device is written
// into, not replaced.
func TestWriteThroughLinksAndIntoDevices(t *testing.T) {
	target := existing(t, "budget.csv")
	link := filepath.Join(t.TempDir(), "latest.csv")
	if err := os.Symlink(target, link); err != nil {
		t.Fatal(err)
	}
	if err := Write(link, 0o600, writeString("new export\n")); err != nil {
		t.Fatal(err)
	}
	if st, err := os.Lstat(link); err != nil || st.Mode()&fs.ModeSymlink == 0 {
		t.Errorf("the link was replaced: %v", st.Mode())
	}
	if got, _ := os.ReadFile(target); string(got) != "new export\n" {
		t.Errorf("the link's target holds %q", got)
	}
	if st, _ := os.Stat(target); st.Mode().Perm() != 0o600 {
		t.Errorf("the link's target has mode %v, want 0600", st.Mode().Perm())
	}
	onlyFile(t, target)

	if err := Write(os.DevNull, 0o600, writeString("discarded\n")); err != nil {
		t.Fatalf("write to %s: %v", os.DevNull, err)
	}
	if st, err := os.Stat(os.DevNull); err != nil || st.Mode()&fs.ModeDevice == 0 || st.Mode().Perm() == 0o600 {
		t.Errorf("%s is no longer the device it was: %v", os.DevNull, st.Mode())
	}

	if err := Write(t.TempDir(), 0o600, writeString("x")); err == nil || !strings.Contains(err.Error(), "is a folder") {
		t.Errorf("write over a folder: %v", err)
	}
}
