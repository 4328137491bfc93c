package main

import (
	"context"
	"errors"
	"fmt"
	"io"
	"maps"
	"math"
	"slices"
	"strconv"
	"strings"
	"text/tabwriter"
	"time"
	"unicode/utf8"

	"github.com/spf13/cobra"

	"github.com/costdrift/costdrift/internal/costdrift"
	"github.com/costdrift/costdrift/internal/pipeline"
	"github.com/costdrift/costdrift/internal/present"
	"github.com/costdrift/costdrift/internal/report"
	"github.com/costdrift/costdrift/internal/sqlite"
)

func (a *app) alertsCommand() *cobra.Command {
	cmd := &cobra.Command{
		Use:   "alerts",
		Short: "List, show and acknowledge the alerts in the store",
		Long: `An alert is a condition worth a look on one cost object or source: a class or
driver that changed, a fixed part or rate that shifted, spending outside what
the formula predicts, activity outside the relevant range, missing postings, a
stale or failing source. The same condition stays one alert, updated on every
evaluation, and resolves itself when the condition clears.`,
		Args: cobra.NoArgs,
	}
	cmd.AddCommand(a.alertsListCommand(), a.alertsShowCommand(), a.alertsAckCommand())
	return cmd
}

func checkFormat(format string) error {
	if format != "table" && format != "json" {
		return fmt.Errorf("--format must be table or json, not %q", format)
	}
	return nil
}

func (a *app) alertsListCommand() *cobra.Command {
	var format, status, kind, object, minSeverity string
	cmd := &cobra.Command{
		Use:   "list",
		Short: "List alerts, the most severe first, then the newest period",
		Args:  cobra.NoArgs,
		RunE: func(cmd *cobra.Command, args []string) error {
			if err := checkFormat(format); err != nil {
				return err
			}
			switch status {
			case "", costdrift.AlertOpen, costdrift.AlertAcknowledged, costdrift.AlertResolved, sqlite.AlertStatusAll:
			default:
				return fmt.Errorf("--status must be open, acknowledged, resolved or all, not %q", status)
			}
			if kind != "" && !costdrift.AlertKind(kind).Valid() {
				return fmt.Errorf("--kind must be one of %s, not %q", kindList(), kind)
			}
			if minSeverity != "" && !costdrift.Severity(minSeverity).Valid() {
				return fmt.Errorf("--min-severity must be info, warning or critical, not %q", minSeverity)
			}
			filter := sqlite.AlertFilter{Status: status, Kind: costdrift.AlertKind(kind), Object: object, MinSeverity: costdrift.Severity(minSeverity)}
			return a.withStore(cmd.Context(), func(_ *pipeline.Env, db *sqlite.DB) error {
				alerts, err := db.Alerts(cmd.Context(), filter)
				if err != nil {
					return fmt.Errorf("alerts: %w", err)
				}
				if format == "json" {
					return writeAlertsJSON(a.out, alerts)
				}
				return writeAlertsTable(a.out, alerts, status)
			})
		},
	}
	cmd.Flags().StringVar(&status, "status", "", "open, acknowledged, resolved or all (default: open and acknowledged)")
	cmd.Flags().StringVar(&format, "format", "table", "table or json")
	cmd.Flags().StringVar(&kind, "kind", "", "only alerts of this kind")
	cmd.Flags().StringVar(&object, "object", "", `only alerts on this cost object ("6200/WELD") or source`)
	cmd.Flags().StringVar(&minSeverity, "min-severity", "", "only alerts at least this severe: info, warning or critical")
	return cmd
}

func (a *app) alertsShowCommand() *cobra.Command {
	var format string
	cmd := &cobra.Command{
		Use:   "show ID",
		Short: "Show one alert with the evidence behind it",
		Args:  cobra.ExactArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			if err := checkFormat(format); err != nil {
				return err
			}
			id, err := parseAlertID(args[0])
			if err != nil {
				return err
			}
			return a.withStore(cmd.Context(), func(_ *pipeline.Env, db *sqlite.DB) error {
				alert, err := readAlert(cmd.Context(), db, id)
				if err != nil {
					return err
				}
				notes, err := db.AlertNotes(cmd.Context(), id)
				if err != nil {
					return err
				}
				if format == "json" {
					j := newAlertJSON(alert)
					j.Notes = make([]noteJSON, 0, len(notes))
					for _, n := range notes {
						j.Notes = append(j.Notes, noteJSON{By: n.By, At: n.At.UTC().Format(time.RFC3339), Text: n.Reason})
					}
					return encodeJSON(a.out, j)
				}
				if err := writeAlertDetail(a.out, alert); err != nil {
					return err
				}
				return writeNotes(a.out, notes)
			})
		},
	}
	cmd.Flags().StringVar(&format, "format", "table", "table or json")
	return cmd
}

func (a *app) alertsAckCommand() *cobra.Command {
	var until, note, by string
	cmd := &cobra.Command{
		Use:   "ack ID",
		Short: "Acknowledge an alert, until a period has passed or until its condition changes",
		Long: `ack marks an alert as seen. With --until PERIOD it opens again at the first
evaluation after that period if its condition still holds; without it, it
stays acknowledged until the condition clears (a condition that comes back
after clearing is open again). Either way it opens again at once if it
escalates.

--note adds a line to the alert's thread, with who wrote it and when;
` + "`costdrift alerts show ID`" + ` prints the thread.`,
		Args: cobra.ExactArgs(1),
		RunE: func(cmd *cobra.Command, args []string) error {
			id, err := parseAlertID(args[0])
			if err != nil {
				return err
			}
			noted := cmd.Flags().Changed("note")
			if noted && strings.TrimSpace(note) == "" {
				return errors.New("--note is empty: say what you found or decided")
			}
			who := ""
			if noted {
				if who, err = decider(by); err != nil {
					return err
				}
			}
			// An acknowledgement is one short write, like every decision:
			// it takes no lock, so it works beside a running daemon.
			return a.withStore(cmd.Context(), func(e *pipeline.Env, db *sqlite.DB) error {
				if until != "" {
					if _, err := e.Calendar.Parse(until); err != nil {
						return fmt.Errorf("--until: %v; give a period of the %s calendar the store uses", err, e.Calendar.Kind())
					}
				}
				if err := db.AckAlert(cmd.Context(), id, until); err != nil {
					if errors.Is(err, sqlite.ErrAlertNotFound) {
						return noAlert(id)
					}
					return err
				}
				if noted {
					if err := db.NoteAlert(cmd.Context(), id, who, strings.TrimSpace(note), e.Now()); err != nil {
						return fmt.Errorf("alert %d: note: %w", id, err)
					}
				}
				alert, err := readAlert(cmd.Context(), db, id)
				if err != nil {
					return err
				}
				what := fmt.Sprintf("alert %d (%s on %s)", id, alert.Kind, report.TerminalText(alert.Object))
				if until == "" {
					_, err = fmt.Fprintf(a.out, "%s acknowledged until its condition changes: it opens again if it escalates, or clears and comes back\n", what)
				} else {
					_, err = fmt.Fprintf(a.out, "%s acknowledged until %s: it opens again if it still holds after %s, or escalates\n", what, until, until)
				}
				return err
			})
		},
	}
	cmd.Flags().StringVar(&until, "until", "", "acknowledge until this `PERIOD` has passed (default: until the condition changes)")
	cmd.Flags().StringVar(&note, "note", "", "add this `TEXT` to the alert's thread")
	cmd.Flags().StringVar(&by, "by", "", "who writes the note (default: your user name)")
	return cmd
}

func parseAlertID(arg string) (int64, error) {
	id, err := strconv.ParseInt(arg, 10, 64)
	if err != nil || id <= 0 {
		return 0, fmt.Errorf("alert id must be a number as `costdrift alerts list` shows it, not %q", arg)
	}
	return id, nil
}

func readAlert(ctx context.Context, db *sqlite.DB, id int64) (costdrift.Alert, error) {
	alert, err := db.Alert(ctx, id)
	if errors.Is(err, sqlite.ErrAlertNotFound) {
		return alert, noAlert(id)
	}
	if err != nil {
		return alert, fmt.Errorf("alert %d: %w", id, err)
	}
	return alert, nil
}

func noAlert(id int64) error {
	return fmt.Errorf("no alert %d in the store: `costdrift alerts list --status all` lists every alert", id)
}

func kindList() string {
	var names []string
	for _, k := range costdrift.AlertKinds() {
		names = append(names, string(k))
	}
	return strings.Join(names, ", ")
}

// alertJSON is one alert as `alerts list` and `alerts show` print it. The
// first seven fields are the documented contract; the rest add context.
type alertJSON struct {
	ID       int64  `json:"id"`
	Kind     string `json:"kind"`
	Object   string `json:"object"`
	Severity string `json:"severity"`
	Status   string `json:"status"`
	Period   string `json:"period"`
	Message  string `json:"message"`

	AckUntil    *string        `json:"ack_until"`   // null: not acknowledged, or until the condition changes
	Occurrences int            `json:"occurrences"` // evaluations that raised it
	CreatedAt   string         `json:"created_at"`  // RFC 3339, UTC
	UpdatedAt   string         `json:"updated_at"`
	ResolvedAt  *string        `json:"resolved_at"`
	Fingerprint string         `json:"fingerprint"`
	Evidence    map[string]any `json:"evidence"`
	// Notes is the alert's thread, oldest first; `alerts show` only.
	Notes []noteJSON `json:"notes,omitempty"`
}

// noteJSON is one note on an alert.
type noteJSON struct {
	By   string `json:"by"`
	At   string `json:"at"` // RFC 3339, UTC
	Text string `json:"text"`
}

// writeNotes prints an alert's thread under its evidence.
func writeNotes(w io.Writer, notes []costdrift.Decision) error {
	if len(notes) == 0 {
		return nil
	}
	fmt.Fprintln(w, "\nNotes")
	for _, n := range notes {
		if _, err := fmt.Fprintf(w, "  %s  %s: %s\n", clockTime(n.At), report.TerminalText(n.By), report.TerminalText(n.Reason)); err != nil {
			return err
		}
	}
	return nil
}

func newAlertJSON(a costdrift.Alert) alertJSON {
	j := alertJSON{ID: a.ID, Kind: string(a.Kind), Object: a.Object, Severity: string(a.Severity), Status: a.Status,
		Period: a.Period, Message: a.Message, Occurrences: a.Occurrences, Fingerprint: a.Fingerprint, Evidence: a.Evidence.Map(),
		CreatedAt: a.CreatedAt.UTC().Format(time.RFC3339), UpdatedAt: a.UpdatedAt.UTC().Format(time.RFC3339)}
	if a.AckUntil != "" {
		until := a.AckUntil
		j.AckUntil = &until
	}
	if !a.ResolvedAt.IsZero() {
		at := a.ResolvedAt.UTC().Format(time.RFC3339)
		j.ResolvedAt = &at
	}
	if j.Evidence == nil {
		j.Evidence = map[string]any{}
	}
	return j
}

func writeAlertsJSON(w io.Writer, alerts []costdrift.Alert) error {
	out := make([]alertJSON, 0, len(alerts))
	for _, a := range alerts {
		out = append(out, newAlertJSON(a))
	}
	return encodeJSON(w, out)
}

// encodeJSON writes v indented. The encoder's HTML escaping stays on: text
// from the ledger in a message (`<script>`) comes out as \u003c…, safe to
// paste into a web page as well as to parse; control characters come out
// escaped, safe to print on a terminal.
func encodeJSON(w io.Writer, v any) error { return report.EncodeJSON(w, v) }

func writeAlertsTable(w io.Writer, alerts []costdrift.Alert, status string) error {
	if len(alerts) == 0 {
		what := map[string]string{"": "open or acknowledged alerts", sqlite.AlertStatusAll: "alerts",
			costdrift.AlertOpen: "open alerts", costdrift.AlertAcknowledged: "acknowledged alerts", costdrift.AlertResolved: "resolved alerts"}[status]
		_, err := fmt.Fprintf(w, "no %s\n", what)
		return err
	}
	tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', 0)
	fmt.Fprintln(tw, "ID\tSEVERITY\tKIND\tOBJECT\tPERIOD\tSTATUS\tMESSAGE")
	for _, a := range alerts {
		fmt.Fprintf(tw, "%d\t%s\t%s\t%s\t%s\t%s\t%s\n", a.ID, a.Severity, a.Kind, report.TerminalText(a.Object), report.TerminalText(a.Period),
			statusText(a), report.TerminalText(a.Message))
	}
	if err := tw.Flush(); err != nil {
		return err
	}
	_, err := fmt.Fprintln(w, "\n`costdrift alerts show ID` shows the evidence; `costdrift alerts ack ID [--until PERIOD]` acknowledges.")
	return err
}

func statusText(a costdrift.Alert) string {
	if a.Status == costdrift.AlertAcknowledged && a.AckUntil != "" {
		return "acknowledged until " + report.TerminalText(a.AckUntil)
	}
	return a.Status
}

// writeAlertDetail lays one alert out as label and value, then its
// evidence, one key a line, nested values indented under their key.
func writeAlertDetail(w io.Writer, a costdrift.Alert) error {
	fmt.Fprintf(w, "Alert %d: %s on %s\n\n", a.ID, a.Kind, report.TerminalText(a.Object))
	tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', 0)
	row := func(label, value string) { fmt.Fprintf(tw, "  %s\t%s\n", label, value) }
	row("severity", string(a.Severity))
	row("status", statusText(a))
	row("period", report.TerminalText(a.Period))
	row("message", report.TerminalText(a.Message))
	row("first raised", clockTime(a.CreatedAt))
	row("last changed", clockTime(a.UpdatedAt))
	if !a.ResolvedAt.IsZero() {
		row("resolved", clockTime(a.ResolvedAt))
	}
	row("occurrences", strconv.Itoa(a.Occurrences))
	row("fingerprint", a.Fingerprint)
	if err := tw.Flush(); err != nil {
		return err
	}
	fmt.Fprintln(w)
	if len(a.Evidence.Map()) == 0 {
		_, err := fmt.Fprintln(w, "Evidence: none stored")
		return err
	}
	fmt.Fprintln(w, "Evidence")
	var rows []evidenceRow
	evidenceRows(&rows, "  ", a.Evidence.Map())
	width := 0
	for _, r := range rows {
		width = max(width, utf8.RuneCountInString(r.label))
	}
	for _, r := range rows {
		if !r.heading {
			r.label += strings.Repeat(" ", width-utf8.RuneCountInString(r.label)+2) + r.value
		}
		if _, err := fmt.Fprintln(w, strings.TrimRight(r.label, " ")); err != nil {
			return err
		}
	}
	return nil
}

// evidenceRow is one line of the evidence: an indented key and its value,
// or a heading (a key whose value is laid out on the lines below).
type evidenceRow struct {
	label, value string
	heading      bool
}

// evidenceRows lays a map out in key order; a map or a list of maps goes
// on the lines below its key, indented.
func evidenceRows(rows *[]evidenceRow, indent string, m map[string]any) {
	for _, k := range slices.Sorted(maps.Keys(m)) {
		label := indent + report.TerminalText(k)
		switch v := m[k].(type) {
		case map[string]any:
			*rows = append(*rows, evidenceRow{label: label, heading: true})
			evidenceRows(rows, indent+"  ", v)
		case []any:
			if !slices.ContainsFunc(v, func(x any) bool { _, ok := x.(map[string]any); return ok }) {
				*rows = append(*rows, evidenceRow{label: label, value: evidenceValue(v)})
				continue
			}
			*rows = append(*rows, evidenceRow{label: label, heading: true})
			for i, x := range v {
				item := fmt.Sprintf("%s  [%d]", indent, i+1)
				if sub, ok := x.(map[string]any); ok {
					*rows = append(*rows, evidenceRow{label: item, heading: true})
					evidenceRows(rows, indent+"    ", sub)
				} else {
					*rows = append(*rows, evidenceRow{label: item, value: evidenceValue(x)})
				}
			}
		default:
			*rows = append(*rows, evidenceRow{label: label, value: evidenceFigure(k, v)})
		}
	}
}

// evidenceFigure writes one evidence value for a reader: a p-value no
// finer than the tests resolve, a statistic beyond a sane range in words,
// other numbers through evidenceValue. JSON output keeps the raw numbers.
func evidenceFigure(key string, v any) string {
	f, ok := v.(float64)
	switch {
	case ok && key == "p":
		return present.PValue(f, present.AnalyticResolution)
	case ok && key == "statistic":
		return present.Statistic(f)
	}
	return evidenceValue(v)
}

// evidenceValue writes a scalar as read from JSON: whole numbers as they
// are, others in up to six significant digits with thousands separators
// (0.0012, 36, 2,800.5), never in exponent notation.
func evidenceValue(v any) string {
	switch v := v.(type) {
	case nil:
		return "-"
	case float64:
		if v == math.Trunc(v) && math.Abs(v) < 1e15 {
			return strconv.FormatFloat(v, 'f', 0, 64)
		}
		return present.Significant(v, 6)
	case string:
		return report.TerminalText(v)
	case bool:
		return strconv.FormatBool(v)
	case []any:
		parts := make([]string, len(v))
		for i, x := range v {
			parts[i] = evidenceValue(x)
		}
		return strings.Join(parts, ", ")
	}
	return report.TerminalText(fmt.Sprint(v))
}

func clockTime(t time.Time) string { return t.UTC().Format("2006-01-02 15:04 UTC") }
