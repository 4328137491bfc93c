package atomicfile

import (
	"errors"
	"io"
	"strings"
	"syscall"
	"testing"

	"github.com/costdrift/costdrift/internal/costdrift/costdrifttest"
)

// The kernel refuses the write part-way, as on a full disk: the earlier
// file is intact, no temporary file is left, and the error names the
// target and the kernel's reason.
func TestWriteRefusedByTheFileSystemKeepsTheEarlierFile(t *testing.T) {
	if costdrifttest.OutsideTestCache(t) {
		return
	}
	path := existing(t, "budget.csv")
	var err error
	costdrifttest.WithFileSizeLimit(t, 16<<10, func() {
		err = Write(path, 0o600, func(w io.Writer) error {
			_, err := io.WriteString(w, strings.Repeat("object,2026-07,6100/WELD,1234.56\n", 8000)) // 264 kB
			return err
		})
	})
	if !errors.Is(err, syscall.EFBIG) || !strings.HasPrefix(err.Error(), "write "+path+": ") {
		t.Fatalf("error %v, want EFBIG naming %s", err, path)
	}
	intact(t, path)
}
