package sqlite

import (
	"context"
	"errors"
	"math"
	"reflect"
	"strings"
	"testing"
	"time"

	"github.com/costdrift/costdrift/internal/costdrift"
	"github.com/costdrift/costdrift/migrations"
)

// raise is an alert as a rule would hand it over; the discriminator is "".
// The evidence is given by key, as any version may have written it.
func raise(kind costdrift.AlertKind, object string, severity costdrift.Severity, period, message string, evidence map[string]any) costdrift.Alert {
	return costdrift.Alert{Kind: kind, Object: object, Severity: severity, Period: period, Message: message,
		Fingerprint: costdrift.Fingerprint(kind, object, ""), Evidence: costdrift.AlertEvidence{Other: evidence}}
}

var (
	rateShift = raise(costdrift.AlertRateShift, "6200/WELD", costdrift.SeverityWarning, "2025-07",
		"rate per machine hour up from 1.88 to 2.21 since 2025-07",
		map[string]any{"test": "sup-F", "p_value": 0.0012, "n": 36, "old_formula": "cost = 4,210.50 + 1.88 per machine hour"})
	dataGap = raise(costdrift.AlertDataGap, "6500", costdrift.SeverityWarning, "2025-05", "no rent posted in 2025-05", nil)
	outlier = raise(costdrift.AlertSpendingOutlier, "6400/PAINT", costdrift.SeverityInfo, "2025-05",
		"paint spending 12,400.00 above the 95 % prediction interval", map[string]any{"upper": 11800.5})
)

func apply(t *testing.T, db *DB, period string, evaluated []costdrift.AlertKind, raised ...costdrift.Alert) AlertChanges {
	t.Helper()
	ch, err := db.ApplyAlerts(context.Background(), raised, evaluated, period)
	if err != nil {
		t.Fatalf("ApplyAlerts(%s): %v", period, err)
	}
	return ch
}

func getAlert(t *testing.T, db *DB, id int64) costdrift.Alert {
	t.Helper()
	a, err := db.Alert(context.Background(), id)
	if err != nil {
		t.Fatalf("Alert(%d): %v", id, err)
	}
	return a
}

func kinds(ks ...costdrift.AlertKind) []costdrift.AlertKind { return ks }

func checkChanges(t *testing.T, got, want AlertChanges) {
	t.Helper()
	if !reflect.DeepEqual(got, want) {
		t.Errorf("changes %+v, want %+v", got, want)
	}
}

func TestApplyAlertsInsertsNew(t *testing.T) {
	db, c := mustOpen(t)
	stale := raise(costdrift.AlertStaleSource, "activity", costdrift.SeverityWarning, "", "no activity for 45 days", nil)
	ch := apply(t, db, "2025-05", kinds(costdrift.AlertRateShift, costdrift.AlertDataGap, costdrift.AlertStaleSource), rateShift, dataGap, stale)
	checkChanges(t, ch, AlertChanges{New: []int64{1, 2, 3}})
	// Without a period of its own, an alert takes the evaluation's.
	if a := getAlert(t, db, 3); a.Period != "2025-05" {
		t.Errorf("alert raised without a period: period %q, want 2025-05", a.Period)
	}

	got := getAlert(t, db, 1)
	want := costdrift.Alert{ID: 1, Kind: costdrift.AlertRateShift, Object: "6200/WELD", Severity: costdrift.SeverityWarning,
		Status: costdrift.AlertOpen, Period: "2025-07", Message: rateShift.Message, Fingerprint: rateShift.Fingerprint,
		// Stored as JSON: test and n read back into their fields, the keys
		// no field names into Other.
		Evidence: costdrift.AlertEvidence{Test: new("sup-F"), N: new(36),
			Other: map[string]any{"p_value": 0.0012, "old_formula": "cost = 4,210.50 + 1.88 per machine hour"}},
		CreatedAt: c.t, UpdatedAt: c.t, Occurrences: 1}
	if !reflect.DeepEqual(got, want) {
		t.Errorf("alert 1:\n got  %+v\n want %+v", got, want)
	}
	// The evidence column is JSON an analyst can read with json_extract.
	if got := dump(t, db, `SELECT evidence, json_extract(evidence, '$.p_value'), occurrences, ack_until, resolved_at FROM alerts WHERE id = 1`); got !=
		`"{\"n\":36,\"old_formula\":\"cost = 4,210.50 + 1.88 per machine hour\",\"p_value\":0.0012,\"test\":\"sup-F\"}"|float64:0.0012|int64:1|NULL|NULL`+"\n" {
		t.Errorf("stored row: %s", got)
	}
	// No evidence is NULL, and reads back as none.
	if a := getAlert(t, db, 2); len(a.Evidence.Map()) != 0 || a.Period != "2025-05" {
		t.Errorf("alert 2: evidence %v, period %q", a.Evidence, a.Period)
	}
	if n := count(t, db, "open_alerts"); n != 3 {
		t.Errorf("open_alerts has %d rows, want 3", n)
	}
}

func TestApplyAlertsUpdatesTheSameCondition(t *testing.T) {
	db, c := mustOpen(t)
	first := c.t
	apply(t, db, "2025-05", kinds(costdrift.AlertRateShift), rateShift)

	c.t = c.t.Add(24 * time.Hour)
	again := rateShift
	again.Message = "rate per machine hour up from 1.88 to 2.25 since 2025-07"
	again.Evidence = costdrift.AlertEvidence{Other: map[string]any{"test": "sup-F", "p_value": 0.0004, "n": 37}}
	ch := apply(t, db, "2025-06", kinds(costdrift.AlertRateShift), again)
	checkChanges(t, ch, AlertChanges{Updated: 1})

	if n := count(t, db, "alerts"); n != 1 {
		t.Fatalf("%d alert rows, want 1: the same condition is one alert", n)
	}
	a := getAlert(t, db, 1)
	if a.Message != again.Message || a.Evidence.Map()["p_value"] != 0.0004 || a.Evidence.Map()["n"] != 37.0 || a.Occurrences != 2 ||
		!a.CreatedAt.Equal(first) || !a.UpdatedAt.Equal(c.t) || a.Status != costdrift.AlertOpen || a.Severity != costdrift.SeverityWarning {
		t.Errorf("updated alert %+v", a)
	}
	if _, ok := a.Evidence.Map()["old_formula"]; ok {
		t.Errorf("evidence kept a key the new evaluation did not give: %v", a.Evidence)
	}
}

func TestApplyAlertsEscalatesAndNeverLowersSilently(t *testing.T) {
	db, _ := mustOpen(t)
	evaluated := kinds(costdrift.AlertSpendingOutlier)
	apply(t, db, "2025-05", evaluated, outlier)

	worse := outlier
	worse.Severity = costdrift.SeverityWarning
	worse.Message = "paint spending outside the prediction interval for the second period running"
	checkChanges(t, apply(t, db, "2025-06", evaluated, worse), AlertChanges{Escalated: []int64{1}, Updated: 1})
	if a := getAlert(t, db, 1); a.Severity != costdrift.SeverityWarning || a.Message != worse.Message {
		t.Errorf("after escalation: %s %q", a.Severity, a.Message)
	}

	worst := outlier
	worst.Severity = costdrift.SeverityCritical
	checkChanges(t, apply(t, db, "2025-07", evaluated, worst), AlertChanges{Escalated: []int64{1}, Updated: 1})

	// Raised again as info: the message follows, the severity stays.
	milder := outlier
	milder.Message = "paint spending 11,900.00 above the prediction interval"
	checkChanges(t, apply(t, db, "2025-08", evaluated, milder), AlertChanges{Updated: 1})
	a := getAlert(t, db, 1)
	if a.Severity != costdrift.SeverityCritical || a.Message != milder.Message || a.Occurrences != 4 {
		t.Errorf("after a milder raise: severity %s, message %q, occurrences %d; want critical, the new message, 4", a.Severity, a.Message, a.Occurrences)
	}
}

func TestApplyAlertsResolvesWhatIsNotRaised(t *testing.T) {
	db, c := mustOpen(t)
	evaluated := kinds(costdrift.AlertRateShift, costdrift.AlertDataGap, costdrift.AlertSpendingOutlier)
	apply(t, db, "2025-05", evaluated, rateShift, dataGap, outlier)

	// The data gap is filled and the outlier gone; the rate shift lasts.
	c.t = c.t.Add(time.Hour)
	ch := apply(t, db, "2025-06", evaluated, rateShift)
	checkChanges(t, ch, AlertChanges{Updated: 1, Resolved: []int64{3, 2}}) // in the product's kind order
	for _, id := range []int64{2, 3} {
		if a := getAlert(t, db, id); a.Status != costdrift.AlertResolved || !a.ResolvedAt.Equal(c.t) || !a.UpdatedAt.Equal(c.t) {
			t.Errorf("alert %d: status %s, resolved %v, updated %v; want resolved at %v", id, a.Status, a.ResolvedAt, a.UpdatedAt, c.t)
		}
	}
	if a := getAlert(t, db, 1); a.Status != costdrift.AlertOpen || !a.ResolvedAt.IsZero() {
		t.Errorf("the raised alert: %+v", a)
	}
	if got := dump(t, db, `SELECT id FROM open_alerts`); got != "int64:1\n" {
		t.Errorf("open_alerts: %s", got)
	}
	// Resolved stays resolved while the condition stays clear.
	checkChanges(t, apply(t, db, "2025-07", evaluated, rateShift), AlertChanges{Updated: 1})
}

func TestApplyAlertsLeavesKindsNotEvaluated(t *testing.T) {
	db, c := mustOpen(t)
	apply(t, db, "2025-05", kinds(costdrift.AlertRateShift, costdrift.AlertDataGap, costdrift.AlertStaleSource),
		rateShift, dataGap, raise(costdrift.AlertStaleSource, "activity", costdrift.SeverityWarning, "2025-05", "no activity for 45 days", nil))
	mustAck(t, db, 3, "")
	before := dump(t, db, `SELECT * FROM alerts WHERE kind <> 'rate_shift' ORDER BY id`)

	// Only the analysis rules ran: the sync's kinds and the data gap
	// are not judged, whatever their state.
	c.t = c.t.Add(time.Hour)
	ch := apply(t, db, "2025-06", kinds(costdrift.AlertRateShift))
	checkChanges(t, ch, AlertChanges{Resolved: []int64{1}})
	if after := dump(t, db, `SELECT * FROM alerts WHERE kind <> 'rate_shift' ORDER BY id`); after != before {
		t.Errorf("alerts of kinds not evaluated changed:\n%s\nwas\n%s", after, before)
	}
}

func TestApplyAlertsReopensAResolvedCondition(t *testing.T) {
	db, c := mustOpen(t)
	evaluated := kinds(costdrift.AlertDataGap)
	apply(t, db, "2025-05", evaluated, dataGap)
	apply(t, db, "2025-06", evaluated) // filled: resolved

	c.t = c.t.Add(48 * time.Hour)
	back := dataGap
	back.Severity = costdrift.SeverityInfo
	back.Period = "2025-07"
	back.Message = "no rent posted in 2025-07"
	ch := apply(t, db, "2025-07", evaluated, back)
	checkChanges(t, ch, AlertChanges{Reopened: []int64{1}})
	if n := count(t, db, "alerts"); n != 1 {
		t.Fatalf("%d rows, want the same one", n)
	}
	a := getAlert(t, db, 1)
	// A condition that cleared and came back is assessed afresh: its
	// severity is the new one.
	if a.Status != costdrift.AlertOpen || !a.ResolvedAt.IsZero() || a.Severity != costdrift.SeverityInfo || a.Period != "2025-07" ||
		a.Message != back.Message || a.Occurrences != 2 || !a.UpdatedAt.Equal(c.t) {
		t.Errorf("reopened alert %+v", a)
	}
	if got := dump(t, db, `SELECT resolved_at, ack_until FROM alerts`); got != "NULL|NULL\n" {
		t.Errorf("resolved_at, ack_until after reopening: %s", got)
	}
}

func mustAck(t *testing.T, db *DB, id int64, until string) {
	t.Helper()
	if err := db.AckAlert(context.Background(), id, until); err != nil {
		t.Fatalf("AckAlert(%d, %q): %v", id, until, err)
	}
}

func TestAcknowledgedUntilAPeriod(t *testing.T) {
	db, c := mustOpen(t)
	evaluated := kinds(costdrift.AlertRateShift)
	apply(t, db, "2025-07", evaluated, rateShift)
	c.t = c.t.Add(time.Hour)
	mustAck(t, db, 1, "2025-08")
	if a := getAlert(t, db, 1); a.Status != costdrift.AlertAcknowledged || a.AckUntil != "2025-08" || !a.UpdatedAt.Equal(c.t) {
		t.Fatalf("acknowledged alert %+v", a)
	}
	if n := count(t, db, "open_alerts"); n != 0 {
		t.Errorf("open_alerts lists an acknowledged alert")
	}
	// Through 2025-08 it stays acknowledged, updated.
	for _, period := range []string{"2025-07", "2025-08"} {
		checkChanges(t, apply(t, db, period, evaluated, rateShift), AlertChanges{Updated: 1})
		if a := getAlert(t, db, 1); a.Status != costdrift.AlertAcknowledged || a.AckUntil != "2025-08" {
			t.Errorf("%s: status %s until %q, want acknowledged until 2025-08", period, a.Status, a.AckUntil)
		}
	}
	// In 2025-09 the acknowledgement has run out.
	checkChanges(t, apply(t, db, "2025-09", evaluated, rateShift), AlertChanges{AckExpired: []int64{1}, Updated: 1})
	if a := getAlert(t, db, 1); a.Status != costdrift.AlertOpen || a.AckUntil != "" || a.Occurrences != 4 {
		t.Errorf("after the acknowledged period: %+v", a)
	}
}

func TestAcknowledgedUntilTheConditionChanges(t *testing.T) {
	db, _ := mustOpen(t)
	evaluated := kinds(costdrift.AlertRateShift)
	apply(t, db, "2025-07", evaluated, rateShift)
	mustAck(t, db, 1, "")
	// Raised again, the same: still acknowledged, however long.
	for _, period := range []string{"2025-08", "2026-08"} {
		checkChanges(t, apply(t, db, period, evaluated, rateShift), AlertChanges{Updated: 1})
		if a := getAlert(t, db, 1); a.Status != costdrift.AlertAcknowledged {
			t.Errorf("%s: status %s", period, a.Status)
		}
	}
	// Worse: the acknowledgement was of the milder condition.
	worse := rateShift
	worse.Severity = costdrift.SeverityCritical
	checkChanges(t, apply(t, db, "2026-09", evaluated, worse), AlertChanges{Escalated: []int64{1}, Updated: 1})
	if a := getAlert(t, db, 1); a.Status != costdrift.AlertOpen || a.Severity != costdrift.SeverityCritical {
		t.Errorf("escalated acknowledged alert: %s %s, want open critical", a.Status, a.Severity)
	}

	// An acknowledged alert whose condition clears is resolved; when it
	// comes back it is open, the acknowledgement gone.
	mustAck(t, db, 1, "2027-01")
	checkChanges(t, apply(t, db, "2026-10", evaluated), AlertChanges{Resolved: []int64{1}})
	checkChanges(t, apply(t, db, "2026-11", evaluated, rateShift), AlertChanges{Reopened: []int64{1}})
	if a := getAlert(t, db, 1); a.Status != costdrift.AlertOpen || a.AckUntil != "" {
		t.Errorf("reopened: %s until %q", a.Status, a.AckUntil)
	}
}

func TestAckAlertErrors(t *testing.T) {
	db, _ := mustOpen(t)
	ctx := context.Background()
	if err := db.AckAlert(ctx, 7, ""); !errors.Is(err, ErrAlertNotFound) || err.Error() != "alert 7: no such alert" {
		t.Errorf("ack of a missing alert: %v", err)
	}
	if _, err := db.Alert(ctx, 7); !errors.Is(err, ErrAlertNotFound) {
		t.Errorf("Alert of a missing id: %v", err)
	}
	apply(t, db, "2025-05", kinds(costdrift.AlertDataGap), dataGap)
	apply(t, db, "2025-06", kinds(costdrift.AlertDataGap))
	err := db.AckAlert(ctx, 1, "")
	if err == nil || err.Error() != "alert 1 is resolved: its condition has cleared, so there is nothing to acknowledge" {
		t.Errorf("ack of a resolved alert: %v", err)
	}
	if a := getAlert(t, db, 1); a.Status != costdrift.AlertResolved {
		t.Errorf("status %s after a refused ack", a.Status)
	}
}

func TestApplyAlertsRefusesMisuseAndWritesNothing(t *testing.T) {
	db, c := mustOpen(t)
	ctx := context.Background()
	apply(t, db, "2025-05", kinds(costdrift.AlertRateShift), rateShift)
	before := dump(t, db, `SELECT * FROM alerts`)
	c.t = c.t.Add(time.Hour)

	impostor := rateShift
	impostor.Kind = costdrift.AlertFixedShift // someone else's fingerprint
	noSeverity := dataGap
	noSeverity.Severity = ""
	fresh := raise(costdrift.AlertFixedShift, "6100/WELD", costdrift.SeverityWarning, "2025-05", "fixed part up 20 %", nil)
	tests := []struct {
		name      string
		raised    []costdrift.Alert
		evaluated []costdrift.AlertKind
		period    string
		want      string
	}{
		{"no period", nil, kinds(costdrift.AlertRateShift), "", "apply alerts: no period"},
		{"unknown evaluated kind", nil, kinds("drift"), "2025-06", `apply alerts: evaluated kind "drift" is not one of the eleven kinds`},
		{"invalid alert", []costdrift.Alert{noSeverity}, kinds(costdrift.AlertDataGap), "2025-06",
			`apply alerts: alert data_gap on 6500: severity "" is not info, warning or critical`},
		{"raised but not evaluated", []costdrift.Alert{dataGap}, kinds(costdrift.AlertRateShift), "2025-06",
			"apply alerts: data_gap on 6500 was raised, but data_gap is not among the kinds evaluated"},
		{"twice in one evaluation", []costdrift.Alert{rateShift, rateShift}, kinds(costdrift.AlertRateShift), "2025-06",
			"apply alerts: rate_shift on 6200/WELD: another alert raised in this evaluation has fingerprint " + rateShift.Fingerprint},
		// The new fixed shift is inserted before the impostor fails: the
		// transaction takes it back.
		{"fingerprint of another alert", []costdrift.Alert{fresh, impostor}, kinds(costdrift.AlertFixedShift), "2025-06",
			"apply alerts: fixed_shift on 6200/WELD: fingerprint " + rateShift.Fingerprint + " already names alert 1, rate_shift on 6200/WELD"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			ch, err := db.ApplyAlerts(ctx, tc.raised, tc.evaluated, tc.period)
			if err == nil || err.Error() != tc.want {
				t.Errorf("error %v\nwant %s", err, tc.want)
			}
			if !reflect.DeepEqual(ch, AlertChanges{}) {
				t.Errorf("changes %+v reported for a refused evaluation", ch)
			}
			if after := dump(t, db, `SELECT * FROM alerts`); after != before {
				t.Errorf("alerts changed:\n%s\nwas\n%s", after, before)
			}
		})
	}
}

func TestAlertsFilterAndOrder(t *testing.T) {
	db, _ := mustOpen(t)
	ctx := context.Background()
	critical := raise(costdrift.AlertFixedShift, "6100/WELD", costdrift.SeverityCritical, "2025-02", "lease up 35 %", nil)
	olderWarning := raise(costdrift.AlertReclassified, "6300/ASSY", costdrift.SeverityWarning, "2025-01", "now step-fixed", nil)
	all := kinds(costdrift.AlertRateShift, costdrift.AlertDataGap, costdrift.AlertSpendingOutlier, costdrift.AlertFixedShift, costdrift.AlertReclassified)
	// ids: rate shift 1 (warning 2025-07), data gap 2 (warning 2025-05),
	// outlier 3 (info 2025-05), fixed shift 4 (critical 2025-02),
	// reclassified 5 (warning 2025-01).
	apply(t, db, "2025-07", all, rateShift, dataGap, outlier, critical, olderWarning)
	mustAck(t, db, 2, "")
	apply(t, db, "2025-08", all, rateShift, dataGap, outlier, critical) // resolves 5

	ids := func(f AlertFilter) []int64 {
		t.Helper()
		as, err := db.Alerts(ctx, f)
		if err != nil {
			t.Fatalf("Alerts(%+v): %v", f, err)
		}
		var out []int64
		for _, a := range as {
			out = append(out, a.ID)
		}
		return out
	}
	tests := []struct {
		name   string
		filter AlertFilter
		want   []int64
	}{
		// Most severe first, then the newest period.
		{"not resolved", AlertFilter{}, []int64{4, 1, 2, 3}},
		{"all", AlertFilter{Status: "all"}, []int64{4, 1, 2, 5, 3}},
		{"open", AlertFilter{Status: "open"}, []int64{4, 1, 3}},
		{"acknowledged", AlertFilter{Status: "acknowledged"}, []int64{2}},
		{"resolved", AlertFilter{Status: "resolved"}, []int64{5}},
		{"kind", AlertFilter{Status: "all", Kind: costdrift.AlertReclassified}, []int64{5}},
		{"object", AlertFilter{Object: "6400/PAINT"}, []int64{3}},
		{"at least warning", AlertFilter{MinSeverity: costdrift.SeverityWarning}, []int64{4, 1, 2}},
		{"at least critical", AlertFilter{Status: "all", MinSeverity: costdrift.SeverityCritical}, []int64{4}},
		{"nothing", AlertFilter{Object: "9999"}, nil},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			if got := ids(tc.filter); !reflect.DeepEqual(got, tc.want) {
				t.Errorf("ids %v, want %v", got, tc.want)
			}
		})
	}
	for _, tc := range []struct {
		filter AlertFilter
		want   string
	}{
		{AlertFilter{Status: "closed"}, `alert status "closed" is not open, acknowledged, resolved or all`},
		{AlertFilter{Kind: "drift"}, `alert kind "drift" is not one of the eleven kinds`},
		{AlertFilter{MinSeverity: "high"}, `severity "high" is not info, warning or critical`},
	} {
		if _, err := db.Alerts(ctx, tc.filter); err == nil || err.Error() != tc.want {
			t.Errorf("Alerts(%+v): error %v, want %q", tc.filter, err, tc.want)
		}
	}
}

func TestAlertEvidenceWithoutANumber(t *testing.T) {
	// JSON has no NaN or infinity (RFC 8259 §6): such values are stored as
	// null instead of failing the evaluation.
	db, _ := mustOpen(t)
	a := rateShift
	a.Evidence = costdrift.AlertEvidence{Other: map[string]any{"r2": math.NaN(), "f": math.Inf(1), "levels": []float64{1, math.NaN()},
		"fits": []any{map[string]any{"r2": math.NaN(), "n": 12}}, "p_value": float32(0.5)}}
	apply(t, db, "2025-07", kinds(costdrift.AlertRateShift), a)
	if got := dump(t, db, `SELECT evidence FROM alerts`); got != `"{\"f\":null,\"fits\":[{\"n\":12,\"r2\":null}],\"levels\":[1,null],\"p_value\":0.5,\"r2\":null}"`+"\n" {
		t.Errorf("evidence %s", got)
	}
}

func TestAlertKeepsHostileTextAsWritten(t *testing.T) {
	// The store keeps text byte for byte; escaping is the job of whoever
	// renders it.
	db, _ := mustOpen(t)
	object := `6200/<b>WELD</b>`
	a := raise(costdrift.AlertDataGap, object, costdrift.SeverityWarning, "2025-05", `no postings <script>alert("x")</script> & 'quoted'; DROP TABLE alerts;--`, nil)
	apply(t, db, "2025-05", kinds(costdrift.AlertDataGap), a)
	got := getAlert(t, db, 1)
	if got.Message != a.Message || got.Object != object {
		t.Errorf("message %q, object %q", got.Message, got.Object)
	}
}

func TestMigrationKeepsAlertsOfSchema4(t *testing.T) {
	db := bareDB(t)
	ctx := context.Background()
	ms, err := loadMigrations(migrations.FS)
	if err != nil {
		t.Fatal(err)
	}
	var upTo4 []migration
	for _, m := range ms {
		if m.version <= 4 {
			upTo4 = append(upTo4, m)
		}
	}
	if err := db.applyMigrations(ctx, upTo4); err != nil {
		t.Fatal(err)
	}
	mustExec(t, db, `INSERT INTO alerts (kind, object, severity, status, period, message, fingerprint, created_at, updated_at)
		VALUES ('data_gap', '6500', 'warning', 'open', '2025-05', 'no rent posted', 'fp1', '2025-06-01T06:00:00Z', '2025-06-01T06:00:00Z')`)
	viewBefore := dump(t, db, `SELECT * FROM open_alerts`)
	if err := db.applyMigrations(ctx, ms); err != nil {
		t.Fatal(err)
	}
	// The view's old columns come first, unchanged; the new ones follow.
	viewAfter := dump(t, db, `SELECT * FROM open_alerts`)
	if want := strings.TrimSuffix(viewBefore, "\n") + `|NULL|int64:1|"fp1"` + "\n"; viewAfter != want {
		t.Errorf("open_alerts after the migration:\n%s\nwant\n%s", viewAfter, want)
	}
	a, err := db.Alert(ctx, 1)
	if err != nil {
		t.Fatal(err)
	}
	if a.Occurrences != 1 || len(a.Evidence.Map()) != 0 || a.AckUntil != "" || !a.ResolvedAt.IsZero() {
		t.Errorf("alert from schema 4: %+v", a)
	}
	// And it goes on like any other.
	ch, err := db.ApplyAlerts(ctx, nil, kinds(costdrift.AlertDataGap), "2025-06")
	if err != nil || !reflect.DeepEqual(ch, AlertChanges{Resolved: []int64{1}}) {
		t.Errorf("ApplyAlerts on the migrated alert: %+v, %v", ch, err)
	}
}
