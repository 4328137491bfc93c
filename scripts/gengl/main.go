// Command gengl writes an invented general-ledger CSV of a given number of
// lines in the canonical layout, for benchmarks. Entries are balanced pairs:
// an expense line and a payables line.
package main

import (
	"bufio"
	"flag"
	"fmt"
	"math/rand/v2"
	"os"
)

func main() {
	n := flag.Int("n", 1_000_000, "lines to write")
	out := flag.String("o", "gl.csv", "output file")
	flag.Parse()
	f, err := os.OpenFile(*out, os.O_WRONLY|os.O_CREATE|os.O_TRUNC, 0o600)
	if err != nil {
		fmt.Fprintln(os.Stderr, err)
		os.Exit(1)
	}
	w := bufio.NewWriterSize(f, 1<<20)
	r := rand.New(rand.NewPCG(1, 2))
	centres := []string{"WELD", "PAINT", "ASSY", "STORE", "ADMIN"}
	fmt.Fprintln(w, "entry_id,line,date,account,cost_center,amount,description")
	for i := 0; i < *n; i += 2 {
		month := 1 + (i/2)%36
		date := fmt.Sprintf("%04d-%02d-%02d", 2023+(month-1)/12, (month-1)%12+1, 1+r.IntN(28))
		cents := 100 + r.IntN(2_000_000)
		account := 5000 + r.IntN(2000)
		entry := fmt.Sprintf("AP-%08d", i/2)
		fmt.Fprintf(w, "%s,1,%s,%d,%s,%d.%02d,invoice %d\n", entry, date, account, centres[r.IntN(len(centres))], cents/100, cents%100, i/2)
		if i+1 < *n {
			fmt.Fprintf(w, "%s,2,%s,2000,,-%d.%02d,invoice %d\n", entry, date, cents/100, cents%100, i/2)
		}
	}
	if err := w.Flush(); err != nil {
		fmt.Fprintln(os.Stderr, err)
		os.Exit(1)
	}
	if err := f.Close(); err != nil {
		fmt.Fprintln(os.Stderr, err)
		os.Exit(1)
	}
}
