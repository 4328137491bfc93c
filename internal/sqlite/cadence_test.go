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
