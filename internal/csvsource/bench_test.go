package csvsource

import (
	"context"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/costdrift/costdrift/internal/costdrift"
)

// tallyWriter takes rows and keeps only their number, so that a
// benchmark measures the reader.
type tallyWriter struct{ lines, rejects int }

func (c *tallyWriter) LedgerLine(costdrift.LedgerLine) error  { c.lines++; return nil }
func (c *tallyWriter) Activity(costdrift.ActivityValue) error { return nil }
func (c *tallyWriter) Account(costdrift.Account) error        { return nil }
func (c *tallyWriter) Reject(costdrift.Reject) error          { c.rejects++; return nil }

// BenchmarkReadLedger reads 100,000 canonical lines, the layout of
// scripts/gengl, which `make bench-sync` loads a million of into the store.
func BenchmarkReadLedger(b *testing.B) {
	const n = 100_000
	var s strings.Builder
	s.WriteString(ledgerHeader)
	for i := range n / 2 {
		fmt.Fprintf(&s, "AP-%08d,1,2025-%02d-%02d,%d,WELD,%d.%02d,invoice %d\n", i, 1+i%12, 1+i%28, 5000+i%2000, 1+i%20000, i%100, i)
		fmt.Fprintf(&s, "AP-%08d,2,2025-%02d-%02d,2000,,-%d.%02d,invoice %d\n", i, 1+i%12, 1+i%28, 1+i%20000, i%100, i)
	}
	path := filepath.Join(b.TempDir(), "gl.csv")
	if err := os.WriteFile(path, []byte(s.String()), 0o600); err != nil {
		b.Fatal(err)
	}
	b.ReportAllocs()
	b.ResetTimer()
	for range b.N {
		var w tallyWriter
		if _, err := ReadLedger(context.Background(), path, "gl.csv", options(), &w); err != nil || w.lines != n {
			b.Fatalf("read %d lines, %d rejects: %v", w.lines, w.rejects, err)
		}
	}
}
