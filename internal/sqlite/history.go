package sqlite

import (
	"context"
	"fmt"

	"github.com/costdrift/costdrift/internal/costdrift"
)

// BehaviourHistory is every behaviour the store recorded for one object
// ("6200/WELD"), oldest first: each with the periods it held and the runs
// that found and replaced it. An object never analysed has none.
func (db *DB) BehaviourHistory(ctx context.Context, object string) ([]costdrift.BehaviourSpan, error) {
	rows, err := db.q().QueryContext(ctx, `SELECT id, COALESCE(valid_from_period, since, ''), COALESCE(valid_to_period, ''),
		first_run_id, last_run_id, valid_from_run_at, COALESCE(valid_to_run_at, '')
		FROM behaviour_history WHERE object = ? ORDER BY COALESCE(valid_from_period, since, ''), valid_from_run_at, id`, object)
	if err != nil {
		return nil, fmt.Errorf("behaviour history: %w", err)
	}
	var spans []costdrift.BehaviourSpan
	var ids []int64
	for rows.Next() {
		var s costdrift.BehaviourSpan
		var id int64
		if err := rows.Scan(&id, &s.From, &s.To, &s.FirstRunID, &s.LastRunID, &s.FoundAt, &s.ClosedAt); err != nil {
			rows.Close()
			return nil, fmt.Errorf("behaviour history: %w", err)
		}
		spans, ids = append(spans, s), append(ids, id)
	}
	if err := rows.Close(); err != nil {
		return nil, fmt.Errorf("behaviour history: %w", err)
	}
	if err := rows.Err(); err != nil {
		return nil, fmt.Errorf("behaviour history: %w", err)
	}
	// A history is a few rows: each is read whole as every behaviour is.
	for i, id := range ids {
		bs, err := db.behaviours(ctx, "id = ?", id)
		if err != nil {
			return nil, fmt.Errorf("behaviour history: %w", err)
		}
		if len(bs) == 1 {
			spans[i].Behaviour = bs[0]
		}
	}
	return spans, nil
}
