package report

import (
	"fmt"
	"io"
	"strings"

	"github.com/costdrift/costdrift/internal/costdrift"
	"github.com/costdrift/costdrift/internal/present"
)

// History is one cost object's formulas over time, oldest first, with the
// changes between them and the object's alerts.
type History struct {
	Object      string         `json:"object"`
	AccountName string         `json:"account_name"`
	Spans       []HistorySpan  `json:"formulas"`
	Alerts      []HistoryAlert `json:"alerts"`
	Cautions    string         `json:"cautions"`
}

// HistorySpan is one behaviour of the history: the report's row of it and
// the periods it held (To null while it holds).
type HistorySpan struct {
	Row
	From       string  `json:"from"`
	To         *string `json:"to"`
	FirstRunID int64   `json:"first_run_id"`
	LastRunID  int64   `json:"last_run_id"`
	FoundAt    string  `json:"found_at"`
	ClosedAt   *string `json:"closed_at"`
}

// HistoryAlert is one alert raised on the object.
type HistoryAlert struct {
	ID       int64  `json:"id"`
	Kind     string `json:"kind"`
	Severity string `json:"severity"`
	Status   string `json:"status"`
	Period   string `json:"period"`
	Message  string `json:"message"`
}

// HistoryOf sets an object's stored behaviours and alerts side by side.
func HistoryOf(object, accountName string, spans []costdrift.BehaviourSpan, alerts []costdrift.Alert) History {
	h := History{Object: object, AccountName: accountName, Spans: []HistorySpan{}, Alerts: []HistoryAlert{}, Cautions: Caution}
	names := map[string]string{}
	for _, s := range spans {
		names[s.Behaviour.Object.Account] = accountName
	}
	for _, s := range spans {
		hs := HistorySpan{Row: Rows([]costdrift.Behaviour{s.Behaviour}, names)[0], From: s.From, FirstRunID: s.FirstRunID,
			LastRunID: s.LastRunID, FoundAt: s.FoundAt}
		if s.Behaviour.N == 0 {
			// The part before a break the first analysis found is recorded
			// with the break's formula before it, not with a fit of its
			// own: the fit's figures in its row are the later fit's.
			hs.R2, hs.RangeMin, hs.RangeMax = nil, nil, nil
		}
		if s.To != "" {
			hs.To = &s.To
		}
		if s.ClosedAt != "" {
			hs.ClosedAt = &s.ClosedAt
		}
		h.Spans = append(h.Spans, hs)
	}
	for _, a := range alerts {
		h.Alerts = append(h.Alerts, HistoryAlert{ID: a.ID, Kind: string(a.Kind), Severity: string(a.Severity), Status: string(a.Status),
			Period: a.Period, Message: a.Message})
	}
	return h
}

// HistoryJSON writes the history as one indented JSON object.
func HistoryJSON(w io.Writer, h History) error { return EncodeJSON(w, h) }

// HistoryText writes the history as aligned text: the formulas over time,
// the changes with their tests, the alerts and the cautions. Text from the
// store is shown through TerminalText.
func HistoryText(w io.Writer, h History, currency string) error {
	var s strings.Builder
	title := TerminalText(h.Object)
	if h.AccountName != "" {
		title += " — " + TerminalText(h.AccountName)
	}
	s.WriteString(title + "   (amounts in " + currency + " per period)\n\nFormulas over time, oldest first\n")
	if len(h.Spans) == 0 {
		s.WriteString("  none stored: run `costdrift analyze`\n")
	}
	t := table{header: []string{"FROM", "TO", "CLASS", "FORMULA", "R²", "N", "FOUND"}, right: "lllllrl"}
	for _, sp := range h.Spans {
		to := "now"
		if sp.To != nil {
			to = TerminalText(*sp.To)
		}
		r2 := "-"
		if sp.R2 != nil {
			r2 = present.Number(*sp.R2, 2)
		}
		found := fmt.Sprintf("run %d", sp.FirstRunID)
		if d, _, ok := strings.Cut(sp.FoundAt, "T"); ok {
			found += " of " + d
		}
		n := "-" // a span closed by a break records no count of its own
		if sp.N > 0 {
			n = fmt.Sprint(sp.N)
		}
		t.add(TerminalText(sp.From), to, TerminalText(string(sp.Class)), TerminalText(sp.Formula), r2, n, found)
	}
	t.write(&s, "  ")

	var changes []string
	for _, sp := range h.Spans {
		if sp.Break != nil {
			changes = append(changes, TerminalText(sp.From)+": "+TerminalText(BreakText(&sp.Break.Break)))
		}
	}
	if len(changes) > 0 {
		s.WriteString("\nChanges found by the break tests\n")
		for _, c := range changes {
			wrap(&s, c, "  ", textWidth)
		}
	}
	s.WriteString("\nWhy each formula\n")
	for _, sp := range h.Spans {
		wrap(&s, TerminalText(sp.From)+": "+TerminalText(sp.Reason), "  ", textWidth)
	}
	s.WriteString("\nAlerts\n")
	if len(h.Alerts) == 0 {
		s.WriteString("  none\n")
	} else {
		t := table{header: []string{"ID", "SEVERITY", "KIND", "PERIOD", "STATUS", "MESSAGE"}, right: "rlllll"}
		for _, a := range h.Alerts {
			t.add(fmt.Sprint(a.ID), TerminalText(a.Severity), TerminalText(a.Kind), TerminalText(a.Period), TerminalText(a.Status), TerminalText(a.Message))
		}
		t.write(&s, "  ")
	}
	s.WriteString("\n" + h.Cautions + "\n")
	_, err := io.WriteString(w, s.String())
	return err
}

// BreakText writes a break's test, statistic and p-value for a reader: the
// statistic in words beyond a sane range, the p-value no finer than the
// test resolves (a bootstrap of B resamples 1/(B+1)).
func BreakText(k *costdrift.Break) string {
	resolution := present.AnalyticResolution
	if strings.Contains(k.Test, "bootstrap") {
		resolution = present.BootstrapResolution(k.Replicates)
	}
	test := k.Test
	if test == "" {
		test = "break test"
	}
	return fmt.Sprintf("%s, statistic %s, p %s", test, present.Statistic(k.Statistic), present.PValue(k.P, resolution))
}
