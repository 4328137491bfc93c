// Command study-drift runs the portfolio study of drift alerts (README,
// Drift: the portfolio study): a stable invented portfolio and a shifted one
// rolled forward 12 month-ends, printing the share of stable objects alerted
// per analysis and over the year, and how soon and how well a known shift
// is alerted.
package main

import (
	"flag"
	"fmt"
	"os"
	"time"

	"github.com/costdrift/costdrift/internal/costdrift"
	"github.com/costdrift/costdrift/scripts/study-drift/study"
)

func main() {
	stable := flag.Int("stable", 2000, "stable objects (a quarter of each class)")
	shifted := flag.Int("shifted", 400, "shifted objects (half fixed, half mixed)")
	seed := flag.Uint64("seed", 2026, "seed of the generator")
	fdr := flag.Float64("fdr", 0, "false-discovery rate at which the breaks of each analysis are weighed together (0: not weighed)")
	flag.Parse()

	started := time.Now()
	s := study.Settings()
	q := *stable / 4
	steady := study.Generate(*seed, "S", study.Mix{costdrift.Fixed: q, costdrift.Variable: q, costdrift.Mixed: q, costdrift.Step: *stable - 3*q}, nil)
	h := *shifted / 2
	moved := study.Generate(*seed+1, "D", study.Mix{costdrift.Fixed: h, costdrift.Mixed: *shifted - h}, &study.Shift{Rise: 0.15, From: 38, To: 42, FixedCV: 0.015})
	// One portfolio: the shifted objects are analysed alongside the stable
	// ones, as a company's few changed costs are among its many steady ones.
	rolls := study.Roll(append(append([]study.Company{}, steady...), moved...), s, *fdr)
	study.WriteStable(os.Stdout, study.Stable(steady, rolls))
	fmt.Println()
	study.WriteShifted(os.Stdout, study.Shifted(moved, rolls))
	fmt.Printf("\n(%s)\n", time.Since(started).Round(time.Second))
}
