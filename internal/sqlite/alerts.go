package sqlite

import (
	"context"
	"database/sql"
	"encoding/json"
	"errors"
	"fmt"
	"strings"
	"time"

	"github.com/costdrift/costdrift/internal/costdrift"
)

// ErrAlertNotFound means no alert has the id asked for.
var ErrAlertNotFound = errors.New("no such alert")

// AlertChanges is what one ApplyAlerts did, with the ids a notification
// needs. Counts are the lengths of the id lists, and Updated.
type AlertChanges struct {
	New        []int64 // conditions never seen before, inserted open
	Reopened   []int64 // resolved before and raised again: open again, same row
	Escalated  []int64 // open or acknowledged, raised again at a higher severity
	AckExpired []int64 // acknowledged until a period that has now passed, raised again: open again
	Updated    int     // open or acknowledged and raised again, Escalated and AckExpired included
	Resolved   []int64 // open or acknowledged, of a kind evaluated, and not raised this time
}

// AlertFilter selects alerts. Zero fields select everything, except Status:
// "" selects the alerts not resolved (open and acknowledged), "all" every
// status, and "open", "acknowledged" or "resolved" that one.
type AlertFilter struct {
	Status      string
	Kind        costdrift.AlertKind
	Object      string
	MinSeverity costdrift.Severity
}

// AlertStatusAll is the AlertFilter status that selects every alert.
const AlertStatusAll = "all"

// ApplyAlerts records one evaluation of the alert rules, in one transaction.
// raised are the conditions the rules found; evaluated are the kinds whose
// rules ran, over every object they cover; period is the newest period the
// evaluation saw. For each raised alert, by fingerprint:
//
//   - a fingerprint not stored yet is inserted, open, with occurrences 1;
//   - an open or acknowledged alert takes the new message, evidence and
//     period, and occurrences + 1. Its severity rises when the new one ranks
//     higher (reported in Escalated) and never falls while the alert lasts.
//     An acknowledged alert opens again when it escalates, or when its
//     ack_until period has passed (period > ack_until; periods of one
//     calendar sort as text in time order);
//   - a resolved alert is the same condition come back: the same row opens
//     again with the new severity, message, evidence and period.
//
// A raised alert without a Period takes the evaluation's period.
//
// An open or acknowledged alert of an evaluated kind that was not raised
// has seen its condition clear: it is resolved, with resolved_at. Alerts of
// kinds not evaluated are left as they are.
//
// A raised alert that fails Validate, of a kind not in evaluated, or sharing
// its fingerprint with another raised alert or with a stored alert of
// another kind or object, is refused, and nothing is written.
func (db *DB) ApplyAlerts(ctx context.Context, raised []costdrift.Alert, evaluated []costdrift.AlertKind, period string) (AlertChanges, error) {
	if period == "" {
		return AlertChanges{}, errors.New("apply alerts: no period")
	}
	kinds := map[costdrift.AlertKind]bool{}
	for _, k := range evaluated {
		if !k.Valid() {
			return AlertChanges{}, fmt.Errorf("apply alerts: evaluated kind %q is not one of the eleven kinds", k)
		}
		kinds[k] = true
	}
	raisedFingerprints := map[string]bool{}
	for _, a := range raised {
		if err := a.Validate(); err != nil {
			return AlertChanges{}, fmt.Errorf("apply alerts: %w", err)
		}
		if !kinds[a.Kind] {
			return AlertChanges{}, fmt.Errorf("apply alerts: %s on %s was raised, but %s is not among the kinds evaluated", a.Kind, a.Object, a.Kind)
		}
		if raisedFingerprints[a.Fingerprint] {
			return AlertChanges{}, fmt.Errorf("apply alerts: %s on %s: another alert raised in this evaluation has fingerprint %s", a.Kind, a.Object, a.Fingerprint)
		}
		raisedFingerprints[a.Fingerprint] = true
	}

	var ch AlertChanges
	err := db.inTx(ctx, func(tx *sql.Tx) error {
		now := db.now()
		for _, a := range raised {
			if err := raiseAlert(ctx, tx, a, period, now, &ch); err != nil {
				return fmt.Errorf("apply alerts: %s on %s: %w", a.Kind, a.Object, err)
			}
		}
		// In the product's order, so resolved ids come out the same way on
		// every run.
		for _, k := range costdrift.AlertKinds() {
			if !kinds[k] {
				continue
			}
			if err := resolveCleared(ctx, tx, k, raisedFingerprints, now, &ch); err != nil {
				return fmt.Errorf("apply alerts: resolve %s: %w", k, err)
			}
		}
		return nil
	})
	if err != nil {
		return AlertChanges{}, err
	}
	return ch, nil
}

// raiseAlert inserts or updates the alert with a's fingerprint.
func raiseAlert(ctx context.Context, tx *sql.Tx, a costdrift.Alert, period, now string, ch *AlertChanges) error {
	evidence, err := evidenceJSON(a.Evidence)
	if err != nil {
		return err
	}
	alertPeriod := a.Period
	if alertPeriod == "" {
		alertPeriod = period
	}
	var id int64
	var kind, object, status, severity string
	var ackUntil sql.NullString
	err = tx.QueryRowContext(ctx, `SELECT id, kind, object, status, severity, ack_until FROM alerts WHERE fingerprint = ?`,
		a.Fingerprint).Scan(&id, &kind, &object, &status, &severity, &ackUntil)
	if errors.Is(err, sql.ErrNoRows) {
		res, err := tx.ExecContext(ctx, `INSERT INTO alerts (kind, object, severity, status, period, message, fingerprint,
			created_at, updated_at, evidence, occurrences) VALUES (?, ?, ?, 'open', ?, ?, ?, ?, ?, ?, 1)`,
			string(a.Kind), a.Object, string(a.Severity), alertPeriod, a.Message, a.Fingerprint, now, now, evidence)
		if err != nil {
			return err
		}
		id, err := res.LastInsertId()
		if err != nil {
			return err
		}
		ch.New = append(ch.New, id)
		return nil
	}
	if err != nil {
		return err
	}
	if kind != string(a.Kind) || object != a.Object {
		return fmt.Errorf("fingerprint %s already names alert %d, %s on %s", a.Fingerprint, id, kind, object)
	}

	if status == costdrift.AlertResolved {
		_, err := tx.ExecContext(ctx, `UPDATE alerts SET status = 'open', severity = ?, period = ?, message = ?, evidence = ?,
			occurrences = occurrences + 1, updated_at = ?, ack_until = NULL, resolved_at = NULL WHERE id = ?`,
			string(a.Severity), alertPeriod, a.Message, evidence, now, id)
		if err == nil {
			ch.Reopened = append(ch.Reopened, id)
		}
		return err
	}

	escalated := a.Severity.Rank() > costdrift.Severity(severity).Rank()
	if escalated {
		severity = string(a.Severity)
		ch.Escalated = append(ch.Escalated, id)
	}
	if status == costdrift.AlertAcknowledged {
		switch {
		case escalated:
			// The acknowledgement was of a milder condition.
			status, ackUntil = costdrift.AlertOpen, sql.NullString{}
		case ackUntil.Valid && period > ackUntil.String:
			status, ackUntil = costdrift.AlertOpen, sql.NullString{}
			ch.AckExpired = append(ch.AckExpired, id)
		}
	}
	_, err = tx.ExecContext(ctx, `UPDATE alerts SET status = ?, severity = ?, period = ?, message = ?, evidence = ?,
		occurrences = occurrences + 1, updated_at = ?, ack_until = ? WHERE id = ?`,
		status, severity, alertPeriod, a.Message, evidence, now, ackUntil, id)
	if err == nil {
		ch.Updated++
	}
	return err
}

// resolveCleared resolves the open and acknowledged alerts of one kind whose
// fingerprint was not raised.
func resolveCleared(ctx context.Context, tx *sql.Tx, kind costdrift.AlertKind, raised map[string]bool, now string, ch *AlertChanges) error {
	rows, err := tx.QueryContext(ctx, `SELECT id, fingerprint FROM alerts WHERE kind = ? AND status IN ('open', 'acknowledged') ORDER BY id`,
		string(kind))
	if err != nil {
		return err
	}
	var cleared []int64
	for rows.Next() {
		var id int64
		var fingerprint string
		if err := rows.Scan(&id, &fingerprint); err != nil {
			rows.Close()
			return err
		}
		if !raised[fingerprint] {
			cleared = append(cleared, id)
		}
	}
	rows.Close()
	if err := rows.Err(); err != nil {
		return err
	}
	for _, id := range cleared {
		if _, err := tx.ExecContext(ctx, `UPDATE alerts SET status = 'resolved', resolved_at = ?, updated_at = ? WHERE id = ?`,
			now, now, id); err != nil {
			return err
		}
		ch.Resolved = append(ch.Resolved, id)
	}
	return nil
}

// evidenceJSON encodes an alert's evidence; no evidence is NULL. Numbers
// that are not finite are stored as null (AlertEvidence.MarshalJSON).
func evidenceJSON(evidence costdrift.AlertEvidence) (any, error) {
	if len(evidence.Map()) == 0 {
		return nil, nil
	}
	b, err := json.Marshal(evidence)
	if err != nil {
		return nil, fmt.Errorf("evidence: %w", err)
	}
	return string(b), nil
}

// severityRankSQL is Severity.Rank as an SQL expression on the severity
// column, built from the domain so the two cannot disagree.
var severityRankSQL = func() string {
	var b strings.Builder
	b.WriteString("CASE severity")
	for _, s := range costdrift.Severities() {
		fmt.Fprintf(&b, " WHEN '%s' THEN %d", s, s.Rank())
	}
	b.WriteString(" ELSE 0 END")
	return b.String()
}()

const alertColumns = `id, kind, object, severity, status, COALESCE(period, ''), message, fingerprint, COALESCE(evidence, ''),
	created_at, updated_at, COALESCE(resolved_at, ''), COALESCE(ack_until, ''), occurrences`

// Alerts returns the alerts the filter selects, the most severe first, then
// the newest period first, then by id.
func (db *DB) Alerts(ctx context.Context, f AlertFilter) ([]costdrift.Alert, error) {
	var where []string
	var args []any
	switch f.Status {
	case "":
		where = append(where, "status IN ('open', 'acknowledged')")
	case AlertStatusAll:
	case costdrift.AlertOpen, costdrift.AlertAcknowledged, costdrift.AlertResolved:
		where = append(where, "status = ?")
		args = append(args, f.Status)
	default:
		return nil, fmt.Errorf("alert status %q is not open, acknowledged, resolved or all", f.Status)
	}
	if f.Kind != "" {
		if !f.Kind.Valid() {
			return nil, fmt.Errorf("alert kind %q is not one of the eleven kinds", f.Kind)
		}
		where = append(where, "kind = ?")
		args = append(args, string(f.Kind))
	}
	if f.Object != "" {
		where = append(where, "object = ?")
		args = append(args, f.Object)
	}
	if f.MinSeverity != "" {
		if !f.MinSeverity.Valid() {
			return nil, fmt.Errorf("severity %q is not info, warning or critical", f.MinSeverity)
		}
		where = append(where, severityRankSQL+" >= ?")
		args = append(args, f.MinSeverity.Rank())
	}
	query := "SELECT " + alertColumns + " FROM alerts"
	if len(where) > 0 {
		query += " WHERE " + strings.Join(where, " AND ")
	}
	query += " ORDER BY " + severityRankSQL + " DESC, COALESCE(period, '') DESC, id"
	rows, err := db.q().QueryContext(ctx, query, args...)
	if err != nil {
		return nil, err
	}
	defer rows.Close()
	var out []costdrift.Alert
	for rows.Next() {
		a, err := scanAlert(rows)
		if err != nil {
			return nil, err
		}
		out = append(out, a)
	}
	return out, rows.Err()
}

// Alert returns one alert; ErrAlertNotFound when no alert has that id.
func (db *DB) Alert(ctx context.Context, id int64) (costdrift.Alert, error) {
	a, err := scanAlert(db.q().QueryRowContext(ctx, "SELECT "+alertColumns+" FROM alerts WHERE id = ?", id))
	if errors.Is(err, sql.ErrNoRows) {
		return a, fmt.Errorf("alert %d: %w", id, ErrAlertNotFound)
	}
	return a, err
}

// AckAlert acknowledges an open or acknowledged alert until the period
// until has passed, or, with until "", until its condition changes: it
// escalates, or clears and comes back. Acknowledging again replaces the
// period. A resolved alert cannot be acknowledged.
func (db *DB) AckAlert(ctx context.Context, id int64, until string) error {
	return db.inTx(ctx, func(tx *sql.Tx) error {
		var status string
		err := tx.QueryRowContext(ctx, `SELECT status FROM alerts WHERE id = ?`, id).Scan(&status)
		if errors.Is(err, sql.ErrNoRows) {
			return fmt.Errorf("alert %d: %w", id, ErrAlertNotFound)
		}
		if err != nil {
			return err
		}
		if status == costdrift.AlertResolved {
			return fmt.Errorf("alert %d is resolved: its condition has cleared, so there is nothing to acknowledge", id)
		}
		_, err = tx.ExecContext(ctx, `UPDATE alerts SET status = 'acknowledged', ack_until = ?, updated_at = ? WHERE id = ?`,
			nullString(until), db.now(), id)
		return err
	})
}

// scanner is a *sql.Row or *sql.Rows.
type scanner interface{ Scan(dest ...any) error }

func scanAlert(s scanner) (costdrift.Alert, error) {
	var a costdrift.Alert
	var kind, severity, evidence, created, updated, resolved string
	if err := s.Scan(&a.ID, &kind, &a.Object, &severity, &a.Status, &a.Period, &a.Message, &a.Fingerprint, &evidence,
		&created, &updated, &resolved, &a.AckUntil, &a.Occurrences); err != nil {
		return a, err
	}
	a.Kind, a.Severity = costdrift.AlertKind(kind), costdrift.Severity(severity)
	if evidence != "" {
		if err := json.Unmarshal([]byte(evidence), &a.Evidence); err != nil {
			return a, fmt.Errorf("alert %d: evidence: %w", a.ID, err)
		}
	}
	var err error
	if a.CreatedAt, err = time.Parse(time.RFC3339, created); err != nil {
		return a, fmt.Errorf("alert %d: created_at: %w", a.ID, err)
	}
	if a.UpdatedAt, err = time.Parse(time.RFC3339, updated); err != nil {
		return a, fmt.Errorf("alert %d: updated_at: %w", a.ID, err)
	}
	if resolved != "" {
		if a.ResolvedAt, err = time.Parse(time.RFC3339, resolved); err != nil {
			return a, fmt.Errorf("alert %d: resolved_at: %w", a.ID, err)
		}
	}
	return a, nil
}
