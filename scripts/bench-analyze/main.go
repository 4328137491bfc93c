// Command bench-analyze times analyze.Panel on an invented panel built in
// memory by package panelgen (10,000 cost objects × 30 drivers × 2 lags × 36
// months by default) and prints its results as a line of key=value pairs:
//
//	RESULT side=ours procs=2 objects=10000 fits=600000 wall_s=… cpu_s=… objects_per_s=… fits_per_s=… peak_heap_mib=… …
//
// A fit is one straight-line regression cost = a + b·driver of one object on
// one driver at one lag (a "linear" fit in the results); the line counts them
// from the results, and counts beside them the proportional fits cost = b·x
// and the constant fits cost = a that the analysis also makes. cpu_s is the
// process's user plus system time during the analysis (all threads, GC
// included), which other load on the machine disturbs less than the wall
// time. Peak heap is the highest live-plus-unswept heap (runtime/metrics
// /memory/classes/heap/objects:bytes) sampled every 2 ms during the run;
// vm_hwm_mib is the process's peak resident set.
//
// With -write DIR it also writes the panel, the candidate table and its own
// fits of a sample of objects for the Python comparisons in this folder
// (statsmodels_loop.py, numpy_floor.py); see writePanel for the layout.
// -cpuprofile FILE writes a CPU profile of the analysis alone.
//
// A second line, side=ours_line, times the 600,000 fit.Line calls alone,
// the same fits the statsmodels loop makes (see lineLoop).
//
// run.sh runs it with the Python comparisons side by side.
package main

import (
	"bufio"
	"context"
	"encoding/binary"
	"encoding/json"
	"flag"
	"fmt"
	"hash/fnv"
	"io"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"runtime"
	"runtime/metrics"
	"runtime/pprof"
	"slices"
	"strings"
	"sync"
	"syscall"
	"time"

	"github.com/costdrift/costdrift/internal/analyze"
	"github.com/costdrift/costdrift/internal/costdrift"
	"github.com/costdrift/costdrift/internal/fit"
	"github.com/costdrift/costdrift/scripts/bench-analyze/panelgen"
)

// settings are the product defaults the benchmark runs with.
// The product's defaults, break test included (analysis.break_alpha 0.01,
// 999 bootstrap resamples).
var settings = analyze.Settings{MinPeriods: 12, Lags: []int{0, 1}, Alpha: 0.05, BreakAlpha: 0.01, Replicates: 999, Seed: 1}

func main() {
	cfg := panelgen.Default()
	flag.IntVar(&cfg.Objects, "objects", cfg.Objects, "cost objects")
	flag.IntVar(&cfg.Centres, "centres", cfg.Centres, "cost centres")
	flag.IntVar(&cfg.Shared, "shared", cfg.Shared, "company-wide drivers")
	flag.IntVar(&cfg.Local, "local", cfg.Local, "drivers per cost centre")
	flag.IntVar(&cfg.Periods, "periods", cfg.Periods, "periods in the window")
	flag.Uint64Var(&cfg.Seed, "seed", cfg.Seed, "generator seed")
	write := flag.String("write", "", "write the panel, candidates and a sample of our fits to this folder")
	sample := flag.Int("sample", 200, "objects in the sample written with -write (drawn with the seed)")
	cpuprofile := flag.String("cpuprofile", "", "write a CPU profile of the analysis to this file")
	flag.Parse()
	if err := run(cfg, *write, *sample, *cpuprofile); err != nil {
		fmt.Fprintln(os.Stderr, "bench-analyze:", err)
		os.Exit(1)
	}
}

func run(cfg panelgen.Config, dir string, sampleSize int, cpuprofile string) error {
	start := time.Now()
	p, truth := panelgen.Build(cfg)
	build := time.Since(start)
	sum := checksum(p)
	cands := panelgen.Candidates(p)
	sample := randomSample(len(p.Objects), sampleSize, cfg.Seed)
	if dir != "" {
		if err := writePanel(dir, cfg, p, cands, sample, sum); err != nil {
			return err
		}
	}

	runtime.GC()
	var prof *os.File
	if cpuprofile != "" {
		f, err := os.Create(cpuprofile)
		if err != nil {
			return err
		}
		prof = f
		if err := pprof.StartCPUProfile(f); err != nil {
			return err
		}
	}
	before := readMetrics()
	cpuBefore := cpuSeconds()
	stopSampling := sampleHeap()
	start = time.Now()
	results, err := analyze.Panel(context.Background(), p, settings)
	if err != nil {
		return err
	}
	wall := time.Since(start)
	peak := stopSampling()
	cpu := cpuSeconds() - cpuBefore
	after := readMetrics()
	if prof != nil {
		pprof.StopCPUProfile()
		if err := prof.Close(); err != nil {
			return err
		}
	}

	var linear, proportional, constant int
	classes := map[costdrift.Class]int{}
	for _, res := range results {
		for _, f := range res.Fits {
			switch f.Model {
			case costdrift.ModelLinear:
				linear++
			case costdrift.ModelProportional:
				proportional++
			case costdrift.ModelConstant:
				constant++
			}
		}
		classes[res.Behaviour.Class]++
	}
	kinds := map[string]int{}
	for _, t := range truth {
		kinds[panelgen.KindNames[t.Kind]]++
	}
	if dir != "" {
		// The Python side fits every candidate over the whole window; an
		// object with a break was refitted from the break on, so the sample
		// is analysed again with the break test off for the comparison.
		plain := settings
		plain.BreakAlpha = 0
		compare := make([]analyze.Result, len(p.Objects))
		for _, o := range sample {
			compare[o] = analyze.Object(p, &p.Objects[o], plain)
		}
		if err := writeOurFits(filepath.Join(dir, "ours_sample.f64"), p, compare, cands, sample); err != nil {
			return err
		}
	}

	lineWall, lineCPU, lineFits, check := lineLoop(p, cands)

	secs := wall.Seconds()
	fmt.Printf("RESULT side=ours procs=%d objects=%d drivers_per_object=%d lags=%d periods=%d fits=%d proportional_fits=%d constant_fits=%d "+
		"wall_s=%.4f cpu_s=%.4f objects_per_s=%.0f fits_per_s=%.0f peak_heap_mib=%.1f panel_heap_mib=%.1f alloc_mib=%.0f gc_cycles=%d vm_hwm_mib=%.0f build_s=%.3f checksum=%016x\n",
		runtime.GOMAXPROCS(0), len(p.Objects), cfg.Shared+cfg.Local, len(settings.Lags), cfg.Periods, linear, proportional, constant,
		secs, cpu, float64(len(p.Objects))/secs, float64(linear)/secs, mib(peak), mib(before.heap), mib(after.allocs-before.allocs),
		after.gcs-before.gcs, vmHWM(), build.Seconds(), sum)
	fmt.Printf("RESULT side=ours_line procs=%d objects=%d fits=%d wall_s=%.4f cpu_s=%.4f fits_per_s=%.0f press_sum=%.6g\n",
		runtime.GOMAXPROCS(0), len(p.Objects), lineFits, lineWall.Seconds(), lineCPU, float64(lineFits)/lineWall.Seconds(), check)
	fmt.Printf("INFO generated kinds %s; classified %s\n", counts(kinds), counts(classes))
	return nil
}

// lineLoop makes the fits the statsmodels loop makes, on the same pairs: one
// fit.Line per object, candidate driver and lag, spread over GOMAXPROCS
// workers as analyze.Panel spreads objects, and nothing else. fit.Line
// computes what statsmodels_loop.py computes per fit (coefficients, standard
// errors, t, p, R², adjusted R², F and its p, residuals, leverage, Cook's
// distance, PRESS, AIC, AICc, BIC). The sum of PRESS is returned so that the
// work cannot be optimised away.
func lineLoop(p *costdrift.Panel, cands [][]int) (wall time.Duration, cpu float64, fits int, pressSum float64) {
	runtime.GC()
	cpuBefore := cpuSeconds()
	start := time.Now()
	workers := runtime.GOMAXPROCS(0)
	counts := make([]int, workers)
	sums := make([]float64, workers)
	work := make(chan int)
	var wg sync.WaitGroup
	for w := range workers {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for o := range work {
				y := p.Objects[o].Cost
				for _, s := range cands[o] {
					for _, lag := range settings.Lags {
						x := p.Drivers[s].Values[p.MaxLag-lag : p.MaxLag-lag+len(y)]
						r, err := fit.Line(x, y)
						if err != nil {
							continue
						}
						counts[w]++
						sums[w] += r.PRESS
					}
				}
			}
		}()
	}
	for o := range p.Objects {
		work <- o
	}
	close(work)
	wg.Wait()
	wall = time.Since(start)
	cpu = cpuSeconds() - cpuBefore
	for w := range workers {
		fits += counts[w]
		pressSum += sums[w]
	}
	return wall, cpu, fits, pressSum
}

// sampleHeap samples the live heap every 2 ms until the returned function is
// called, which returns the highest value seen.
func sampleHeap() func() uint64 {
	done := make(chan struct{})
	var wg sync.WaitGroup
	var peak uint64
	wg.Add(1)
	go func() {
		defer wg.Done()
		s := []metrics.Sample{{Name: "/memory/classes/heap/objects:bytes"}}
		tick := time.NewTicker(2 * time.Millisecond)
		defer tick.Stop()
		for {
			metrics.Read(s)
			peak = max(peak, s[0].Value.Uint64())
			select {
			case <-done:
				return
			case <-tick.C:
			}
		}
	}()
	return func() uint64 {
		close(done)
		wg.Wait()
		return peak
	}
}

type memMetrics struct{ heap, allocs, gcs uint64 }

func readMetrics() memMetrics {
	s := []metrics.Sample{
		{Name: "/memory/classes/heap/objects:bytes"},
		{Name: "/gc/heap/allocs:bytes"},
		{Name: "/gc/cycles/total:gc-cycles"},
	}
	metrics.Read(s)
	return memMetrics{s[0].Value.Uint64(), s[1].Value.Uint64(), s[2].Value.Uint64()}
}

// cpuSeconds is the user plus system CPU time of the whole process, every
// thread and the garbage collector included.
func cpuSeconds() float64 {
	var u syscall.Rusage
	if err := syscall.Getrusage(syscall.RUSAGE_SELF, &u); err != nil {
		return math.NaN()
	}
	return time.Duration(u.Utime.Nano() + u.Stime.Nano()).Seconds()
}

// vmHWM is the process's peak resident set in MiB (Linux), NaN elsewhere.
func vmHWM() float64 {
	b, err := os.ReadFile("/proc/self/status")
	if err != nil {
		return math.NaN()
	}
	for _, line := range strings.Split(string(b), "\n") {
		var kib float64
		if _, err := fmt.Sscanf(line, "VmHWM: %f kB", &kib); err == nil {
			return kib / 1024
		}
	}
	return math.NaN()
}

func mib(b uint64) float64 { return float64(b) / (1 << 20) }

func counts[K ~string](m map[K]int) string {
	var parts []string
	for _, k := range sortedKeys(m) {
		parts = append(parts, fmt.Sprintf("%s=%d", k, m[k]))
	}
	return strings.Join(parts, " ")
}

func sortedKeys[K ~string](m map[K]int) []K {
	keys := make([]K, 0, len(m))
	for k := range m {
		keys = append(keys, k)
	}
	slices.Sort(keys)
	return keys
}

// checksum is FNV-64a over the bits of every cost and driver value, so that
// rounds can show they analysed the same panel.
func checksum(p *costdrift.Panel) uint64 {
	h := fnv.New64a()
	var b [8]byte
	put := func(v []float64) {
		for _, x := range v {
			binary.LittleEndian.PutUint64(b[:], math.Float64bits(x))
			h.Write(b[:])
		}
	}
	for _, o := range p.Objects {
		put(o.Cost)
	}
	for _, d := range p.Drivers {
		put(d.Values)
	}
	return h.Sum64()
}

// randomSample returns k distinct object indices in increasing order, drawn
// with the panel's seed. Evenly spaced indices would fall into one cost
// centre, since objects are spread over the centres in turn.
func randomSample(n, k int, seed uint64) []int {
	out := rand.New(rand.NewPCG(seed, 1)).Perm(n)[:min(k, n)]
	slices.Sort(out)
	return out
}

// meta describes the files writePanel writes; all numbers little-endian.
type meta struct {
	Objects          int      `json:"objects"`
	Periods          int      `json:"periods"`
	MaxLag           int      `json:"max_lag"`
	Series           int      `json:"series"`
	DriversPerObject int      `json:"drivers_per_object"`
	Lags             []int    `json:"lags"`
	MinPeriods       int      `json:"min_periods"`
	Sample           []int    `json:"sample"`
	OurFields        []string `json:"our_fields"`
	Seed             uint64   `json:"seed"`
	Checksum         string   `json:"checksum"`
	Files            []string `json:"files"`
}

// ourFields are the values of each linear fit written to ours_sample.f64.
var ourFields = []string{"intercept", "slope", "intercept_se", "slope_se", "slope_t", "slope_p", "r2", "residual_se", "press", "aicc"}

// writePanel writes into dir:
//
//	meta.json        sizes, lags, the sample, field names, seed and checksum
//	costs.f64        float64 [objects][periods]: cost per window period
//	drivers.f64      float64 [series][max_lag + periods]: driver values, the
//	                 first max_lag before the window (as costdrift.DriverSeries)
//	candidates.i32   int32 [objects][drivers_per_object]: the series analyze
//	                 fits each object on, in its order
//
// so that the driver value paired with cost period t at lag L is
// drivers[series][max_lag − L + t].
func writePanel(dir string, cfg panelgen.Config, p *costdrift.Panel, cands [][]int, sample []int, sum uint64) error {
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return err
	}
	m := meta{
		Objects: len(p.Objects), Periods: len(p.Periods), MaxLag: p.MaxLag, Series: len(p.Drivers),
		DriversPerObject: len(cands[0]), Lags: settings.Lags, MinPeriods: settings.MinPeriods, Sample: sample,
		OurFields: ourFields, Seed: cfg.Seed, Checksum: fmt.Sprintf("%016x", sum),
		Files: []string{"costs.f64", "drivers.f64", "candidates.i32", "ours_sample.f64"},
	}
	for _, c := range cands {
		if len(c) != m.DriversPerObject {
			return fmt.Errorf("objects see different numbers of drivers (%d and %d); the files need one", len(c), m.DriversPerObject)
		}
	}
	b, err := json.MarshalIndent(m, "", "  ")
	if err != nil {
		return err
	}
	if err := os.WriteFile(filepath.Join(dir, "meta.json"), b, 0o644); err != nil {
		return err
	}
	err = writeBinary(filepath.Join(dir, "costs.f64"), func(w io.Writer) error {
		for _, o := range p.Objects {
			if err := binary.Write(w, binary.LittleEndian, o.Cost); err != nil {
				return err
			}
		}
		return nil
	})
	if err != nil {
		return err
	}
	err = writeBinary(filepath.Join(dir, "drivers.f64"), func(w io.Writer) error {
		for _, d := range p.Drivers {
			if err := binary.Write(w, binary.LittleEndian, d.Values); err != nil {
				return err
			}
		}
		return nil
	})
	if err != nil {
		return err
	}
	return writeBinary(filepath.Join(dir, "candidates.i32"), func(w io.Writer) error {
		for _, c := range cands {
			for _, s := range c {
				if err := binary.Write(w, binary.LittleEndian, int32(s)); err != nil {
					return err
				}
			}
		}
		return nil
	})
}

// writeOurFits writes float64 [sample][drivers_per_object][lags][ourFields]:
// analyze's linear fit of each sampled object on each candidate, NaN where
// analyze made none, for statsmodels_loop.py to compare against.
func writeOurFits(path string, p *costdrift.Panel, results []analyze.Result, cands [][]int, sample []int) error {
	return writeBinary(path, func(w io.Writer) error {
		for _, o := range sample {
			pos := map[string]int{}
			for j, s := range cands[o] {
				pos[p.Drivers[s].Name] = j
			}
			rows := make([]float64, len(cands[o])*len(settings.Lags)*len(ourFields))
			for i := range rows {
				rows[i] = math.NaN()
			}
			for _, f := range results[o].Fits {
				if f.Model != costdrift.ModelLinear {
					continue
				}
				l := -1
				for i, lag := range settings.Lags {
					if lag == f.Lag {
						l = i
					}
				}
				j, ok := pos[f.Driver]
				if !ok || l < 0 {
					return fmt.Errorf("object %d: fit on %s lag %d is not a candidate", o, f.Driver, f.Lag)
				}
				at := (j*len(settings.Lags) + l) * len(ourFields)
				copy(rows[at:], []float64{f.Intercept, f.Slope, f.InterceptSE, f.SlopeSE, f.SlopeT, f.SlopeP, f.R2, f.ResidualSE, f.PRESS, f.AICc})
			}
			if err := binary.Write(w, binary.LittleEndian, rows); err != nil {
				return err
			}
		}
		return nil
	})
}

func writeBinary(path string, fill func(io.Writer) error) error {
	f, err := os.Create(path)
	if err != nil {
		return err
	}
	w := bufio.NewWriterSize(f, 1<<20)
	if err := fill(w); err != nil {
		f.Close()
		return err
	}
	if err := w.Flush(); err != nil {
		f.Close()
		return err
	}
	return f.Close()
}
