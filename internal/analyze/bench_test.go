package analyze_test

import (
	"context"
	"testing"

	"github.com/costdrift/costdrift/internal/analyze"
	"github.com/costdrift/costdrift/internal/costdrift"
	"github.com/costdrift/costdrift/scripts/bench-analyze/panelgen"
)

// BenchmarkPanel times analyze.Panel on an invented panel of 500 cost
// objects × 30 drivers × 2 lags × 36 months (panelgen, the generator of
// make bench-analyze, seeded). It runs only with -bench:
//
//	go test -run '^$' -bench Panel -benchmem ./internal/analyze/
//
// Beside ns/op it reports objects/s and fits/s, a fit being one straight
// line cost = a + b·driver of one object on one driver at one lag.
func BenchmarkPanel(b *testing.B) {
	cfg := panelgen.Default()
	cfg.Objects = 500
	p, _ := panelgen.Build(cfg)
	s := analyze.Settings{MinPeriods: 12, Lags: []int{0, 1}, Alpha: 0.05, BreakAlpha: 0.01, Replicates: 999, Seed: 1}
	// Every object has 36 periods and 30 varying drivers, so every
	// candidate is fitted.
	want := cfg.Objects * (cfg.Shared + cfg.Local) * len(s.Lags)

	var results []analyze.Result
	runs := 0
	b.ReportAllocs()
	for b.Loop() {
		results, _ = analyze.Panel(context.Background(), p, s)
		runs++
	}

	if len(results) != cfg.Objects {
		b.Fatalf("analyze.Panel returned %d results for %d objects", len(results), cfg.Objects)
	}
	fits := 0
	for _, r := range results {
		for _, f := range r.Fits {
			if f.Model == costdrift.ModelLinear {
				fits++
			}
		}
	}
	if fits != want {
		b.Fatalf("analyze.Panel made %d linear fits, want %d (objects × drivers × lags)", fits, want)
	}
	secs := b.Elapsed().Seconds()
	b.ReportMetric(float64(runs*cfg.Objects)/secs, "objects/s")
	b.ReportMetric(float64(runs*fits)/secs, "fits/s")
}
