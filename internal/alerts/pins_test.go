package alerts

import (
	"strings"
	"testing"

	"github.com/costdrift/costdrift/internal/costdrift"
)

// A contradicted pin and an expired one each raise a pin_review alert
// whose fingerprint names the pin's decision, so that pinning again is a
// new condition; a pin neither contradicted nor expired raises nothing.
func TestPinReview(t *testing.T) {
	rent := costdrift.Pin{Object: "6100/WELD", Class: costdrift.Fixed, Fixed: 4200, DecisionID: 7}
	lease := costdrift.Pin{Object: "6110/PAINT", Class: costdrift.Fixed, Fixed: 3300, Until: "2026-06", DecisionID: 9}
	calm := costdrift.Pin{Object: "6100/ASSY", Class: costdrift.Fixed, Fixed: 2600, DecisionID: 3}
	pins := map[string]costdrift.Pin{rent.Object: rent, lease.Object: lease, calm.Object: calm}
	tests := []costdrift.PinTest{
		{Pin: rent, N: 12, F: 674.2, P: 1e-11, DataFixed: 4830.12, Contradicted: true},
		{Pin: calm, N: 36, F: 1.0, P: 0.32, DataFixed: 2600.45},
	}
	got := PinReview(pins, tests, "2026-07", map[string]string{"6100": "Rent", "6110": "Equipment lease"}, "EUR")
	if len(got) != 2 {
		t.Fatalf("%d alerts, want 2: %+v", len(got), got)
	}
	c, x := got[0], got[1]
	if c.Kind != costdrift.AlertPinReview || c.Object != "6100/WELD" || c.Severity != costdrift.SeverityWarning ||
		c.Message != "6100/WELD Rent: the data contradict the pinned formula (pinned 4,200.00, the data say 4,830.12 EUR over 12 periods); review the pin" ||
		c.Fingerprint != costdrift.Fingerprint(costdrift.AlertPinReview, "6100/WELD", "contradicted 7") ||
		*c.Evidence.P != 1e-11 || *c.Evidence.PinnedFixed != 4200 || *c.Evidence.DataFixed != 4830.12 || *c.Evidence.N != 12 {
		t.Errorf("contradiction alert %+v", c)
	}
	if x.Object != "6110/PAINT" || x.Period != "2026-06" || !strings.Contains(x.Message, "expired after 2026-06") ||
		x.Fingerprint != costdrift.Fingerprint(costdrift.AlertPinReview, "6110/PAINT", "expired 9") || *x.Evidence.PinnedUntil != "2026-06" {
		t.Errorf("expiry alert %+v", x)
	}
	for _, a := range got {
		if err := a.Validate(); err != nil {
			t.Error(err)
		}
	}
	if got := PinReview(pins, tests, "2026-06", nil, "EUR"); len(got) != 1 {
		t.Errorf("in the pin's last period: %d alerts, want only the contradiction", len(got))
	}
}
