package sqlite

import (
	"context"
	"fmt"
	"math/rand/v2"
	"path/filepath"
	"testing"

	"github.com/costdrift/costdrift/internal/costdrift"
)

// benchLines are n invented ledger lines, parsed already, so that a
// benchmark measures the store alone. In key order, the ids ascend as a
// zero-padded export's do; else they are random in key order, as a
// journal keyed by generated ids arrives.
func benchLines(n int, keyOrder bool) []costdrift.LedgerLine {
	r := rand.New(rand.NewPCG(1, 2))
	lines := make([]costdrift.LedgerLine, 0, n)
	for entry := 0; len(lines) < n; entry++ {
		id := fmt.Sprintf("AP-%08d", entry)
		if !keyOrder {
			id = fmt.Sprintf("JV-%08x%04x", r.Uint32(), r.IntN(1<<16))
		}
		month := 1 + r.IntN(12)
		for line := 1; line <= 10 && len(lines) < n; line++ {
			lines = append(lines, costdrift.LedgerLine{Source: "gl", EntryID: id, Line: line,
				PostedOn: fmt.Sprintf("2025-%02d-%02d", month, 1+r.IntN(28)), Period: fmt.Sprintf("2025-%02d", month),
				Account: fmt.Sprint(6000 + r.IntN(400)), CostCenter: "WELD", AmountMinor: int64(100 + r.IntN(800_000)),
				Description: fmt.Sprintf("payroll %d", entry)})
		}
	}
	return lines
}

// BenchmarkLoadFile stores 200,000 parsed ledger lines of one new file,
// the path every line of `make bench-sync` takes into the store.
func BenchmarkLoadFile(b *testing.B) {
	for _, keyOrder := range []bool{true, false} {
		name := map[bool]string{true: "key-order", false: "random-keys"}[keyOrder]
		b.Run(name, func(b *testing.B) {
			lines := benchLines(200_000, keyOrder)
			ctx := context.Background()
			i := 0
			for b.Loop() {
				b.StopTimer()
				i++
				db, err := Open(ctx, filepath.Join(b.TempDir(), fmt.Sprintf("bench%d.db", i)), eur)
				if err != nil {
					b.Fatal(err)
				}
				run := costdrift.SyncRun{Source: "gl", Role: costdrift.RoleLedger, Kind: "csv"}
				if err := db.BeginSync(ctx, &run); err != nil {
					b.Fatal(err)
				}
				b.StartTimer()
				err = db.LoadFile(ctx, &run, costdrift.SourceFile{Source: "gl", Path: "/gl.csv", Size: 1, SHA256: "x"},
					func(w costdrift.SourceWriter) error {
						for _, l := range lines {
							if err := w.LedgerLine(l); err != nil {
								return err
							}
						}
						return nil
					})
				b.StopTimer()
				if err != nil || run.RowsLoaded != len(lines) {
					b.Fatalf("stored %d of %d lines: %v", run.RowsLoaded, len(lines), err)
				}
				db.Close()
				b.StartTimer()
			}
		})
	}
}

// BenchmarkSaveFits stores the fits of an analysis of 2,000 objects, eight
// an object as the analysis keeps them, in batches of 250 objects: the
// write that follows every fit of `costdrift analyze`.
func BenchmarkSaveFits(b *testing.B) {
	const objects, perObject, batch = 2000, 8, 250
	var fits []costdrift.Fit
	for i := range objects {
		o := costdrift.CostObject{Account: fmt.Sprint(6000 + i/40), CostCenter: fmt.Sprintf("CC%02d", i%40)}
		for k := range perObject {
			fits = append(fits, costdrift.Fit{Object: o, Driver: fmt.Sprintf("driver_%d", k), Lag: k % 2, Model: costdrift.ModelLinear,
				N: 36, Intercept: 1200.5 + float64(k), InterceptSE: 80.25, InterceptP: 0.001, Slope: 3.75, SlopeSE: 0.5, SlopeT: 7.5,
				SlopeP: 1e-6, SlopeAdjustedP: 2e-5, R2: 0.8, ResidualSE: 95.5, PRESS: 41000, AICc: 310.2, RangeMin: 400, RangeMax: 900,
				Significant: true, Chosen: k == 0, PlausibleRanked: k + 1})
		}
	}
	ctx := context.Background()
	for b.Loop() {
		b.StopTimer()
		db, _ := mustOpen(b)
		run := &costdrift.AnalysisRun{Grain: costdrift.GrainAccountCostCenter, WindowFrom: "2023-01", WindowTo: "2025-12", Settings: "{}"}
		w, err := db.BeginAnalysis(ctx, run)
		if err != nil {
			b.Fatal(err)
		}
		b.StartTimer()
		for at := 0; at < len(fits); at += batch * perObject {
			if err := w.Save(ctx, fits[at:at+batch*perObject], nil, nil); err != nil {
				b.Fatal(err)
			}
		}
		if err := w.Commit(ctx); err != nil {
			b.Fatal(err)
		}
		b.StopTimer()
		db.Close()
		b.StartTimer()
	}
}
