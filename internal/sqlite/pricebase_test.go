package sqlite

import (
	"testing"

	"github.com/costdrift/costdrift/internal/costdrift"
)

// TestPriceBaseRoundTrip: a behaviour fitted on restated costs keeps the
// period whose prices it is at in price_base, read back by every reader
// (the brief one the alert rules use too); one fitted on costs as posted
// has NULL there (README, Prices and inflation).
func TestPriceBaseRoundTrip(t *testing.T) {
	db, c := mustOpen(t)
	restated := mixed()
	restated.PriceBase = "2026-06"
	save(t, db, c, nil, restated, fixed())
	if got, want := dump(t, db, `SELECT object, price_base FROM behaviour_history ORDER BY object`), `"6200/WELD"|"2026-06"`+"\n"+`"6500"|NULL`+"\n"; got != want {
		t.Errorf("price_base column:\n%s\nwant\n%s", got, want)
	}
	bs := current(t, db)
	if len(bs) != 2 || bs[0].PriceBase != "2026-06" || bs[1].PriceBase != "" {
		t.Fatalf("read back %d behaviours, price bases %q", len(bs), bases(bs))
	}
	var brief []string
	err := db.EachCurrentBehaviour(t.Context(), 10, func(current []costdrift.Behaviour) error {
		brief = append(brief, bases(current)...)
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	if len(brief) != 2 || brief[0] != "2026-06" || brief[1] != "" {
		t.Errorf("brief behaviours' price bases %q, want [2026-06 \"\"]", brief)
	}
}

func bases(bs []costdrift.Behaviour) []string {
	out := make([]string, len(bs))
	for i, b := range bs {
		out[i] = b.PriceBase
	}
	return out
}
