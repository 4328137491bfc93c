package report

import (
	"bytes"
	"strings"
	"testing"

	"github.com/costdrift/costdrift/internal/costdrift"
)

// A history sets the formulas side by side, oldest first; the part before
// a break, recorded without a fit of its own (n 0), shows no R² or range
// borrowed from the later fit.
func TestHistoryText(t *testing.T) {
	before := costdrift.Behaviour{Object: costdrift.CostObject{Account: "6400", CostCenter: "ASSY"}, Class: costdrift.Variable,
		Driver: "shipments", Unit: "shipment", VariableRate: 14.4756, R2: 0.99, RangeMin: 462, RangeMax: 1223}
	after := before
	after.VariableRate, after.N = 11.9174, 17
	after.Break = &costdrift.Break{Period: "2025-02", Test: "sup-F, residual bootstrap", Statistic: 293.14, P: 0.001, Replicates: 999}
	h := HistoryOf("6400/ASSY", "Freight out", []costdrift.BehaviourSpan{
		{Behaviour: before, From: "2023-07", To: "2025-01", FirstRunID: 1, LastRunID: 1, FoundAt: "2026-12-01T09:00:00Z", ClosedAt: "2026-12-01T09:00:00Z"},
		{Behaviour: after, From: "2025-02", FirstRunID: 1, LastRunID: 3, FoundAt: "2026-12-01T09:00:00Z"},
	}, []costdrift.Alert{{ID: 2, Kind: costdrift.AlertRateShift, Severity: costdrift.SeverityWarning, Status: "open", Period: "2025-02",
		Message: "6400/ASSY Freight out: rate per shipment fell from 2025-02, 14.48 to 11.92"}})
	if h.Spans[0].R2 != nil || h.Spans[0].RangeMin != nil || h.Spans[1].R2 == nil || h.Spans[1].To != nil || *h.Spans[0].To != "2025-01" {
		t.Errorf("spans: %+v", h.Spans)
	}
	var out bytes.Buffer
	if err := HistoryText(&out, h, "EUR"); err != nil {
		t.Fatal(err)
	}
	for _, want := range []string{
		"6400/ASSY — Freight out   (amounts in EUR per period)",
		"2023-07  2025-01  variable  cost = 14.48 per shipment  -      -  run 1 of 2026-12-01",
		"2025-02  now      variable  cost = 11.92 per shipment  0.99  17  run 1 of 2026-12-01",
		// 999 resamples resolve 0.001 (1/(999+1)).
		"2025-02: sup-F, residual bootstrap, statistic 293.1, p 0.001",
		"2  warning   rate_shift  2025-02  open    6400/ASSY Freight out: rate per shipment fell",
	} {
		if !strings.Contains(out.String(), want) {
			t.Errorf("history lacks %q:\n%s", want, out.String())
		}
	}
}
