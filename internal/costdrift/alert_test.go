package costdrift

import (
	"strings"
	"testing"
)

func TestFingerprint(t *testing.T) {
	tests := []struct {
		name                          string
		kind                          AlertKind
		object, discriminator, wanted string
	}{
		// Expected values from GNU coreutils:
		// printf 'rate_shift\0006200/WELD\000' | sha256sum
		{"no discriminator", AlertRateShift, "6200/WELD", "", "9552d807872b44b9e08efb1cf0e9fda4dd858795afd0c4d056599ec319983201"},
		// printf 'data_gap\0006100\0002025-03' | sha256sum
		{"with discriminator", AlertDataGap, "6100", "2025-03", "8164076c555fb58fa0c79a6eb7bd24edce4ee060e22c45c7b2046c63639748f1"},
		// printf 'data_gap\0006100/2025-03\000' | sha256sum: the same
		// characters split differently are another condition.
		{"shifted separator", AlertDataGap, "6100/2025-03", "", "a038b6b7f820d5b8ab7c31660784147c635160b28bd0f40229890fc4004e7a61"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			if got := Fingerprint(tc.kind, tc.object, tc.discriminator); got != tc.wanted {
				t.Errorf("Fingerprint(%s, %s, %s) = %s, want %s", tc.kind, tc.object, tc.discriminator, got, tc.wanted)
			}
		})
	}
}

func TestSeverityRank(t *testing.T) {
	// The order is the product's: info < warning < critical; anything else
	// ranks below them all.
	for _, tc := range []struct {
		severity Severity
		rank     int
	}{{SeverityInfo, 1}, {SeverityWarning, 2}, {SeverityCritical, 3}, {"urgent", 0}, {"", 0}} {
		if got := tc.severity.Rank(); got != tc.rank {
			t.Errorf("%q.Rank() = %d, want %d", tc.severity, got, tc.rank)
		}
		if tc.severity.Valid() != (tc.rank > 0) {
			t.Errorf("%q.Valid() = %v", tc.severity, tc.severity.Valid())
		}
	}
}

func TestAlertKinds(t *testing.T) {
	// The eleven kinds the product fixes, in its order.
	want := "reclassified driver_changed fixed_shift rate_shift spending_outlier out_of_range data_gap stale_source source_failure data_quality pin_review"
	var got []string
	for _, k := range AlertKinds() {
		got = append(got, string(k))
		if !k.Valid() {
			t.Errorf("%s not valid", k)
		}
	}
	if strings.Join(got, " ") != want {
		t.Errorf("AlertKinds() = %v, want %s", got, want)
	}
	if AlertKind("drift").Valid() {
		t.Error("an unknown kind is valid")
	}
}

func TestAlertValidate(t *testing.T) {
	good := Alert{Kind: AlertRateShift, Object: "6200/WELD", Severity: SeverityWarning, Message: "rate up 18 %",
		Fingerprint: Fingerprint(AlertRateShift, "6200/WELD", "")}
	if err := good.Validate(); err != nil {
		t.Fatalf("a complete alert: %v", err)
	}
	for _, tc := range []struct {
		name   string
		change func(*Alert)
		want   string
	}{
		{"unknown kind", func(a *Alert) { a.Kind = "drift" }, `alert kind "drift" is not one of the eleven kinds`},
		{"unknown severity", func(a *Alert) { a.Severity = "high" }, `alert rate_shift on 6200/WELD: severity "high" is not info, warning or critical`},
		{"no object", func(a *Alert) { a.Object = "" }, "alert rate_shift has no object"},
		{"no message", func(a *Alert) { a.Message = "" }, "alert rate_shift on 6200/WELD has no message"},
		{"no fingerprint", func(a *Alert) { a.Fingerprint = "" }, "alert rate_shift on 6200/WELD has no fingerprint"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			a := good
			tc.change(&a)
			if err := a.Validate(); err == nil || err.Error() != tc.want {
				t.Errorf("Validate() = %v, want %q", err, tc.want)
			}
		})
	}
}
