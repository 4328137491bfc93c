// Command gengl writes an invented general-ledger CSV of a given number of
// lines in the canonical layout, for benchmarks, in one of three shapes that
// load differently:
//
//	pairs     balanced two-line entries (an expense line with a cost centre,
//	          a payables line without), ids zero-padded so that the lines
//	          arrive in key order, dates month by month;
//	costonly  a cost-only export: one to four expense lines per entry, every
//	          line with a cost centre, no entry balances, ids not zero-padded
//	          (INV-9 sorts after INV-10), so the lines do not arrive in key order;
//	journal   balanced journal entries of 2 to 60 lines (allocations and
//	          payroll by cost centre), debit and credit columns instead of a
//	          signed amount, descriptions quoted with commas, entries in no
//	          date order and ids that are random in key order.
package main

import (
	"bufio"
	"flag"
	"fmt"
	"math/rand/v2"
	"os"
)

var centres = []string{"WELD", "PAINT", "ASSY", "STORE", "ADMIN", "MAINT", "QA", "SHIP"}

func main() {
	n := flag.Int("n", 1_000_000, "lines to write")
	out := flag.String("o", "gl.csv", "output file")
	shape := flag.String("shape", "pairs", "ledger shape: pairs, costonly or journal")
	flag.Parse()
	gen, ok := map[string]func(*bufio.Writer, *rand.Rand, int){"pairs": pairs, "costonly": costOnly, "journal": journal}[*shape]
	if !ok {
		fmt.Fprintf(os.Stderr, "gengl: unknown shape %q: want pairs, costonly or journal\n", *shape)
		os.Exit(2)
	}
	f, err := os.OpenFile(*out, os.O_WRONLY|os.O_CREATE|os.O_TRUNC, 0o600)
	if err != nil {
		fmt.Fprintln(os.Stderr, err)
		os.Exit(1)
	}
	w := bufio.NewWriterSize(f, 1<<20)
	gen(w, rand.New(rand.NewPCG(1, 2)), *n)
	if err := w.Flush(); err != nil {
		fmt.Fprintln(os.Stderr, err)
		os.Exit(1)
	}
	if err := f.Close(); err != nil {
		fmt.Fprintln(os.Stderr, err)
		os.Exit(1)
	}
}

// day is a posting date in month 1..36 from January 2023.
func day(r *rand.Rand, month int) string {
	return fmt.Sprintf("%04d-%02d-%02d", 2023+(month-1)/12, (month-1)%12+1, 1+r.IntN(28))
}

func pairs(w *bufio.Writer, r *rand.Rand, n int) {
	fmt.Fprintln(w, "entry_id,line,date,account,cost_center,amount,description")
	for i := 0; i < n; i += 2 {
		date := day(r, 1+(i/2)%36)
		cents := 100 + r.IntN(2_000_000)
		account := 5000 + r.IntN(2000)
		entry := fmt.Sprintf("AP-%08d", i/2)
		fmt.Fprintf(w, "%s,1,%s,%d,%s,%d.%02d,invoice %d\n", entry, date, account, centres[r.IntN(5)], cents/100, cents%100, i/2)
		if i+1 < n {
			fmt.Fprintf(w, "%s,2,%s,2000,,-%d.%02d,invoice %d\n", entry, date, cents/100, cents%100, i/2)
		}
	}
}

func costOnly(w *bufio.Writer, r *rand.Rand, n int) {
	fmt.Fprintln(w, "entry_id,line,date,account,cost_center,amount,description")
	for i, entry := 0, 1; i < n; entry++ {
		date := day(r, 1+(entry/50)%36)
		lines := 1 + r.IntN(4)
		for line := 1; line <= lines && i < n; line, i = line+1, i+1 {
			cents := 100 + r.IntN(500_000)
			fmt.Fprintf(w, "INV-%d,%d,%s,%d,%s,%d.%02d,supplier %d item %d\n", entry, line, date, 5000+r.IntN(2000),
				centres[r.IntN(len(centres))], cents/100, cents%100, r.IntN(900), line)
		}
	}
}

func journal(w *bufio.Writer, r *rand.Rand, n int) {
	fmt.Fprintln(w, "entry_id,line,date,account,cost_center,debit,credit,description")
	for i := 0; i < n; {
		entry := fmt.Sprintf("JV-%08x%04x", r.Uint32(), r.IntN(1<<16))
		date := day(r, 1+r.IntN(36))
		lines := 2 + r.IntN(59)
		if lines > n-i {
			lines = n - i
		}
		total := 0
		for line := 1; line <= lines; line, i = line+1, i+1 {
			if line == lines && lines > 1 {
				// The last line credits what the others debited.
				fmt.Fprintf(w, "%s,%d,%s,2400,,,%d.%02d,\"accrual, %s\"\n", entry, line, date, total/100, total%100, date[:7])
				continue
			}
			cents := 100 + r.IntN(800_000)
			total += cents
			centre := centres[r.IntN(len(centres))]
			fmt.Fprintf(w, "%s,%d,%s,%d,%s,%d.%02d,,\"payroll, %s, %s\"\n", entry, line, date, 6000+r.IntN(400), centre,
				cents/100, cents%100, centre, date[:7])
		}
	}
}
