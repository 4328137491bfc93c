package sqlite

import (
	"context"
	"database/sql"
	"errors"

	"github.com/costdrift/costdrift/internal/costdrift"
)

// LedgerPeriods returns every period in which the ledger has postings.
func (db *DB) LedgerPeriods(ctx context.Context) ([]string, error) {
	rows, err := db.db.QueryContext(ctx, `SELECT DISTINCT period FROM gl_lines`)
	if err != nil {
		return nil, err
	}
	defer rows.Close()
	var out []string
	for rows.Next() {
		var p string
		if err := rows.Scan(&p); err != nil {
			return nil, err
		}
		out = append(out, p)
	}
	return out, rows.Err()
}

// RecordedLedgerPeriods returns the periods the loads recorded storing
// ledger lines in (source_periods), without reading the lines: every period
// in which the ledger has postings, and perhaps a period whose lines have
// all moved since to another (a restated line keeps the period its first
// file recorded). A ledger file loaded before the store kept those counts
// (schema 14) and not read since is read through the per-file index. ok is
// false when some line came from a database source, whose counts a
// watermark read keeps only for the periods it read: the caller then reads
// LedgerPeriods.
func (db *DB) RecordedLedgerPeriods(ctx context.Context) (periods []string, ok bool, err error) {
	var fromQuery int
	if err := db.db.QueryRowContext(ctx, `SELECT COUNT(*) FROM (SELECT 1 FROM gl_lines WHERE source_file_id IS NULL LIMIT 1)`).Scan(&fromQuery); err != nil {
		return nil, false, err
	}
	if fromQuery > 0 {
		return nil, false, nil
	}
	rows, err := db.db.QueryContext(ctx, `SELECT p.period FROM source_periods p JOIN sync_runs r ON r.id = p.sync_run_id
			WHERE r.role = 'ledger' AND p.rows_stored > 0
		UNION
		SELECT g.period FROM source_files f CROSS JOIN gl_lines g ON g.source_file_id = f.id
			WHERE NOT EXISTS (SELECT 1 FROM source_periods p WHERE p.source_file_id = f.id)`)
	if err != nil {
		return nil, false, err
	}
	defer rows.Close()
	for rows.Next() {
		var p string
		if err := rows.Scan(&p); err != nil {
			return nil, false, err
		}
		periods = append(periods, p)
	}
	return periods, true, rows.Err()
}

// EachObjectCosts reads the ledger's net amount per period, account and cost
// centre in the periods from to to, and hands fn the totals of one cost
// object at a time, ordered by account and cost centre: an account and a
// cost centre, or with accountGrain an account in all its cost centres. A
// total beyond int64 is marked Overflow (sumParts). fn must not keep the
// slice: it is reused for the next object. Only one object's totals are in
// memory at a time, however large the ledger.
//
// SQLite hands out the first total only once it has sorted every line of
// the window, during which nothing else of an analysis can run. So when
// the store knows the objects of an earlier analysis, the read is cut in
// two at an account (readSplit): the accounts before it, an eighth of the
// objects, are sorted and handed out first, while the rest are sorted on
// another connection. The totals come in the same order either way. The
// two parts are two statements, each with its own view of the store; only
// a sync writes the ledger, and it holds the store's lock, as an analysis
// does, so both see the same lines.
func (db *DB) EachObjectCosts(ctx context.Context, accountGrain bool, from, to string, fn func([]costdrift.CostTotal) error) error {
	const query = `SELECT period, account, cost_center, ` + sumParts + `
		FROM gl_lines WHERE period BETWEEN ? AND ? AND account >= ? AND (? OR account < ?)
		GROUP BY account, cost_center, period ORDER BY account, cost_center, period`
	split, err := db.readSplit(ctx)
	if err != nil {
		return err
	}
	r := &costReader{accountGrain: accountGrain, fn: fn}
	if split == "" {
		if err := r.read(db.db.QueryContext(ctx, query, from, to, "", true, "")); err != nil {
			return err
		}
		return r.flush()
	}
	type started struct {
		rows *sql.Rows
		err  error
	}
	rest := make(chan started, 1)
	go func() {
		// QueryContext returns once the first row is found, after the sort.
		rows, err := db.db.QueryContext(ctx, query, from, to, split, true, "")
		rest <- started{rows, err}
	}()
	err = r.read(db.db.QueryContext(ctx, query, from, to, "", false, split))
	second := <-rest
	if err != nil {
		if second.rows != nil {
			second.rows.Close()
		}
		return err
	}
	if err := r.read(second.rows, second.err); err != nil {
		return err
	}
	return r.flush()
}

// costReader gathers the rows of EachObjectCosts into objects.
type costReader struct {
	accountGrain bool
	fn           func([]costdrift.CostTotal) error
	one          []costdrift.CostTotal
	// The texts of the rows are read in place (sql.RawBytes) and made
	// strings only when they change: the account and cost centre once an
	// object (of the row before, when the same), the period once a read
	// (periods). A window of 10,000 objects is 370,000 rows.
	account, centre string
	periods         map[string]string
}

// read hands fn each object whose rows end in rows, keeping the last
// one's for the next rows or flush.
func (r *costReader) read(rows *sql.Rows, err error) error {
	if err != nil {
		return err
	}
	defer rows.Close()
	if r.periods == nil {
		r.periods = map[string]string{}
	}
	var period, account, centre sql.RawBytes
	var billions, rest int64
	for rows.Next() {
		if err := rows.Scan(&period, &account, &centre, &billions, &rest); err != nil {
			return err
		}
		newAccount, newCentre := string(account) != r.account, string(centre) != r.centre
		if newAccount {
			r.account = string(account)
		}
		if newCentre {
			r.centre = string(centre)
		}
		if len(r.one) > 0 && (newAccount || (!r.accountGrain && newCentre)) {
			if err := r.fn(r.one); err != nil {
				return err
			}
			r.one = r.one[:0]
		}
		p, ok := r.periods[string(period)]
		if !ok {
			p = string(period)
			r.periods[p] = p
		}
		r.one = append(r.one, costTotal(p, r.account, r.centre, billions, rest))
	}
	return rows.Err()
}

// flush hands fn the last object.
func (r *costReader) flush() error {
	if len(r.one) == 0 {
		return nil
	}
	return r.fn(r.one)
}

// readSplit is the account EachObjectCosts cuts its read at: the one an
// eighth of the way through the accounts of the objects the store holds a
// behaviour for; "" when it holds none.
func (db *DB) readSplit(ctx context.Context) (string, error) {
	var split sql.NullString
	err := db.db.QueryRowContext(ctx, `SELECT account FROM behaviour_history WHERE valid_to_run_at IS NULL
		ORDER BY account LIMIT 1 OFFSET (SELECT COUNT(*) / 8 FROM behaviour_history WHERE valid_to_run_at IS NULL)`).Scan(&split)
	if errors.Is(err, sql.ErrNoRows) {
		return "", nil
	}
	return split.String, err
}

// ObjectCostTotals returns one cost object's net amount per period and cost
// centre in the periods from to to, as EachObjectCosts hands them out: of
// the account in the cost centre, or with accountGrain of the account in
// every cost centre.
func (db *DB) ObjectCostTotals(ctx context.Context, o costdrift.CostObject, accountGrain bool, from, to string) ([]costdrift.CostTotal, error) {
	rows, err := db.db.QueryContext(ctx, `SELECT period, account, cost_center, `+sumParts+`
		FROM gl_lines WHERE account = ? AND (? OR cost_center = ?) AND period BETWEEN ? AND ?
		GROUP BY account, cost_center, period ORDER BY account, cost_center, period`, o.Account, accountGrain, o.CostCenter, from, to)
	if err != nil {
		return nil, err
	}
	defer rows.Close()
	var out []costdrift.CostTotal
	for rows.Next() {
		c, err := scanCostTotal(rows)
		if err != nil {
			return nil, err
		}
		out = append(out, c)
	}
	return out, rows.Err()
}

// CurrentBehaviourOf returns the open behaviour of each object named, by
// object; an object without one is left out.
func (db *DB) CurrentBehaviourOf(ctx context.Context, objects []string) (map[string]costdrift.Behaviour, error) {
	out := make(map[string]costdrift.Behaviour, len(objects))
	err := inChunks(objects, func(in string, args []any) error {
		bs, err := db.behaviours(ctx, `valid_to_run_at IS NULL AND object IN (`+in+`)`, args...)
		for _, b := range bs {
			out[b.Object.String()] = b
		}
		return err
	})
	return out, err
}

// inChunks calls fn with the objects a chunk at a time: in is the list of
// placeholders of an IN (...) and args the objects it binds. SQLite takes
// up to 32,766 parameters; a chunk stays well below.
func inChunks(objects []string, fn func(in string, args []any) error) error {
	const chunk = 1000
	for len(objects) > 0 {
		n := min(chunk, len(objects))
		args := make([]any, n)
		for i, o := range objects[:n] {
			args[i] = o
		}
		if err := fn(placeholders(n), args); err != nil {
			return err
		}
		objects = objects[n:]
	}
	return nil
}

// CurrentChoiceOf returns, of the open behaviour of each object named, by
// object, only what the analysis weighs its new evidence against: the
// object, class, driver and lag. It reads no other column: the evidence
// kept as JSON (outliers, diagnostics, break, prediction terms) would cost
// more to decode than the fits themselves. An object without an open
// behaviour is left out.
func (db *DB) CurrentChoiceOf(ctx context.Context, objects []string) (map[string]costdrift.Behaviour, error) {
	out := make(map[string]costdrift.Behaviour, len(objects))
	err := inChunks(objects, func(in string, args []any) error {
		rows, err := db.db.QueryContext(ctx, `SELECT account, cost_center, class, COALESCE(driver, ''), lag
			FROM behaviour_history WHERE valid_to_run_at IS NULL AND object IN (`+in+`)`, args...)
		if err != nil {
			return err
		}
		defer rows.Close()
		for rows.Next() {
			var b costdrift.Behaviour
			var class string
			var lag sql.NullInt64
			if err := rows.Scan(&b.Object.Account, &b.Object.CostCenter, &class, &b.Driver, &lag); err != nil {
				return err
			}
			b.Class, b.Lag = costdrift.Class(class), int(lag.Int64)
			out[b.Object.String()] = b
		}
		return rows.Err()
	})
	if err != nil {
		return nil, err
	}
	return out, nil
}

// EachCurrentBehaviour hands fn the open behaviours of every object, by
// object, size at a time, so that rules over every object need not hold
// them all. They are brief: without the evidence the alert rules do not
// read (high-low, outliers, diagnostics and prediction terms, left empty),
// which is most of what a behaviour costs to read.
func (db *DB) EachCurrentBehaviour(ctx context.Context, size int, fn func([]costdrift.Behaviour) error) error {
	batch := make([]costdrift.Behaviour, 0, size)
	err := eachBehaviourOf(ctx, db.db, briefColumns, `valid_to_run_at IS NULL`, func(b costdrift.Behaviour) error {
		batch = append(batch, b)
		if len(batch) < size {
			return nil
		}
		err := fn(batch)
		batch = batch[:0]
		return err
	})
	if err != nil || len(batch) == 0 {
		return err
	}
	return fn(batch)
}
