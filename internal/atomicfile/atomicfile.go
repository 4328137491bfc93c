package atomicfile

import (
	"bufio"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"os"
	"path/filepath"
)

// Write writes what write produces to path, whole or not at all: into a
// temporary file ".NAME.*.tmp" in path's folder, which is synced, given
// mode perm (whatever the umask, and whatever mode an earlier file at path
// had) and renamed over path. On any error the temporary file is removed
// and a file already at path is left as it was. An error of write is
// returned as it is; an error of the file system is wrapped with path.
//
// A symbolic link at path is followed: the file it points to is replaced
// and the link kept. A target that is not a regular file (a device such
// as /dev/null, a named pipe) cannot be replaced and is written into
// directly.
func Write(path string, perm fs.FileMode, write func(io.Writer) error) error {
	target, direct, err := resolve(path)
	if err != nil {
		return err
	}
	if direct {
		return writeDirect(target, perm, write)
	}
	f, err := os.CreateTemp(filepath.Dir(target), "."+filepath.Base(target)+".*.tmp")
	if err != nil {
		return pathError(path, err)
	}
	tmp := f.Name()
	fail := func(err error) error {
		f.Close()
		os.Remove(tmp)
		return err
	}
	if err := fill(f, path, write); err != nil {
		return fail(err)
	}
	if err := f.Chmod(perm); err != nil {
		return fail(pathError(path, err))
	}
	if err := f.Sync(); err != nil {
		return fail(pathError(path, err))
	}
	if err := f.Close(); err != nil {
		os.Remove(tmp)
		return pathError(path, err)
	}
	if err := os.Rename(tmp, target); err != nil {
		os.Remove(tmp)
		return pathError(path, err)
	}
	syncFolder(filepath.Dir(target))
	return nil
}

// WriteNew is Write for a file that must not exist yet: it fails with an
// error matching fs.ErrExist when path exists, and otherwise creates path
// first, so that two writers never take the same name, then writes it as
// Write does. On any error nothing is left at path.
func WriteNew(path string, perm fs.FileMode, write func(io.Writer) error) error {
	f, err := os.OpenFile(path, os.O_WRONLY|os.O_CREATE|os.O_EXCL, perm)
	if err != nil {
		return pathError(path, err)
	}
	if err := f.Close(); err != nil {
		os.Remove(path)
		return pathError(path, err)
	}
	if err := Write(path, perm, write); err != nil {
		os.Remove(path)
		return err
	}
	return nil
}

// resolve finds the file to replace: path, or the file a link at path
// points to. direct says it is not a regular file and must be written
// into; a link to nothing is written through, as a plain write would.
func resolve(path string) (target string, direct bool, err error) {
	st, err := os.Lstat(path)
	switch {
	case errors.Is(err, fs.ErrNotExist):
		return path, false, nil
	case err != nil:
		return "", false, pathError(path, err)
	case st.Mode()&fs.ModeSymlink != 0:
		target, err := filepath.EvalSymlinks(path)
		if err != nil {
			return path, true, nil
		}
		if st, err = os.Stat(target); err != nil {
			return "", false, pathError(path, err)
		}
		path = target
	}
	switch {
	case st.IsDir():
		return "", false, fmt.Errorf("write %s: is a folder", path)
	case !st.Mode().IsRegular():
		return path, true, nil
	}
	return path, false, nil
}

// writeDirect writes into a file that cannot be replaced by a rename.
func writeDirect(path string, perm fs.FileMode, write func(io.Writer) error) error {
	f, err := os.OpenFile(path, os.O_WRONLY|os.O_CREATE|os.O_TRUNC, perm)
	if err != nil {
		return pathError(path, err)
	}
	if err := fill(f, path, write); err != nil {
		f.Close()
		return err
	}
	if err := f.Close(); err != nil {
		return pathError(path, err)
	}
	return nil
}

// fill runs write on f through a buffer. An error of the file, also one
// that reaches write through the buffer, is wrapped with path; any other
// error of write is returned as it is.
func fill(f *os.File, path string, write func(io.Writer) error) error {
	fw := &fileWriter{f: f}
	buf := bufio.NewWriterSize(fw, 64<<10)
	err := write(buf)
	if err == nil {
		err = buf.Flush()
	}
	if fw.err != nil {
		return pathError(path, fw.err)
	}
	return err
}

// fileWriter keeps the first error of the file it writes to.
type fileWriter struct {
	f   *os.File
	err error
}

func (w *fileWriter) Write(p []byte) (int, error) {
	n, err := w.f.Write(p)
	if err != nil && w.err == nil {
		w.err = err
	}
	return n, err
}

// syncFolder makes the rename durable. The new file is in place whether or
// not this succeeds, and some file systems refuse to sync a folder, so its
// failure does not fail the write.
func syncFolder(dir string) {
	if d, err := os.Open(dir); err == nil {
		d.Sync()
		d.Close()
	}
}

// pathError names path, not the temporary file, in a file system error:
// "write out/budget.csv: no space left on device".
func pathError(path string, err error) error {
	var pe *fs.PathError
	if errors.As(err, &pe) {
		err = pe.Err
	}
	var le *os.LinkError
	if errors.As(err, &le) {
		err = le.Err
	}
	return fmt.Errorf("write %s: %w", path, err)
}
