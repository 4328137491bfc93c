package costdrift

import (
	"bytes"
	"encoding/json"
	"math"
	"reflect"
)

// AlertEvidence is what an alert's rule decided on, stored with the alert
// as one JSON object (the alerts.evidence column) under the keys the
// fields' tags name. A rule fills the fields of its kind and leaves the
// others nil; a nil field is not stored. A number that is not finite,
// which a statistic can be (R² of a constant series), is stored as null
// (JSON has none, RFC 8259 §6) and reads back as NaN.
//
// Evidence stored under keys no field names, or with a value a field
// cannot hold (written by another version, or by hand), reads back into
// Other and is written again as it was read, so `costdrift alerts show`
// shows what the store holds. Where Other and a field name the same key,
// the field's value is the one stored.
type AlertEvidence struct {
	// A change of class or driver (reclassified, driver_changed): the
	// behaviour before and after, since when, and why.
	ClassBefore  *string `json:"class_before"`
	ClassAfter   *string `json:"class_after"`
	DriverBefore *string `json:"driver_before"`
	DriverAfter  *string `json:"driver_after"`
	Since        *string `json:"since"`
	Reason       *string `json:"reason"`

	// The formula per period before and after the change, and the fit
	// of the new one: a change of class or driver, or a shift.
	FixedBefore *float64 `json:"fixed_before"`
	RateBefore  *float64 `json:"rate_before"`
	FixedAfter  *float64 `json:"fixed_after"`
	RateAfter   *float64 `json:"rate_after"`
	R2          *float64 `json:"r2"`
	N           *int     `json:"n"` // periods fitted

	// A shift at a break (fixed_shift, rate_shift): the test that dated it.
	Test         *string  `json:"test"`
	Statistic    *float64 `json:"statistic"`
	P            *float64 `json:"p"`
	Break        *string  `json:"break"` // first period of the new behaviour
	PeriodsAfter *int     `json:"periods_after"`
	Provisional  *bool    `json:"provisional"`

	// One period's data: the period a spending outlier, an activity out
	// of range or a gap is in.
	Period *string `json:"period"`

	// spending_outlier: the actual cost against the prediction interval
	// of the formula fitted without the period, at its activity.
	Activity               *float64 `json:"activity"` // also out_of_range
	Actual                 *float64 `json:"actual"`
	Expected               *float64 `json:"expected"`
	Low95                  *float64 `json:"low95"`
	High95                 *float64 `json:"high95"`
	FormulaFittedWithoutIt *bool    `json:"formula_fitted_without_it"`
	Repeats                *bool    `json:"repeats"` // the period before was outside on the same side

	// out_of_range: the driver and its relevant range.
	Driver   *string  `json:"driver"`
	RangeMin *float64 `json:"range_min"`
	RangeMax *float64 `json:"range_max"`

	// data_gap: the periods of the window the object posted in.
	PeriodsPosted *int `json:"periods_posted"`

	// source_failure and stale_source.
	FailuresInARow      *int    `json:"failures_in_a_row"`
	Error               *string `json:"error"`
	NewestPeriod        *string `json:"newest_period"`
	ClosedPeriodsBehind *int    `json:"closed_periods_behind"`

	// data_quality: the rows of a source in a period, those rejected, and
	// the file with the most rejects (Reason holds its main reason).
	RowsRead     *int    `json:"rows_read"`
	RowsRejected *int    `json:"rows_rejected"`
	File         *string `json:"file"`

	// pin_review: the pinned formula, its last period, and the data's own
	// estimate of the same model over the periods tested (Test, Statistic,
	// P and N say how it was tested).
	PinnedFixed *float64 `json:"pinned_fixed"`
	PinnedRate  *float64 `json:"pinned_rate"`
	PinnedUntil *string  `json:"pinned_until"`
	DataFixed   *float64 `json:"data_fixed"`
	DataRate    *float64 `json:"data_rate"`

	// Other holds the entries no field took, as JSON reads them.
	Other map[string]any `json:"-"`
}

// evidenceField is one field of AlertEvidence and the key it is stored under.
type evidenceField struct {
	key   string
	index int
}

// evidenceFields are AlertEvidence's fields but Other, with their keys.
var evidenceFields, evidenceFieldByKey = func() ([]evidenceField, map[string]int) {
	t := reflect.TypeFor[AlertEvidence]()
	var fields []evidenceField
	byKey := map[string]int{}
	for i := range t.NumField() {
		key := t.Field(i).Tag.Get("json")
		if key == "-" {
			continue
		}
		byKey[key] = i
		fields = append(fields, evidenceField{key: key, index: i})
	}
	return fields, byKey
}()

// Map is every entry of the evidence by key, as the store writes it: the
// fields' numbers as float64 (as a JSON object reads back into Go), Other's
// entries as they are, and numbers that are not finite as nil. It is never
// nil; an alert without evidence has an empty map.
func (e AlertEvidence) Map() map[string]any {
	m := make(map[string]any, len(e.Other))
	for k, v := range e.Other {
		m[k] = finiteJSON(v)
	}
	v := reflect.ValueOf(e)
	for _, f := range evidenceFields {
		p := v.Field(f.index)
		if p.IsNil() {
			continue
		}
		switch x := p.Elem(); x.Kind() {
		case reflect.Float64:
			m[f.key] = finiteJSON(x.Float())
		case reflect.Int:
			m[f.key] = float64(x.Int())
		default:
			m[f.key] = x.Interface()
		}
	}
	return m
}

// MarshalJSON writes the evidence as one object, its keys sorted.
func (e AlertEvidence) MarshalJSON() ([]byte, error) {
	return json.Marshal(e.Map())
}

// UnmarshalJSON reads an object written by MarshalJSON, or by an earlier
// version: each key into its field when the value fits it, else into Other.
func (e *AlertEvidence) UnmarshalJSON(data []byte) error {
	var raw map[string]json.RawMessage
	if err := json.Unmarshal(data, &raw); err != nil {
		return err
	}
	*e = AlertEvidence{}
	v := reflect.ValueOf(e).Elem()
	for key, value := range raw {
		if i, ok := evidenceFieldByKey[key]; ok {
			field := v.Field(i)
			p := reflect.New(field.Type().Elem())
			switch {
			case bytes.Equal(bytes.TrimSpace(value), []byte("null")):
				if p.Elem().Kind() == reflect.Float64 { // a number that was not finite
					p.Elem().SetFloat(math.NaN())
					field.Set(p)
					continue
				}
			case json.Unmarshal(value, p.Interface()) == nil:
				field.Set(p)
				continue
			}
		}
		var x any
		if err := json.Unmarshal(value, &x); err != nil {
			return err
		}
		if e.Other == nil {
			e.Other = map[string]any{}
		}
		e.Other[key] = x
	}
	return nil
}

// finiteJSON replaces numbers that are not finite by nil in the shapes
// evidence is built from: maps, slices of any or of float64, and floats.
// Beyond ±1e300 counts as infinite: the store writes an infinite break
// statistic as the largest float, JSON having no infinity.
func finiteJSON(v any) any {
	switch v := v.(type) {
	case float64:
		if math.IsNaN(v) || math.IsInf(v, 0) || math.Abs(v) > 1e300 {
			return nil
		}
	case float32:
		return finiteJSON(float64(v))
	case map[string]any:
		out := make(map[string]any, len(v))
		for k, x := range v {
			out[k] = finiteJSON(x)
		}
		return out
	case []any:
		out := make([]any, len(v))
		for i, x := range v {
			out[i] = finiteJSON(x)
		}
		return out
	case []float64:
		out := make([]any, len(v))
		for i, x := range v {
			out[i] = finiteJSON(x)
		}
		return out
	}
	return v
}
