package main

import (
	"errors"
	"fmt"
	"io"
	"os"
	"strings"
	"syscall"
	"testing"

	"github.com/costdrift/costdrift/internal/costdrift/costdrifttest"
)

// A write that the file system refuses part-way, as on a full disk (the
// kernel stops every file of the process at 16 kB), leaves the earlier
// export byte for byte and no temporary file; the error names the file.
// outputFlags.write is what budget and variance send --output through.
func TestOutputKeepsTheEarlierFileWhenTheDiskFills(t *testing.T) {
	if costdrifttest.OutsideTestCache(t) {
		return
	}
	path := earlierFile(t, "budget.csv")
	o := outputFlags{format: "csv", output: path}
	var err error
	costdrifttest.WithFileSizeLimit(t, 16<<10, func() {
		err = o.write(io.Discard, func(w io.Writer) error {
			for i := range 5000 { // about 200 kB
				if _, err := fmt.Fprintf(w, "object,2026-07,5100/WELD,%d.00\n", 1000+i); err != nil {
					return err
				}
			}
			return nil
		})
	})
	if !errors.Is(err, syscall.EFBIG) || !strings.Contains(err.Error(), path) {
		t.Errorf("error %v, want EFBIG naming %s", err, path)
	}
	got, rerr := os.ReadFile(path)
	if rerr != nil {
		t.Fatal(rerr)
	}
	if string(got) != earlierExport {
		t.Errorf("the earlier export was destroyed: %d bytes, starting %q", len(got), got[:min(len(got), 60)])
	}
	alone(t, path)
}

// init --force that cannot write the starter (about 3 kB) past 2 kB, as on
// a full disk, leaves the earlier config as it was.
func TestInitForceKeepsTheEarlierConfigWhenTheDiskFills(t *testing.T) {
	if costdrifttest.OutsideTestCache(t) {
		return
	}
	cfg := earlierFile(t, "costdrift.yaml")
	var err error
	costdrifttest.WithFileSizeLimit(t, 2<<10, func() {
		_, err = run(t, "--config", cfg, "init", "--force")
	})
	if !errors.Is(err, syscall.EFBIG) {
		t.Errorf("init --force: %v, want EFBIG", err)
	}
	if got, rerr := os.ReadFile(cfg); rerr != nil || string(got) != earlierExport {
		t.Errorf("the earlier config was destroyed: %d bytes, starting %q", len(got), got[:min(len(got), 60)])
	}
	alone(t, cfg)
}
