package sqlite

import (
	"context"
	"database/sql"
	"encoding/json"
	"errors"
	"fmt"
	"sort"
	"time"

	"github.com/costdrift/costdrift/internal/costdrift"
)

// Each decision is written in a short transaction of its own, which reads
// the decision in force and adds the row that replaces it: transactions
// start IMMEDIATE (open), so two commands deciding on the same object one
// after the other each see the other's row, and a decision made while the
// daemon writes waits for the busy timeout rather than failing.

// ErrNotPinned is returned by Unpin for an object without a pin.
var ErrNotPinned = errors.New("not pinned")

// Pin records a pin and returns its decision's id.
func (db *DB) Pin(ctx context.Context, p costdrift.Pin) (int64, error) {
	payload, err := json.Marshal(p)
	if err != nil {
		return 0, err
	}
	var id int64
	err = db.inTx(ctx, func(tx *sql.Tx) error {
		replaces, err := latestDecision(ctx, tx, p.Object, "", costdrift.DecisionPin, costdrift.DecisionUnpin)
		if err != nil {
			return err
		}
		id, err = insertDecision(ctx, tx, costdrift.Decision{At: p.At, By: p.By, Object: p.Object, Kind: costdrift.DecisionPin,
			Payload: string(payload), Reason: p.Reason, Replaces: replaces.ID})
		return err
	})
	return id, err
}

// Unpin records that object's formula is the data's again. It returns
// ErrNotPinned, and records nothing, when object has no pin.
func (db *DB) Unpin(ctx context.Context, object, by, reason string, at time.Time) error {
	return db.inTx(ctx, func(tx *sql.Tx) error {
		last, err := latestDecision(ctx, tx, object, "", costdrift.DecisionPin, costdrift.DecisionUnpin)
		if err != nil {
			return err
		}
		if last.Kind != costdrift.DecisionPin {
			return ErrNotPinned
		}
		_, err = insertDecision(ctx, tx, costdrift.Decision{At: at, By: by, Object: object, Kind: costdrift.DecisionUnpin,
			Reason: reason, Replaces: last.ID})
		return err
	})
}

// Exclude records that periods are left out of object's fit, in one
// transaction.
func (db *DB) Exclude(ctx context.Context, object string, periods []string, by, reason string, at time.Time) error {
	return db.inTx(ctx, func(tx *sql.Tx) error {
		for _, p := range periods {
			last, err := latestDecision(ctx, tx, object, p, costdrift.DecisionExclude, costdrift.DecisionInclude)
			if err != nil {
				return err
			}
			if _, err := insertDecision(ctx, tx, costdrift.Decision{At: at, By: by, Object: object, Kind: costdrift.DecisionExclude,
				Period: p, Reason: reason, Replaces: last.ID}); err != nil {
				return err
			}
		}
		return nil
	})
}

// Include records that excluded periods are fitted again. A period that
// is not excluded is refused with an error naming it, and nothing is
// recorded.
func (db *DB) Include(ctx context.Context, object string, periods []string, by, reason string, at time.Time) error {
	return db.inTx(ctx, func(tx *sql.Tx) error {
		for _, p := range periods {
			last, err := latestDecision(ctx, tx, object, p, costdrift.DecisionExclude, costdrift.DecisionInclude)
			if err != nil {
				return err
			}
			if last.Kind != costdrift.DecisionExclude {
				return fmt.Errorf("period %s of %s is not excluded", p, object)
			}
			if _, err := insertDecision(ctx, tx, costdrift.Decision{At: at, By: by, Object: object, Kind: costdrift.DecisionInclude,
				Period: p, Reason: reason, Replaces: last.ID}); err != nil {
				return err
			}
		}
		return nil
	})
}

// DriverKnown reports whether the store holds activity for driver.
func (db *DB) DriverKnown(ctx context.Context, driver string) (bool, error) {
	var known bool
	err := db.q().QueryRowContext(ctx, `SELECT EXISTS (SELECT 1 FROM activity WHERE driver = ?)`, driver).Scan(&known)
	return known, err
}

// Pins returns the pins in force, by object (current_pins).
func (db *DB) Pins(ctx context.Context) (map[string]costdrift.Pin, error) {
	rows, err := db.q().QueryContext(ctx, `SELECT d.object, d.payload, d.made_by, d.made_at, d.reason, d.id
		FROM current_pins c JOIN decisions d ON d.id = c.decision_id`)
	if err != nil {
		return nil, fmt.Errorf("read pins: %w", err)
	}
	defer rows.Close()
	out := map[string]costdrift.Pin{}
	for rows.Next() {
		var p costdrift.Pin
		var payload, at string
		var object, by, reason string
		var id int64
		if err := rows.Scan(&object, &payload, &by, &at, &reason, &id); err != nil {
			return nil, fmt.Errorf("read pins: %w", err)
		}
		if err := json.Unmarshal([]byte(payload), &p); err != nil {
			return nil, fmt.Errorf("read pins: decision %d: %w", id, err)
		}
		p.Object, p.By, p.Reason, p.DecisionID = object, by, reason, id
		p.At, _ = time.Parse(time.RFC3339, at)
		out[object] = p
	}
	return out, rows.Err()
}

// Exclusions returns the periods excluded now, by object, in period order
// (current_exclusions).
func (db *DB) Exclusions(ctx context.Context) (map[string][]costdrift.Exclusion, error) {
	rows, err := db.q().QueryContext(ctx, `SELECT object, period, made_by, made_at, reason, decision_id FROM current_exclusions`)
	if err != nil {
		return nil, fmt.Errorf("read exclusions: %w", err)
	}
	defer rows.Close()
	out := map[string][]costdrift.Exclusion{}
	for rows.Next() {
		var x costdrift.Exclusion
		var at string
		if err := rows.Scan(&x.Object, &x.Period, &x.By, &at, &x.Reason, &x.DecisionID); err != nil {
			return nil, fmt.Errorf("read exclusions: %w", err)
		}
		x.At, _ = time.Parse(time.RFC3339, at)
		out[x.Object] = append(out[x.Object], x)
	}
	for _, xs := range out {
		sort.Slice(xs, func(i, j int) bool { return xs[i].Period < xs[j].Period })
	}
	return out, rows.Err()
}

// Decisions returns the decisions on object (every object when ""),
// oldest first.
func (db *DB) Decisions(ctx context.Context, object string) ([]costdrift.Decision, error) {
	rows, err := db.q().QueryContext(ctx, `SELECT id, made_at, made_by, object, kind, period, COALESCE(alert_id, 0), payload, reason, COALESCE(replaces, 0)
		FROM decisions WHERE ? = '' OR object = ? ORDER BY id`, object, object)
	if err != nil {
		return nil, fmt.Errorf("read decisions: %w", err)
	}
	defer rows.Close()
	var out []costdrift.Decision
	for rows.Next() {
		d, err := scanDecision(rows)
		if err != nil {
			return nil, fmt.Errorf("read decisions: %w", err)
		}
		out = append(out, d)
	}
	return out, rows.Err()
}

func scanDecision(s scanner) (costdrift.Decision, error) {
	var d costdrift.Decision
	var at, kind string
	if err := s.Scan(&d.ID, &at, &d.By, &d.Object, &kind, &d.Period, &d.AlertID, &d.Payload, &d.Reason, &d.Replaces); err != nil {
		return d, err
	}
	d.Kind = costdrift.DecisionKind(kind)
	d.At, _ = time.Parse(time.RFC3339, at)
	return d, nil
}

// latestDecision is the newest decision of one of two kinds on object (and
// period), the zero Decision when there is none.
func latestDecision(ctx context.Context, tx *sql.Tx, object, period string, a, b costdrift.DecisionKind) (costdrift.Decision, error) {
	row := tx.QueryRowContext(ctx, `SELECT id, made_at, made_by, object, kind, period, COALESCE(alert_id, 0), payload, reason, COALESCE(replaces, 0)
		FROM decisions WHERE object = ? AND period = ? AND kind IN (?, ?) ORDER BY id DESC LIMIT 1`, object, period, string(a), string(b))
	d, err := scanDecision(row)
	if errors.Is(err, sql.ErrNoRows) {
		return costdrift.Decision{}, nil
	}
	return d, err
}

func insertDecision(ctx context.Context, tx *sql.Tx, d costdrift.Decision) (int64, error) {
	payload := d.Payload
	if payload == "" {
		payload = "{}"
	}
	var alert, replaces any
	if d.AlertID != 0 {
		alert = d.AlertID
	}
	if d.Replaces != 0 {
		replaces = d.Replaces
	}
	res, err := tx.ExecContext(ctx, `INSERT INTO decisions (made_at, made_by, object, kind, period, alert_id, payload, reason, replaces)
		VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?)`, d.At.UTC().Format(time.RFC3339), d.By, d.Object, string(d.Kind), d.Period, alert, payload, d.Reason, replaces)
	if err != nil {
		return 0, fmt.Errorf("record decision: %w", err)
	}
	return res.LastInsertId()
}

// NoteAlert adds a note to alert id's thread, recorded as a decision on
// the alert's object. It returns ErrAlertNotFound for an unknown alert.
func (db *DB) NoteAlert(ctx context.Context, id int64, by, text string, at time.Time) error {
	return db.inTx(ctx, func(tx *sql.Tx) error {
		var object string
		err := tx.QueryRowContext(ctx, `SELECT object FROM alerts WHERE id = ?`, id).Scan(&object)
		if errors.Is(err, sql.ErrNoRows) {
			return ErrAlertNotFound
		}
		if err != nil {
			return err
		}
		_, err = insertDecision(ctx, tx, costdrift.Decision{At: at, By: by, Object: object, Kind: costdrift.DecisionNote,
			AlertID: id, Reason: text})
		return err
	})
}

// AlertNotes returns the notes on alert id, oldest first.
func (db *DB) AlertNotes(ctx context.Context, id int64) ([]costdrift.Decision, error) {
	rows, err := db.q().QueryContext(ctx, `SELECT id, made_at, made_by, object, kind, period, COALESCE(alert_id, 0), payload, reason, COALESCE(replaces, 0)
		FROM decisions WHERE alert_id = ? AND kind = 'note' ORDER BY id`, id)
	if err != nil {
		return nil, fmt.Errorf("read notes of alert %d: %w", id, err)
	}
	defer rows.Close()
	var out []costdrift.Decision
	for rows.Next() {
		d, err := scanDecision(rows)
		if err != nil {
			return nil, fmt.Errorf("read notes of alert %d: %w", id, err)
		}
		out = append(out, d)
	}
	return out, rows.Err()
}

// ErrNothingWaiting is returned by Approve and Decline when the object's
// current behaviour is already the approved one (or was declined).
var ErrNothingWaiting = errors.New("nothing waits for approval")

// ApprovalStates returns, for every object with a current behaviour, where
// it stands with approval.
func (db *DB) ApprovalStates(ctx context.Context) (map[string]costdrift.ApprovalState, error) {
	rows, err := db.q().QueryContext(ctx, `SELECT b.object, b.id, COALESCE(b.since, ''), b.valid_from_run_at,
			COALESCE(a.behaviour_id, 0), COALESCE(a.made_by, ''), COALESCE(a.made_at, ''), COALESCE(a.reason, ''),
			COALESCE(c.kind, ''), COALESCE(c.behaviour_id, 0), COALESCE(c.made_by, ''), COALESCE(c.made_at, ''), COALESCE(c.reason, '')
		FROM behaviour_history b
		LEFT JOIN approved_formulas a ON a.object = b.object
		LEFT JOIN current_approvals c ON c.object = b.object
		WHERE b.valid_to_run_at IS NULL`)
	if err != nil {
		return nil, fmt.Errorf("read approvals: %w", err)
	}
	defer rows.Close()
	out := map[string]costdrift.ApprovalState{}
	for rows.Next() {
		var s costdrift.ApprovalState
		var proposed, approvedAt, lastKind, lastAt string
		if err := rows.Scan(&s.Object, &s.CurrentID, &s.CurrentSince, &proposed, &s.ApprovedID, &s.ApprovedBy, &approvedAt, &s.ApprovedReason,
			&lastKind, &s.LastID, &s.LastBy, &lastAt, &s.LastWhy); err != nil {
			return nil, fmt.Errorf("read approvals: %w", err)
		}
		s.ProposedAt, _ = time.Parse(time.RFC3339, proposed)
		s.ApprovedAt, _ = time.Parse(time.RFC3339, approvedAt)
		s.LastAt, _ = time.Parse(time.RFC3339, lastAt)
		s.LastKind = costdrift.DecisionKind(lastKind)
		out[s.Object] = s
	}
	return out, rows.Err()
}

// ApprovedBehaviours returns the behaviour rows last approved, by object,
// as the store holds them (a row closed since holds its last formula).
func (db *DB) ApprovedBehaviours(ctx context.Context) (map[string]costdrift.Behaviour, error) {
	bs, err := db.behaviours(ctx, `id IN (SELECT behaviour_id FROM approved_formulas)`)
	if err != nil {
		return nil, fmt.Errorf("read approved formulas: %w", err)
	}
	out := make(map[string]costdrift.Behaviour, len(bs))
	for _, b := range bs {
		out[b.Object.String()] = b
	}
	return out, nil
}

// Approve records that object's current behaviour is approved (kind
// approve) or declined (kind decline). It returns ErrNotAnalysed for an
// object without a current behaviour and ErrNothingWaiting when the
// current behaviour is already approved, or, to decline, already declined.
func (db *DB) Approve(ctx context.Context, object string, kind costdrift.DecisionKind, by, reason string, at time.Time) error {
	return db.inTx(ctx, func(tx *sql.Tx) error {
		var id int64
		var class string
		var driver sql.NullString
		var lag sql.NullInt64
		var fixed, rate sql.NullFloat64
		err := tx.QueryRowContext(ctx, `SELECT id, class, driver, lag, fixed_per_period, variable_rate FROM behaviour_history
			WHERE object = ? AND valid_to_run_at IS NULL`, object).Scan(&id, &class, &driver, &lag, &fixed, &rate)
		if errors.Is(err, sql.ErrNoRows) {
			return ErrNotAnalysed
		}
		if err != nil {
			return err
		}
		var approved, lastID int64
		var lastKind string
		if err := tx.QueryRowContext(ctx, `SELECT COALESCE((SELECT behaviour_id FROM approved_formulas WHERE object = ?), 0),
			COALESCE((SELECT kind FROM current_approvals WHERE object = ?), ''),
			COALESCE((SELECT behaviour_id FROM current_approvals WHERE object = ?), 0)`, object, object, object).Scan(&approved, &lastKind, &lastID); err != nil {
			return err
		}
		declined := lastKind == string(costdrift.DecisionDecline) && lastID == id
		if approved == id || (kind == costdrift.DecisionDecline && declined) {
			return ErrNothingWaiting // a declined formula may still be approved
		}
		payload, _ := json.Marshal(map[string]any{"behaviour_id": id, "class": class, "driver": driver.String, "lag": lag.Int64,
			"fixed": fixed.Float64, "rate": rate.Float64})
		last, err := latestDecision(ctx, tx, object, "", costdrift.DecisionApprove, costdrift.DecisionDecline)
		if err != nil {
			return err
		}
		_, err = insertDecision(ctx, tx, costdrift.Decision{At: at, By: by, Object: object, Kind: kind, Payload: string(payload),
			Reason: reason, Replaces: last.ID})
		return err
	})
}
