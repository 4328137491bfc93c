package main

import (
	"fmt"
	"math/rand/v2"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"github.com/costdrift/costdrift/internal/sqlite"
)

// TestMain lets the test binary stand in for the costdrift command, so that
// a test can run a sync in a child process and kill it.
func TestMain(m *testing.M) {
	if os.Getenv("COSTDRIFT_TEST_AS_COMMAND") == "1" {
		main()
		os.Exit(0)
	}
	code := m.Run()
	removeDemoStore()
	os.Exit(code)
}

// killPart is the text of ledger file f in its given version, and the sum
// of its amounts in cents. Versions differ in every amount, as a
// restatement would.
func killPart(f, version, lines int) (string, int64) {
	var b strings.Builder
	var sum int64
	b.WriteString("entry_id,line,date,account,cost_center,amount,description\n")
	for i := 0; i < lines; i++ {
		cents := int64(100 + (i*7919+f*104729+version*31)%900000)
		sum += cents
		fmt.Fprintf(&b, "F%d-%06d,1,2026-%02d-%02d,6100,WELD,%d.%02d,line %d\n", f, i, 1+i%12, 1+i%28, cents/100, cents%100, i)
	}
	return b.String(), sum
}

// A sync killed with SIGKILL at random moments leaves every file either
// wholly stored (in one of its versions) or not at all, and the next sync
// completes it: totals equal a clean run's.
func TestKilledSyncLeavesStoreConsistent(t *testing.T) {
	cfg, dir := setup(t, "")
	gl := filepath.Join(dir, "data", "gl")
	const files, perFile = 3, 30000
	version := make([]int, files)
	sums := map[[2]int]int64{} // (file, version) -> sum
	write := func(f int) {
		text, sum := killPart(f, version[f], perFile)
		sums[[2]int{f, version[f]}] = sum
		writeFile(t, filepath.Join(gl, fmt.Sprintf("part-%d.csv", f)), text)
	}
	for f := 0; f < files; f++ {
		write(f)
	}
	store := filepath.Join(dir, "costdrift.db")
	removeStore := func() {
		for _, suffix := range []string{"", "-wal", "-shm"} {
			os.Remove(store + suffix)
		}
	}

	// How long one whole sync takes here, to aim the kills inside it.
	start := time.Now()
	if err := child(cfg).Run(); err != nil {
		t.Fatal(err)
	}
	full := time.Since(start)
	removeStore()

	r := rand.New(rand.NewPCG(42, 7))
	partial := 0
	for k := 0; k < 10; k++ {
		if k%2 == 0 {
			removeStore() // kill a first sync
		} else {
			version[k%files]++ // kill a sync that restates a file
			write(k % files)
		}
		cmd := child(cfg)
		if err := cmd.Start(); err != nil {
			t.Fatal(err)
		}
		time.Sleep(time.Duration(r.Float64() * float64(full)))
		cmd.Process.Kill()
		cmd.Wait()
		if _, err := os.Stat(store); err != nil {
			continue // killed before the store existed
		}
		if tryCount(store, "SELECT MAX(version) FROM schema_migrations") != sqlite.SchemaVersion() {
			// Killed before the last migration committed (each commits on
			// its own): the store's tables are not all there yet, and the
			// next sync creates the rest.
			t.Logf("kill %d: before the store's migrations were done", k)
			continue
		}
		stored := 0
		for f := 0; f < files; f++ {
			n := count(t, store, fmt.Sprintf("SELECT COUNT(*) FROM gl_lines WHERE entry_id LIKE 'F%d-%%'", f))
			known := count(t, store, fmt.Sprintf("SELECT COUNT(*) FROM source_files WHERE path LIKE '%%part-%d.csv'", f))
			if (n != 0 && n != perFile) || (known == 1) != (n == perFile) {
				t.Fatalf("kill %d: part-%d.csv has %d of %d rows stored, fingerprint recorded %d times", k, f, n, perFile, known)
			}
			if n == 0 {
				continue
			}
			stored++
			sum := int64(count(t, store, fmt.Sprintf("SELECT SUM(amount_minor) FROM gl_lines WHERE entry_id LIKE 'F%d-%%'", f)))
			if sum != sums[[2]int{f, version[f]}] && sum != sums[[2]int{f, version[f] - 1}] {
				t.Fatalf("kill %d: part-%d.csv total %d matches no version of the file", k, f, sum)
			}
		}
		if stored < files {
			partial++
		}
		t.Logf("kill %d after %v: %d of %d ledger files stored", k, full.Round(time.Millisecond), stored, files)
	}
	if partial == 0 {
		t.Errorf("no kill interrupted a sync: the test proves nothing; aim the kills earlier")
	}

	out := mustRun(t, "--config", cfg, "sync")
	var want int64
	for f := 0; f < files; f++ {
		want += sums[[2]int{f, version[f]}]
	}
	if n := count(t, store, "SELECT COUNT(*) FROM gl_lines"); n != files*perFile {
		t.Fatalf("after the last sync: %d rows, want %d\n%s", n, files*perFile, out)
	}
	if sum := count(t, store, "SELECT SUM(amount_minor) FROM gl_lines"); int64(sum) != want {
		t.Errorf("after the last sync: total %d, want %d", sum, want)
	}
	if n := count(t, store, "SELECT COUNT(*) FROM sync_runs WHERE status = 'running'"); n != 0 {
		t.Errorf("%d sync runs still claim to be running", n)
	}
}

func child(cfg string) *exec.Cmd {
	cmd := exec.Command(os.Args[0], "--config", cfg, "sync")
	cmd.Env = append(os.Environ(), "COSTDRIFT_TEST_AS_COMMAND=1")
	return cmd
}
