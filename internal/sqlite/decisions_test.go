package sqlite

import (
	"context"
	"strings"
	"testing"
	"time"

	"github.com/costdrift/costdrift/internal/costdrift"
)

func TestDecisionsAreAppendOnlyAndViewsReadTheLatest(t *testing.T) {
	ctx := context.Background()
	db, _ := mustOpen(t)
	at := time.Date(2025, 7, 2, 9, 0, 0, 0, time.UTC)
	pin := costdrift.Pin{Object: "6100/ADMIN", Class: costdrift.Fixed, Fixed: 2600, By: "ana", At: at, Reason: "rent by contract"}
	first, err := db.Pin(ctx, pin)
	if err != nil {
		t.Fatal(err)
	}
	pin.Fixed, pin.Reason = 2650, "contract indexed"
	second, err := db.Pin(ctx, pin)
	if err != nil {
		t.Fatal(err)
	}
	pins, err := db.Pins(ctx)
	if err != nil {
		t.Fatal(err)
	}
	if got := pins["6100/ADMIN"]; got.Fixed != 2650 || got.DecisionID != second || got.By != "ana" || !got.At.Equal(at) || got.Reason != "contract indexed" {
		t.Fatalf("current pin %+v, want the second (decision %d, fixed 2650)", got, second)
	}
	if err := db.Unpin(ctx, "6100/ADMIN", "ben", "contract ended", at.Add(time.Hour)); err != nil {
		t.Fatal(err)
	}
	if err := db.Unpin(ctx, "6100/ADMIN", "ben", "again", at.Add(time.Hour)); err != ErrNotPinned {
		t.Fatalf("second unpin: %v, want ErrNotPinned", err)
	}
	if pins, _ := db.Pins(ctx); len(pins) != 0 {
		t.Fatalf("pins after unpin: %v", pins)
	}
	if err := db.Exclude(ctx, "6200/WELD", []string{"2025-03", "2025-01"}, "ana", "one-off back-payment", at); err != nil {
		t.Fatal(err)
	}
	if err := db.Include(ctx, "6200/WELD", []string{"2025-03"}, "ana", "was right after all", at); err != nil {
		t.Fatal(err)
	}
	if err := db.Include(ctx, "6200/WELD", []string{"2025-01", "2025-02"}, "ana", "x", at); err == nil || !strings.Contains(err.Error(), "2025-02") {
		t.Fatalf("including a period never excluded: %v, want an error naming 2025-02", err)
	}
	xs, err := db.Exclusions(ctx)
	if err != nil {
		t.Fatal(err)
	}
	if got := xs["6200/WELD"]; len(got) != 1 || got[0].Period != "2025-01" {
		t.Fatalf("exclusions %+v, want 2025-01 alone (the refused include stored nothing)", got)
	}
	log, err := db.Decisions(ctx, "")
	if err != nil {
		t.Fatal(err)
	}
	kinds := ""
	for _, d := range log {
		kinds += string(d.Kind) + " "
	}
	if kinds != "pin pin unpin exclude exclude include " {
		t.Fatalf("log kinds %q", kinds)
	}
	if log[1].Replaces != first || log[2].Replaces != second || log[5].Replaces != log[3].ID {
		t.Fatalf("replaces: %d %d %d, want %d %d %d", log[1].Replaces, log[2].Replaces, log[5].Replaces, first, second, log[3].ID)
	}
	for _, stmt := range []string{`UPDATE decisions SET reason = 'edited'`, `DELETE FROM decisions`} {
		if _, err := db.SQL().Exec(stmt); err == nil || !strings.Contains(err.Error(), "kept as made") {
			t.Fatalf("%s: %v, want it refused", stmt, err)
		}
	}
	if n := count(t, db, "decision_log"); n != 6 {
		t.Fatalf("decision_log has %d rows, want 6", n)
	}
	for _, view := range []string{"current_approvals", "approved_formulas", "proposals"} {
		if n := count(t, db, view); n != 0 {
			t.Fatalf("%s has %d rows in a store without analyses or approvals", view, n)
		}
	}
}
