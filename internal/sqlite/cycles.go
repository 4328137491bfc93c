package sqlite

import (
	"context"
	"encoding/json"
	"fmt"
	"time"

	"github.com/costdrift/costdrift/internal/costdrift"
)

// BeginCycle records the start of a daemon cycle. Cycles that a killed
// process left "running" are first marked failed, so the table never claims
// a cycle is under way when none is.
func (db *DB) BeginCycle(ctx context.Context, c *costdrift.Cycle) error {
	c.StartedAt = db.Now().UTC()
	c.Status = "running"
	started := c.StartedAt.Format(time.RFC3339)
	if _, err := db.q().ExecContext(ctx, `UPDATE cycles SET status = 'failed', finished_at = ?,
		error = 'interrupted: the process stopped before this cycle finished' WHERE status = 'running'`, started); err != nil {
		return fmt.Errorf("cycle: %w", err)
	}
	res, err := db.q().ExecContext(ctx, `INSERT INTO cycles (started_at, status) VALUES (?, 'running')`, started)
	if err != nil {
		return fmt.Errorf("cycle: %w", err)
	}
	c.ID, err = res.LastInsertId()
	return err
}

// FinishCycle records how a cycle ended: ok, or failed with cause; the
// stage durations are stored in seconds.
func (db *DB) FinishCycle(ctx context.Context, c *costdrift.Cycle, cause error) error {
	c.FinishedAt = db.Now().UTC()
	c.Status = "ok"
	var errText any
	if cause != nil {
		c.Status = "failed"
		c.Error = cause.Error()
		errText = c.Error
	}
	seconds := make(map[string]float64, len(c.Stages))
	for name, d := range c.Stages {
		seconds[name] = d.Seconds()
	}
	stages, err := json.Marshal(seconds)
	if err != nil {
		return fmt.Errorf("cycle %d: %w", c.ID, err)
	}
	if _, err := db.q().ExecContext(ctx, `UPDATE cycles SET finished_at = ?, status = ?, error = ?, stages = ? WHERE id = ?`,
		c.FinishedAt.Format(time.RFC3339), c.Status, errText, string(stages), c.ID); err != nil {
		return fmt.Errorf("cycle %d: %w", c.ID, err)
	}
	return nil
}

// Cycles returns the most recent cycles, newest first.
func (db *DB) Cycles(ctx context.Context, limit int) ([]costdrift.Cycle, error) {
	rows, err := db.q().QueryContext(ctx, `SELECT id, started_at, COALESCE(finished_at, ''), status, COALESCE(error, ''), stages
		FROM cycles ORDER BY id DESC LIMIT ?`, limit)
	if err != nil {
		return nil, err
	}
	defer rows.Close()
	var cycles []costdrift.Cycle
	for rows.Next() {
		var c costdrift.Cycle
		var started, finished, stages string
		if err := rows.Scan(&c.ID, &started, &finished, &c.Status, &c.Error, &stages); err != nil {
			return nil, err
		}
		c.StartedAt, _ = time.Parse(time.RFC3339, started)
		c.FinishedAt, _ = time.Parse(time.RFC3339, finished)
		var seconds map[string]float64
		if err := json.Unmarshal([]byte(stages), &seconds); err != nil {
			return nil, fmt.Errorf("cycle %d: stages: %w", c.ID, err)
		}
		c.Stages = make(map[string]time.Duration, len(seconds))
		for name, s := range seconds {
			c.Stages[name] = time.Duration(s * float64(time.Second))
		}
		cycles = append(cycles, c)
	}
	return cycles, rows.Err()
}
