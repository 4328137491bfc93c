package sqlite

import (
	"context"
	"errors"
	"testing"
	"time"

	"github.com/costdrift/costdrift/internal/costdrift"
)

// A cycle is recorded running, then ok or failed with its stage durations;
// one a killed process left running is marked failed by the next.
func TestCyclesRecordOutcomeAndStages(t *testing.T) {
	db, _ := mustOpen(t)
	ctx := context.Background()
	clock := time.Date(2026, 3, 2, 6, 0, 0, 0, time.UTC)
	db.Now = func() time.Time { return clock }

	var killed costdrift.Cycle
	if err := db.BeginCycle(ctx, &killed); err != nil {
		t.Fatal(err)
	}
	clock = clock.Add(time.Minute)
	var ok costdrift.Cycle
	if err := db.BeginCycle(ctx, &ok); err != nil {
		t.Fatal(err)
	}
	ok.Stages = map[string]time.Duration{"sync": 1500 * time.Millisecond, "analyze": 250 * time.Millisecond}
	clock = clock.Add(2 * time.Second)
	if err := db.FinishCycle(ctx, &ok, nil); err != nil {
		t.Fatal(err)
	}
	var failed costdrift.Cycle
	if err := db.BeginCycle(ctx, &failed); err != nil {
		t.Fatal(err)
	}
	if err := db.FinishCycle(ctx, &failed, errors.New("sync gl: folder missing")); err != nil {
		t.Fatal(err)
	}

	got, err := db.Cycles(ctx, 10)
	if err != nil {
		t.Fatal(err)
	}
	if len(got) != 3 {
		t.Fatalf("%d cycles, want 3", len(got))
	}
	if got[0].ID != failed.ID || got[0].Status != "failed" || got[0].Error != "sync gl: folder missing" {
		t.Errorf("newest cycle %+v", got[0])
	}
	if got[1].Status != "ok" || got[1].Stages["sync"] != 1500*time.Millisecond || got[1].Stages["analyze"] != 250*time.Millisecond ||
		!got[1].FinishedAt.Equal(clock) || !got[1].StartedAt.Equal(clock.Add(-2*time.Second)) {
		t.Errorf("ok cycle %+v", got[1])
	}
	if got[2].Status != "failed" || got[2].Error != "interrupted: the process stopped before this cycle finished" {
		t.Errorf("cycle left running %+v", got[2])
	}
}
