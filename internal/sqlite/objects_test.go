package sqlite

import (
	"context"
	"fmt"
	"slices"
	"testing"

	"github.com/costdrift/costdrift/internal/costdrift"
)

// manyObjects stores n behaviours: accounts 7000… over cost centres A, B
// and C in turn, alternately fixed and mixed, R² rising with the index,
// the later half found from 2025-01.
func manyObjects(t testing.TB, db *DB, c *clock, n int) {
	t.Helper()
	bs := make([]costdrift.Behaviour, n)
	for i := range bs {
		b := mixed()
		b.Object = costdrift.CostObject{Account: fmt.Sprint(7000 + i/3), CostCenter: string(rune('A' + i%3))}
		b.R2 = float64(i) / float64(n)
		if i%2 == 0 {
			b = fixed()
			b.Object = costdrift.CostObject{Account: fmt.Sprint(7000 + i/3), CostCenter: string(rune('A' + i%3))}
		}
		if i >= n/2 {
			b.Since = "2025-01"
		}
		bs[i] = b
	}
	run := analysisRun(c)
	run.Objects = n
	if err := db.SaveAnalysis(context.Background(), run, nil, bs); err != nil {
		t.Fatal(err)
	}
}

// Pages follow one another without gap or overlap in every order, each
// filter selects what it names, and the total counts every match.
func TestObjectPage(t *testing.T) {
	db, c := mustOpen(t)
	ctx := context.Background()
	manyObjects(t, db, c, 120)
	mustExec(t, db, `INSERT INTO sync_runs (id, source, role, kind, started_at, status) VALUES (1, 'coa', 'accounts', 'csv', '2026-07-01T00:00:00Z', 'ok')`)
	mustExec(t, db, `INSERT INTO accounts (source, account, name, sync_run_id) VALUES ('coa', '7001', 'Freight 100% inbound_', 1)`)

	for sort := range ObjectSorts {
		for _, desc := range []bool{false, true} {
			var got []string
			for offset := 0; ; offset += 7 {
				page, total, err := db.ObjectPage(ctx, ObjectQuery{Sort: sort, Descending: desc, Limit: 7, Offset: offset})
				if err != nil {
					t.Fatal(err)
				}
				if total != 120 {
					t.Fatalf("%s: total %d, want 120", sort, total)
				}
				if len(page) == 0 {
					break
				}
				for _, b := range page {
					got = append(got, b.Object.String())
				}
			}
			sorted := slices.Clone(got)
			slices.Sort(sorted)
			if len(slices.Compact(sorted)) != 120 {
				t.Errorf("%s desc=%v: %d distinct objects over the pages, want 120", sort, desc, len(slices.Compact(sorted)))
			}
			if sort == "object" && !desc && (got[0] != "7000/A" || got[119] != "7039/C") {
				t.Errorf("by object: first %s, last %s; want 7000/A, 7039/C", got[0], got[119])
			}
			if sort == "r2" && desc && got[0] != "7039/C" { // the highest R² (119/120) is the last object, a mixed one
				t.Errorf("by R² descending: first %s, want 7039/C", got[0])
			}
		}
	}

	for _, tc := range []struct {
		q    ObjectQuery
		want int
	}{
		{ObjectQuery{CostCenter: "B"}, 40},
		{ObjectQuery{Account: "7002"}, 3},
		{ObjectQuery{Class: costdrift.Fixed}, 60},
		{ObjectQuery{Class: costdrift.Mixed, CostCenter: "A"}, 20},
		{ObjectQuery{ChangedSince: "2025-01"}, 60},
		{ObjectQuery{ChangedSince: "2025-02"}, 0},
		{ObjectQuery{Search: "7010/"}, 3},
		{ObjectQuery{Search: "freight 100%"}, 3}, // the account's name, any case; % matches itself
		{ObjectQuery{Search: "100_"}, 0},         // _ matches itself, not any one character
		{ObjectQuery{Search: "inbound_"}, 3},
	} {
		page, total, err := db.ObjectPage(ctx, ObjectQuery{CostCenter: tc.q.CostCenter, Account: tc.q.Account, Class: tc.q.Class,
			ChangedSince: tc.q.ChangedSince, Search: tc.q.Search, Limit: 200})
		if err != nil {
			t.Fatal(err)
		}
		if total != tc.want || len(page) != tc.want {
			t.Errorf("%+v: total %d, page %d; want %d", tc.q, total, len(page), tc.want)
		}
	}
	if _, _, err := db.ObjectPage(ctx, ObjectQuery{Sort: "amount; DROP TABLE accounts", Limit: 5}); err == nil {
		t.Error("an unknown sort was accepted")
	}

	counts, err := db.ClassCounts(ctx)
	if err != nil {
		t.Fatal(err)
	}
	want := []ClassCount{{"A", costdrift.Fixed, 20}, {"A", costdrift.Mixed, 20}, {"B", costdrift.Fixed, 20}, {"B", costdrift.Mixed, 20},
		{"C", costdrift.Fixed, 20}, {"C", costdrift.Mixed, 20}}
	if !slices.Equal(counts, want) {
		t.Errorf("class counts %v, want %v", counts, want)
	}
	run, err := db.LatestAnalysis(ctx)
	if err != nil || run == nil || run.Objects != 120 {
		t.Errorf("latest analysis %+v, %v; want the run of 120 objects", run, err)
	}
}
