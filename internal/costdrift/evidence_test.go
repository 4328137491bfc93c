package costdrift

import (
	"encoding/json"
	"math"
	"reflect"
	"testing"
)

// TestAlertEvidenceKeepsStoredJSON: evidence as the rules stored it before
// it had a type (a map marshalled with its keys sorted, from a run of the
// demo) reads into the fields and writes back byte for byte, a null (a
// number that was not finite) included.
func TestAlertEvidenceKeepsStoredJSON(t *testing.T) {
	for _, stored := range []string{
		`{"break":"2025-07","fixed_after":3300,"fixed_before":2800,"n":12,"p":0,"periods_after":12,"provisional":false,"r2":null,` +
			`"rate_after":0,"rate_before":0,"statistic":116823110451200000,"test":"sup-F (Quandt–Andrews, 15 % trimming), Hansen's approximation (far below the level)"}`,
		`{"break":"2025-02","fixed_after":0,"fixed_before":0,"n":17,"p":7.490029449753057e-156,"periods_after":17,"provisional":false,` +
			`"r2":0.994603288729118,"rate_after":11.917377414894887,"rate_before":14.475577015728945,"statistic":696.1563406186984,"test":"sup-F"}`,
		`{"activity":1335.1,"actual":2251.14,"expected":2371.6684053068575,"formula_fitted_without_it":true,"high95":2456.2014905331034,` +
			`"low95":2287.1353200806116,"period":"2026-06","repeats":false}`,
		`{"class_after":"mixed","class_before":"fixed","driver_after":"machine_hours","driver_before":"","fixed_after":850,"fixed_before":2100,` +
			`"n":36,"r2":0.82,"rate_after":3.125,"rate_before":null,"reason":"slope significant","since":"2025-09"}`,
		`{"activity":1900,"driver":"machine_hours","period":"2026-06","range_max":1533.1,"range_min":501.1}`,
		`{"period":"2026-04","periods_posted":33}`,
		`{"error":"data/gl.csv: no such file","failures_in_a_row":2}`,
		`{"closed_periods_behind":3,"newest_period":"2026-02"}`,
	} {
		var e AlertEvidence
		if err := json.Unmarshal([]byte(stored), &e); err != nil {
			t.Fatalf("%s: %v", stored, err)
		}
		if len(e.Other) != 0 {
			t.Errorf("%s: keys left to Other: %v", stored, e.Other)
		}
		if got, err := json.Marshal(e); err != nil || string(got) != stored {
			t.Errorf("read and written again:\n got  %s (%v)\n want %s", got, err, stored)
		}
	}
}

func TestAlertEvidenceFields(t *testing.T) {
	var e AlertEvidence
	stored := `{"break":"2025-07","n":12,"p":7.5e-156,"provisional":true,"r2":null}`
	if err := json.Unmarshal([]byte(stored), &e); err != nil {
		t.Fatal(err)
	}
	if e.Break == nil || *e.Break != "2025-07" || e.N == nil || *e.N != 12 || e.P == nil || *e.P != 7.5e-156 ||
		e.Provisional == nil || !*e.Provisional || e.R2 == nil || !math.IsNaN(*e.R2) || e.Statistic != nil || e.Test != nil {
		t.Errorf("%s read as %+v", stored, e)
	}
	// Map gives what the store holds as JSON reads it: a whole number as a
	// float64, the null as nil, nothing for the fields not recorded.
	want := map[string]any{"break": "2025-07", "n": 12.0, "p": 7.5e-156, "provisional": true, "r2": nil}
	if got := e.Map(); !reflect.DeepEqual(got, want) {
		t.Errorf("Map() = %v, want %v", got, want)
	}
	if got := (AlertEvidence{}).Map(); got == nil || len(got) != 0 {
		t.Errorf("no evidence: Map() = %#v, want an empty map", got)
	}
	// A number that is not finite, as a rule hands it over, is stored as
	// null (RFC 8259 §6: JSON has no NaN or infinity).
	if got, err := json.Marshal(AlertEvidence{Statistic: new(math.Inf(1)), R2: new(math.NaN()), N: new(3)}); err != nil ||
		string(got) != `{"n":3,"r2":null,"statistic":null}` {
		t.Errorf("not finite: %s, %v", got, err)
	}
}

// TestAlertEvidenceOther: keys no field names, and values a field cannot
// hold, are kept as read, so that nothing stored is lost or changed.
func TestAlertEvidenceOther(t *testing.T) {
	stored := `{"fits":[{"from":"2023-07","r2":0.97}],"n":36.5,"old_formula":"cost = 4,210.50 + 1.88 per machine hour","period":null,"test":"sup-F"}`
	var e AlertEvidence
	if err := json.Unmarshal([]byte(stored), &e); err != nil {
		t.Fatal(err)
	}
	wantOther := map[string]any{"fits": []any{map[string]any{"from": "2023-07", "r2": 0.97}}, "n": 36.5,
		"old_formula": "cost = 4,210.50 + 1.88 per machine hour", "period": nil}
	if e.Test == nil || *e.Test != "sup-F" || e.N != nil || e.Period != nil || !reflect.DeepEqual(e.Other, wantOther) {
		t.Errorf("%s read as %+v, Other %v", stored, e, e.Other)
	}
	if got, _ := json.Marshal(e); string(got) != stored {
		t.Errorf("written again:\n got  %s\n want %s", got, stored)
	}
	// Where Other and a field name the same key, the field is stored.
	both := AlertEvidence{N: new(12), Other: map[string]any{"n": 99, "levels": []float64{1, math.NaN()}}}
	if got, _ := json.Marshal(both); string(got) != `{"levels":[1,null],"n":12}` {
		t.Errorf("field and Other on one key: %s", got)
	}
	if err := json.Unmarshal([]byte(`["not an object"]`), &e); err == nil {
		t.Error("a JSON array read as evidence")
	}
}

// TestAlertEvidenceHasNoStandInForInfinity: the store writes an infinite
// break statistic (an exact step) as the largest float, which JSON can
// hold; evidence shows it as null, as it shows an infinity, so no output
// carries 1.7976931348623157e+308.
func TestAlertEvidenceHasNoStandInForInfinity(t *testing.T) {
	for _, v := range []float64{math.MaxFloat64, -math.MaxFloat64, math.Inf(1)} {
		e := AlertEvidence{Statistic: &v}
		got, err := json.Marshal(e)
		if err != nil || string(got) != `{"statistic":null}` {
			t.Errorf("statistic %g: %s (%v), want null", v, got, err)
		}
	}
}
