package sqlite

import (
	"context"
	"testing"
	"time"

	"github.com/costdrift/costdrift/internal/costdrift"
)

// backoff doubles from 5 minutes, as the mail package's schedule does
// (common practice: exponential backoff).
func backoff(attempts int) time.Duration { return 5 * time.Minute << (attempts - 1) }

func TestDeliveriesRecordSuccessFailureAndRetry(t *testing.T) {
	db, _ := mustOpen(t)
	ctx := context.Background()
	ch := apply(t, db, "2025-07", kinds(costdrift.AlertRateShift, costdrift.AlertDataGap), rateShift, dataGap)
	shiftID, gapID := ch.New[0], ch.New[1]
	t0 := time.Date(2025, 8, 1, 6, 0, 0, 0, time.UTC)
	const to = "costs@example.test"

	if err := db.RecordDeliveryFailed(ctx, to, []int64{shiftID, gapID}, "smtp 127.0.0.1:1: connection refused", t0, backoff); err != nil {
		t.Fatal(err)
	}
	if err := db.RecordDeliveryFailed(ctx, to, []int64{shiftID}, "smtp 127.0.0.1:1: connection refused", t0.Add(5*time.Minute), backoff); err != nil {
		t.Fatal(err)
	}
	got, err := db.Deliveries(ctx, to)
	if err != nil {
		t.Fatal(err)
	}
	d := got[shiftID][to]
	// Two failures in a row: attempts 2, next try 5 min × 2 = 10 min after the second.
	if d.Status != DeliveryFailed || d.Attempts != 2 || d.SeveritySent != "" || d.LastError != "smtp 127.0.0.1:1: connection refused" ||
		!d.NextAttempt.Equal(t0.Add(15*time.Minute)) || !d.SentAt.IsZero() {
		t.Errorf("after two failures: %+v", d)
	}
	if g := got[gapID][to]; g.Attempts != 1 || !g.NextAttempt.Equal(t0.Add(5*time.Minute)) {
		t.Errorf("after one failure: %+v", g)
	}

	sentAt := t0.Add(20 * time.Minute)
	if err := db.RecordDeliverySent(ctx, to, map[int64]costdrift.Severity{shiftID: costdrift.SeverityWarning}, sentAt); err != nil {
		t.Fatal(err)
	}
	got, err = db.Deliveries(ctx, "")
	if err != nil {
		t.Fatal(err)
	}
	d = got[shiftID][to]
	if d.Status != DeliverySent || d.Attempts != 0 || d.SeveritySent != costdrift.SeverityWarning || d.LastError != "" ||
		!d.NextAttempt.IsZero() || !d.SentAt.Equal(sentAt) {
		t.Errorf("after success: %+v", d)
	}

	// A failed re-send after an escalation keeps what was sent before.
	if err := db.RecordDeliveryFailed(ctx, to, []int64{shiftID}, "451 try later", sentAt.Add(time.Hour), backoff); err != nil {
		t.Fatal(err)
	}
	got, _ = db.Deliveries(ctx, to)
	d = got[shiftID][to]
	if d.Status != DeliveryFailed || d.Attempts != 1 || d.SeveritySent != costdrift.SeverityWarning || !d.SentAt.Equal(sentAt) {
		t.Errorf("failed re-send: %+v", d)
	}
	if n := count(t, db, "deliveries"); n != 2 {
		t.Errorf("%d delivery rows, want 2 (one per alert and recipient)", n)
	}
	if other, _ := db.Deliveries(ctx, "someone@example.test"); len(other) != 0 {
		t.Errorf("deliveries of another recipient: %v", other)
	}
	if err := db.RecordDeliverySent(ctx, to, map[int64]costdrift.Severity{shiftID: "loud"}, sentAt); err == nil {
		t.Error("RecordDeliverySent took severity \"loud\"")
	}
}
