package sqlite

import (
	"context"
	"testing"

	"github.com/costdrift/costdrift/internal/costdrift"
)

// The history of the renewed lease, as TestBreakDatesHistory stores it:
// 2,800.00 until 2025-06, 3,300.00 from 2025-07 to 2026-02, 3,600.00 from
// 2026-03 on; oldest first, each with its periods and runs.
func TestBehaviourHistory(t *testing.T) {
	db, c := mustOpen(t)
	lease := renewedLease()
	save(t, db, c, nil, lease)
	later := lease
	later.FixedPerPeriod, later.Since = 3600, "2026-03"
	later.Break = &costdrift.Break{Period: "2026-03", LastBefore: "2026-02", WindowFrom: "2023-09", FixedBefore: 3300, FixedAfter: 3600}
	save(t, db, c, nil, later)

	spans, err := db.BehaviourHistory(context.Background(), "6110/PAINT")
	if err != nil {
		t.Fatal(err)
	}
	want := []struct {
		from, to string
		fixed    float64
		current  bool
	}{{"2023-07", "2025-06", 2800, false}, {"2025-07", "2026-02", 3300, false}, {"2026-03", "", 3600, true}}
	if len(spans) != len(want) {
		t.Fatalf("%d spans, want %d: %+v", len(spans), len(want), spans)
	}
	for i, w := range want {
		s := spans[i]
		if s.From != w.from || s.To != w.to || s.Behaviour.FixedPerPeriod != w.fixed || (s.ClosedAt == "") != w.current ||
			s.Behaviour.Object.String() != "6110/PAINT" || s.FirstRunID == 0 || s.FoundAt == "" {
			t.Errorf("span %d: %s to %s, fixed %v, closed %q, runs %d–%d; want %s to %s, fixed %v", i, s.From, s.To,
				s.Behaviour.FixedPerPeriod, s.ClosedAt, s.FirstRunID, s.LastRunID, w.from, w.to, w.fixed)
		}
	}
	if spans, err := db.BehaviourHistory(context.Background(), "9999/NONE"); err != nil || len(spans) != 0 {
		t.Errorf("an object never analysed: %v, %v", spans, err)
	}
}
