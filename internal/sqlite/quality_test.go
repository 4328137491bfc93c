package sqlite

import (
	"context"
	"fmt"
	"testing"

	"github.com/costdrift/costdrift/internal/costdrift"
)

// A file's rows per period and its rejects, counted against its newest
// period (or the empty period when it stored nothing); replaced when the
// file is read again, dropped when it is forgotten.
func TestSourcePeriods(t *testing.T) {
	ctx := context.Background()
	db, _ := mustOpen(t)
	load := func(path string, lines []costdrift.LedgerLine, rejects ...string) {
		t.Helper()
		run := costdrift.SyncRun{Source: "gl", Role: costdrift.RoleLedger, Kind: "csv"}
		if err := db.BeginSync(ctx, &run); err != nil {
			t.Fatal(err)
		}
		err := db.LoadFile(ctx, &run, costdrift.SourceFile{Source: "gl", Path: path, Size: int64(len(lines)), SHA256: fmt.Sprint(len(lines), len(rejects))},
			func(w costdrift.SourceWriter) error {
				for _, l := range lines {
					if err := w.LedgerLine(l); err != nil {
						return err
					}
				}
				for i, r := range rejects {
					if err := w.Reject(costdrift.Reject{Source: "gl", Location: fmt.Sprintf("%s:%d", path, i+2), Reason: r}); err != nil {
						return err
					}
				}
				return nil
			})
		if err != nil {
			t.Fatal(err)
		}
		if err := db.FinishSync(ctx, &run, nil); err != nil {
			t.Fatal(err)
		}
	}
	show := func() string {
		t.Helper()
		rows, err := db.SourcePeriods(ctx)
		if err != nil {
			t.Fatal(err)
		}
		s := ""
		for _, r := range rows {
			s += fmt.Sprintf("%s %s %q %d/%d %s; ", r.Source, r.Path, r.Period, r.RowsStored, r.RowsRejected, r.Reason)
		}
		return s
	}
	feb := line("F1", 1, 100)
	feb.Period = "2026-02"
	load("/d/a.csv", []costdrift.LedgerLine{line("J1", 1, 100), line("J2", 1, -100), feb},
		`bad amount: amount "1,000.00" has a ','`, `bad amount: amount "2,000.00" has a ','`, `bad date "05/02/2026"`)
	load("/d/b.csv", nil, `bad date "05/03/2026"`, `bad date "06/03/2026"`)
	want := `gl /d/b.csv "" 0/2 bad date "05/03/2026"; gl /d/a.csv "2026-01" 2/0 ; gl /d/a.csv "2026-02" 1/3 bad amount: amount "1,000.00" has a ','; `
	if got := show(); got != want {
		t.Errorf("source periods:\n got %s\nwant %s", got, want)
	}
	// A row repeated exactly is rejected but nothing of it is missing: it
	// does not count against the period.
	load("/d/a.csv", []costdrift.LedgerLine{line("J1", 1, 100), line("J2", 1, -100), line("J2", 1, -100)})
	if _, _, err := db.ForgetFile(ctx, "gl", "/d/b.csv"); err != nil {
		t.Fatal(err)
	}
	if got, want := show(), `gl /d/a.csv "2026-01" 2/0 ; `; got != want {
		t.Errorf("after a.csv read again and b.csv forgotten:\n got %s\nwant %s", got, want)
	}
}
