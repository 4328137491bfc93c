package alerts

import (
	"strings"
	"testing"

	"github.com/costdrift/costdrift/internal/costdrift"
)

// The shares are hand-worked (common practice: rejected over read):
// gl 2026-06 27/44 = 61 %, ops 2026-06 1/101 = 0.99 % and ops 2026-05
// 2/102 = 1.96 %, against a limit of 1 %.
func TestDataQuality(t *testing.T) {
	rows := []costdrift.SourcePeriod{
		{Source: "gl", Path: "/d/gl-2026.csv", Period: "2026-05", RowsStored: 40},
		{Source: "gl", Path: "/d/gl-2026-06.csv", Period: "2026-06", RowsStored: 17, RowsRejected: 27, Reason: `amount "4,200.00" has a ','`},
		{Source: "ops", Path: "/d/a.csv", Period: "2026-06", RowsStored: 100, RowsRejected: 1, Reason: "bad date"},
		{Source: "ops", Path: "/d/a.csv", Period: "2026-05", RowsStored: 50},
		{Source: "ops", Path: "/d/b.csv", Period: "2026-05", RowsStored: 50, RowsRejected: 2, Reason: "bad value"},
		{Source: "ops", Path: "/d/c.csv", Period: "", RowsRejected: 9, Reason: "bad date"},
	}
	q := Quality(rows)
	var got []string
	for _, p := range q {
		got = append(got, p.Source+" "+p.Period)
	}
	if strings.Join(got, ",") != "gl 2026-05,gl 2026-06,ops ,ops 2026-05,ops 2026-06" {
		t.Fatalf("Quality order = %v", got)
	}
	if p := q[3]; p.Read != 102 || p.Rejected != 2 || p.File != "/d/b.csv" || p.Reason != "bad value" {
		t.Errorf("ops 2026-05 = %+v, want 102 read, 2 rejected, in /d/b.csv", p)
	}
	raised := DataQuality(q, 0.01)
	if len(raised) != 3 {
		t.Fatalf("%d alerts, want 3 (gl 2026-06, ops whole file, ops 2026-05; ops 2026-06 is within 1 %%): %+v", len(raised), raised)
	}
	a := raised[0]
	if a.Kind != costdrift.AlertDataQuality || a.Object != "gl" || a.Period != "2026-06" || a.Severity != costdrift.SeverityWarning ||
		a.Fingerprint != costdrift.Fingerprint(costdrift.AlertDataQuality, "gl", "2026-06") {
		t.Errorf("gl alert = %+v", a)
	}
	for _, want := range []string{"27 of 44 rows rejected (61 %)", "/d/gl-2026-06.csv", `"4,200.00"`, "a file is read again when it or its reading settings change"} {
		if !strings.Contains(a.Message, want) {
			t.Errorf("message %q lacks %q", a.Message, want)
		}
	}
	if *a.Evidence.RowsRead != 44 || *a.Evidence.RowsRejected != 27 || *a.Evidence.File != "/d/gl-2026-06.csv" {
		t.Errorf("evidence = %v", a.Evidence.Map())
	}
	if !strings.Contains(raised[1].Message, "no row of the file was stored") || raised[1].Period != "" {
		t.Errorf("whole-file alert = %+v", raised[1])
	}
	if got := DataQuality(q, 0.7); len(got) != 1 || got[0].Object != "ops" || got[0].Period != "" {
		t.Errorf("at 70 %% only the file rejected whole is raised, got %+v", got)
	}
}
