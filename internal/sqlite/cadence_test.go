package sqlite

import (
	"context"
	"reflect"
	"testing"

	"github.com/costdrift/costdrift/internal/costdrift"
)

// quarterly is an insurance premium of 3,000 posted in March, June,
// September and December: 1,000 a period spread evenly.
func quarterly() costdrift.Behaviour {
	b := fixed()
	b.Object = costdrift.CostObject{Account: "6600"}
	b.FixedPerPeriod, b.MeanCost = 1000, 1000
	b.Reason = "posted once a quarter"
	b.Cadence = &costdrift.Cadence{Every: 3, Phase: 0}
	b.Prediction = &costdrift.PredictionTerms{Intercept: true, Coef: []float64{1000}, Cov: []float64{1.0 / 12}, S: 20, N: 12, DF: 11}
	return b
}

// TestCadenceRoundTrip: a behaviour's cadence is stored in the columns
// cadence and cadence_phase (NULL without one) and read back, by every
// reader of behaviours, the alert rules' brief one included; the view
// cadence_behaviour shows one posting as the cadence times the amount per
// period (3 × 1,000).
func TestCadenceRoundTrip(t *testing.T) {
	db, c := mustOpen(t)
	save(t, db, c, nil, fixed(), quarterly())
	got := current(t, db)
	if len(got) != 2 || got[0].Cadence != nil || got[1].Cadence == nil || *got[1].Cadence != *quarterly().Cadence ||
		!reflect.DeepEqual(got[1].Prediction, quarterly().Prediction) {
		t.Errorf("CurrentBehaviour: %+v", got)
	}
	var brief []costdrift.Behaviour
	if err := db.EachCurrentBehaviour(context.Background(), 10, func(bs []costdrift.Behaviour) error {
		brief = append(brief, bs...)
		return nil
	}); err != nil {
		t.Fatal(err)
	}
	if len(brief) != 2 || brief[0].Cadence != nil || brief[1].Cadence == nil || *brief[1].Cadence != *quarterly().Cadence {
		t.Errorf("brief behaviours' cadences %+v", brief)
	}
	if got, want := dump(t, db, `SELECT object, cadence, cadence_phase FROM behaviour_history ORDER BY object`), `"6500"|NULL|NULL
"6600"|int64:3|int64:0
`; got != want {
		t.Errorf("columns:\n%s want\n%s", got, want)
	}
	if got, want := dump(t, db, `SELECT object, cadence, cadence_phase, per_posting, per_period FROM cadence_behaviour`), `"6600"|int64:3|int64:0|float64:3000|float64:1000
`; got != want {
		t.Errorf("view:\n%s want\n%s", got, want)
	}
}

// TestReversedLines: of an object's lines, only those with a line of the
// opposite amount on the same account and cost centre within the periods
// asked for are read, with their period and description; the object's
// other lines, other cost centres and periods outside are not.
func TestReversedLines(t *testing.T) {
	db, _ := mustOpen(t)
	loadFile(t, db, "/gl.csv", []costdrift.LedgerLine{
		ledgerLine("gl", "J1", 1, "2025-11-30", "6100", "PLANT", 400000, "Accrual electricity"),
		ledgerLine("gl", "J1", 2, "2025-11-30", "2900", "", -400000, "Accrual electricity"),
		ledgerLine("gl", "J2", 1, "2025-12-01", "6100", "PLANT", -400000, "Reversal electricity"),
		ledgerLine("gl", "J2", 2, "2025-12-01", "2900", "", 400000, "Reversal electricity"),
		ledgerLine("gl", "J3", 1, "2025-12-10", "6100", "PLANT", 380000, "Invoice"),
		ledgerLine("gl", "J3", 2, "2025-12-10", "2900", "", -380000, "Invoice"),
		ledgerLine("gl", "J4", 1, "2025-11-30", "6100", "OFFICE", 400000, "Accrual electricity"),
		ledgerLine("gl", "J4", 2, "2025-11-30", "2900", "", -400000, "Accrual electricity"),
		ledgerLine("gl", "J5", 1, "2026-01-02", "6100", "PLANT", -380000, "Credit"),
		ledgerLine("gl", "J5", 2, "2026-01-02", "2900", "", 380000, "Credit"),
		ledgerLine("gl", "J6", 1, "2025-12-01", "6100", "OFFICE", -400000, "Reversal electricity"),
		ledgerLine("gl", "J6", 2, "2025-12-01", "2900", "", 400000, "Reversal electricity"),
	})
	got, err := db.ReversedLines(context.Background(), costdrift.CostObject{Account: "6100", CostCenter: "PLANT"}, false, "2025-11", "2025-12")
	if err != nil {
		t.Fatal(err)
	}
	if len(got) != 2 || got[0].EntryID != "J1" || got[0].Period != "2025-11" || got[0].AmountMinor != 400000 ||
		got[1].EntryID != "J2" || got[1].Description != "Reversal electricity" || got[1].CostCenter != "PLANT" {
		t.Errorf("lines %+v, want J1 and J2 of PLANT", got)
	}
	// At account grain the other cost centre's pair is read too, each
	// line paired within its own cost centre.
	all, err := db.ReversedLines(context.Background(), costdrift.CostObject{Account: "6100"}, true, "2025-11", "2025-12")
	if err != nil || len(all) != 4 {
		t.Errorf("account grain: %d lines, %v; want J1, J4, J2 and J6", len(all), err)
	}
}
