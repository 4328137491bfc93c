package sqlite

import (
	"context"
	"database/sql"
	"errors"
	"fmt"
	"time"

	"github.com/costdrift/costdrift/internal/costdrift"
)

// Delivery is what was delivered of one alert to one recipient so far.
type Delivery struct {
	AlertID      int64
	Recipient    string
	SeveritySent costdrift.Severity // "" until a message reached the server
	Status       string             // DeliverySent or DeliveryFailed
	Attempts     int                // failed attempts in a row; 0 after a success
	LastError    string
	NextAttempt  time.Time // after a failure; zero otherwise
	SentAt       time.Time // the latest success; zero before
}

// Delivery statuses.
const (
	DeliverySent   = "sent"
	DeliveryFailed = "failed"
)

// Deliveries returns every delivery of recipient (every recipient's when
// recipient is ""), keyed by alert id then recipient.
func (db *DB) Deliveries(ctx context.Context, recipient string) (map[int64]map[string]Delivery, error) {
	rows, err := db.q().QueryContext(ctx, `SELECT alert_id, recipient, COALESCE(severity_sent, ''), status, attempts,
		COALESCE(last_error, ''), COALESCE(next_attempt_at, ''), COALESCE(sent_at, '')
		FROM deliveries WHERE ? = '' OR recipient = ? ORDER BY alert_id, recipient`, recipient, recipient)
	if err != nil {
		return nil, fmt.Errorf("read deliveries: %w", err)
	}
	defer rows.Close()
	out := map[int64]map[string]Delivery{}
	for rows.Next() {
		var d Delivery
		var sev, next, sent string
		if err := rows.Scan(&d.AlertID, &d.Recipient, &sev, &d.Status, &d.Attempts, &d.LastError, &next, &sent); err != nil {
			return nil, fmt.Errorf("read deliveries: %w", err)
		}
		d.SeveritySent = costdrift.Severity(sev)
		if d.NextAttempt, err = parseOptionalTime(next); err != nil {
			return nil, fmt.Errorf("read deliveries: alert %d to %s: next_attempt_at: %w", d.AlertID, d.Recipient, err)
		}
		if d.SentAt, err = parseOptionalTime(sent); err != nil {
			return nil, fmt.Errorf("read deliveries: alert %d to %s: sent_at: %w", d.AlertID, d.Recipient, err)
		}
		if out[d.AlertID] == nil {
			out[d.AlertID] = map[string]Delivery{}
		}
		out[d.AlertID][d.Recipient] = d
	}
	if err := rows.Err(); err != nil {
		return nil, fmt.Errorf("read deliveries: %w", err)
	}
	return out, nil
}

func parseOptionalTime(s string) (time.Time, error) {
	if s == "" {
		return time.Time{}, nil
	}
	return time.Parse(time.RFC3339, s)
}

// RecordDeliverySent records, in one transaction, that one message carrying the
// alerts (id → the severity it carried) reached the server for recipient
// at time at: status sent, that severity, attempts back to 0.
func (db *DB) RecordDeliverySent(ctx context.Context, recipient string, alerts map[int64]costdrift.Severity, at time.Time) error {
	if recipient == "" {
		return errors.New("record delivery: no recipient")
	}
	when := at.UTC().Format(time.RFC3339)
	return db.inTx(ctx, func(tx *sql.Tx) error {
		for id, sev := range alerts {
			if !sev.Valid() {
				return fmt.Errorf("record delivery: alert %d: severity %q", id, sev)
			}
			if _, err := tx.ExecContext(ctx, `INSERT INTO deliveries (alert_id, recipient, severity_sent, status, attempts, sent_at)
				VALUES (?, ?, ?, 'sent', 0, ?)
				ON CONFLICT (alert_id, recipient) DO UPDATE SET severity_sent = excluded.severity_sent, status = 'sent',
					attempts = 0, last_error = NULL, next_attempt_at = NULL, sent_at = excluded.sent_at`,
				id, recipient, string(sev), when); err != nil {
				return fmt.Errorf("record delivery of alert %d to %s: %w", id, recipient, err)
			}
		}
		return nil
	})
}

// RecordDeliveryFailed records, in one transaction, that a message carrying
// the alerts did not reach recipient: status failed, attempts + 1, the
// error, and next(attempts), the earliest time of the next try, counted from
// at. What was sent before (severity_sent, sent_at) stays.
func (db *DB) RecordDeliveryFailed(ctx context.Context, recipient string, alertIDs []int64, sendErr string, at time.Time,
	next func(attempts int) time.Duration) error {
	if recipient == "" {
		return errors.New("record delivery: no recipient")
	}
	return db.inTx(ctx, func(tx *sql.Tx) error {
		for _, id := range alertIDs {
			var attempts int
			err := tx.QueryRowContext(ctx, `SELECT attempts FROM deliveries WHERE alert_id = ? AND recipient = ?`, id, recipient).Scan(&attempts)
			if err != nil && !errors.Is(err, sql.ErrNoRows) {
				return fmt.Errorf("record failed delivery of alert %d to %s: %w", id, recipient, err)
			}
			attempts++
			retry := at.Add(next(attempts)).UTC().Format(time.RFC3339)
			if _, err := tx.ExecContext(ctx, `INSERT INTO deliveries (alert_id, recipient, status, attempts, last_error, next_attempt_at)
				VALUES (?, ?, 'failed', ?, ?, ?)
				ON CONFLICT (alert_id, recipient) DO UPDATE SET status = 'failed', attempts = excluded.attempts,
					last_error = excluded.last_error, next_attempt_at = excluded.next_attempt_at`,
				id, recipient, attempts, sendErr, retry); err != nil {
				return fmt.Errorf("record failed delivery of alert %d to %s: %w", id, recipient, err)
			}
		}
		return nil
	})
}
