package sqlite

import (
	"context"
	"database/sql"
	"encoding/json"
	"errors"
	"fmt"
	"math"
	"strings"
	"time"

	"github.com/costdrift/costdrift/internal/costdrift"
)

// CostTotals returns the net amount per period, account and cost centre of
// every ledger line. A total beyond int64 is marked Overflow rather than
// failing the whole read (sumParts).
func (db *DB) CostTotals(ctx context.Context) ([]costdrift.CostTotal, error) {
	rows, err := db.db.QueryContext(ctx, `SELECT period, account, cost_center, `+sumParts+`
		FROM gl_lines GROUP BY period, account, cost_center ORDER BY account, cost_center, period`)
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

// Activity returns every driver value, summed over sources, per period,
// driver and cost centre.
func (db *DB) Activity(ctx context.Context) ([]costdrift.ActivityValue, error) {
	rows, err := db.db.QueryContext(ctx, `SELECT period, driver, cost_center, SUM(value), MAX(unit)
		FROM activity GROUP BY period, driver, cost_center ORDER BY driver, cost_center, period`)
	if err != nil {
		return nil, err
	}
	defer rows.Close()
	var out []costdrift.ActivityValue
	for rows.Next() {
		var a costdrift.ActivityValue
		if err := rows.Scan(&a.Period, &a.Driver, &a.CostCenter, &a.Value, &a.Unit); err != nil {
			return nil, err
		}
		out = append(out, a)
	}
	return out, rows.Err()
}

// AccountNames maps account numbers to their names from the chart of accounts.
func (db *DB) AccountNames(ctx context.Context) (map[string]string, error) {
	rows, err := db.db.QueryContext(ctx, `SELECT account, MAX(name) FROM accounts GROUP BY account`)
	if err != nil {
		return nil, err
	}
	defer rows.Close()
	names := map[string]string{}
	for rows.Next() {
		var a, n string
		if err := rows.Scan(&a, &n); err != nil {
			return nil, err
		}
		names[a] = n
	}
	return names, rows.Err()
}

// SaveAnalysis stores an analysis in one transaction: the run, every fit,
// and each object's behaviour. A behaviour with the same class, driver and
// lag as the object's open history row refreshes that row; a different one
// closes it and opens a new one. It is BeginAnalysis, one Save and Commit.
func (db *DB) SaveAnalysis(ctx context.Context, run *costdrift.AnalysisRun, fits []costdrift.Fit, behaviours []costdrift.Behaviour) error {
	w, err := db.BeginAnalysis(ctx, run)
	if err != nil {
		return err
	}
	if err := w.Save(ctx, fits, behaviours, run.Inputs); err != nil {
		w.Rollback()
		return err
	}
	return w.Commit(ctx)
}

// AnalysisWriter stores one analysis batch by batch, in one transaction:
// a reader sees the whole analysis or none of it, however many batches it
// was written in.
type AnalysisWriter struct {
	db        *DB
	conn      *sql.Conn // the connection tx is on, kept past Commit for the checkpoint
	tx        *sql.Tx
	run       *costdrift.AnalysisRun
	now       string
	fits      *sql.Stmt // one fit, for a batch's last few
	fitsBatch *sql.Stmt // fitBatch fits
	fitArgs   []any
	dropFits  *sql.Stmt
	// updateInputs and insertInputs record an object's input hash.
	updateInputs, insertInputs *sql.Stmt
	open                       *sql.Stmt
	// insert and update write a behaviour row; prepared once, as most
	// objects' rows are refreshed by every analysis and preparing the
	// statement of 30-odd columns took longer than running it.
	insert *sql.Stmt
	update *sql.Stmt
}

// BeginAnalysis starts storing an analysis: the run's row is written now,
// its count of objects and finishing time at Commit.
func (db *DB) BeginAnalysis(ctx context.Context, run *costdrift.AnalysisRun) (*AnalysisWriter, error) {
	conn, err := db.db.Conn(ctx)
	if err != nil {
		return nil, err
	}
	tx, err := conn.BeginTx(ctx, nil)
	if err != nil {
		conn.Close()
		return nil, err
	}
	w := &AnalysisWriter{db: db, conn: conn, tx: tx, run: run, now: db.now()}
	if err := w.prepare(ctx); err != nil {
		w.Rollback()
		return nil, err
	}
	return w, nil
}

func (w *AnalysisWriter) prepare(ctx context.Context) error {
	run := w.run
	res, err := w.tx.ExecContext(ctx, `INSERT INTO analysis_runs (started_at, finished_at, window_from, window_to, grain, objects, settings)
		VALUES (?, ?, ?, ?, ?, ?, ?)`, run.StartedAt.UTC().Format(time.RFC3339), run.FinishedAt.UTC().Format(time.RFC3339),
		nullString(run.WindowFrom), nullString(run.WindowTo), string(run.Grain), run.Objects, run.Settings)
	if err != nil {
		return fmt.Errorf("save analysis run: %w", err)
	}
	run.ID, _ = res.LastInsertId()
	if w.fits, err = w.tx.PrepareContext(ctx, insertFit); err != nil {
		return err
	}
	if w.fitsBatch, err = w.tx.PrepareContext(ctx, insertFit+strings.Repeat(", "+fitValues, fitBatch-1)); err != nil {
		return err
	}
	// The fits of the object's previous analysis go: fits holds each
	// object's latest candidates, behaviour_history the formulas over
	// time, so that a daemon's store does not grow with every analysis.
	if w.dropFits, err = w.tx.PrepareContext(ctx, `DELETE FROM fits WHERE object = ?1 AND analysis_run_id <> ?2
		AND analysis_run_id = (SELECT analysis_run_id FROM object_inputs WHERE object = ?1)`); err != nil {
		return err
	}
	// An update, and an insert where there was nothing to update, rather
	// than one upsert: the upsert's update may fail part way (it takes no
	// OR FAIL), and would need a statement journal (schema 22).
	if w.updateInputs, err = w.tx.PrepareContext(ctx, `UPDATE OR FAIL object_inputs SET input_hash = ?2, analysis_run_id = ?3 WHERE object = ?1`); err != nil {
		return err
	}
	if w.insertInputs, err = w.tx.PrepareContext(ctx, `INSERT OR FAIL INTO object_inputs (object, input_hash, analysis_run_id) VALUES (?, ?, ?)`); err != nil {
		return err
	}
	if w.open, err = w.tx.PrepareContext(ctx, `SELECT id, class, COALESCE(driver, ''), lag, COALESCE(since, ''), COALESCE(until, ''), COALESCE(pending, '')
		FROM behaviour_history WHERE object = ? AND valid_to_run_at IS NULL`); err != nil {
		return err
	}
	if w.insert, err = w.tx.PrepareContext(ctx, insertBehaviourSQL); err != nil {
		return err
	}
	w.update, err = w.tx.PrepareContext(ctx, updateBehaviourSQL)
	return err
}

// Save stores a batch: its fits, its behaviours and the input hash of each
// object analysed (by object name), whose earlier fits it drops.
func (w *AnalysisWriter) Save(ctx context.Context, fits []costdrift.Fit, behaviours []costdrift.Behaviour, inputs map[string]string) error {
	runID := w.run.ID
	for len(fits) >= fitBatch {
		if err := w.insertFits(ctx, fits[:fitBatch]); err != nil {
			return err
		}
		fits = fits[fitBatch:]
	}
	for _, f := range fits {
		if err := w.insertFit(ctx, f); err != nil {
			return err
		}
	}
	for i := range behaviours {
		if err := w.saveBehaviour(ctx, &behaviours[i]); err != nil {
			return fmt.Errorf("save behaviour %s: %w", behaviours[i].Object, err)
		}
	}
	for object, hash := range inputs {
		if _, err := w.dropFits.ExecContext(ctx, object, runID); err != nil {
			return fmt.Errorf("drop the earlier fits of %s: %w", object, err)
		}
		if err := w.setInputs(ctx, object, hash); err != nil {
			return fmt.Errorf("save inputs of %s: %w", object, err)
		}
	}
	return nil
}

// setInputs records the hash of an object's inputs as of this analysis.
func (w *AnalysisWriter) setInputs(ctx context.Context, object, hash string) error {
	res, err := w.updateInputs.ExecContext(ctx, object, hash, w.run.ID)
	if err != nil {
		return err
	}
	if n, err := res.RowsAffected(); err != nil || n > 0 {
		return err
	}
	_, err = w.insertInputs.ExecContext(ctx, object, hash, w.run.ID)
	return err
}

// Commit writes the run's count of objects and finishing time and commits
// the analysis.
func (w *AnalysisWriter) Commit(ctx context.Context) error {
	if _, err := w.tx.ExecContext(ctx, `UPDATE analysis_runs SET objects = ?, finished_at = ? WHERE id = ?`,
		w.run.Objects, w.run.FinishedAt.UTC().Format(time.RFC3339), w.run.ID); err != nil {
		w.Rollback()
		return fmt.Errorf("save analysis run: %w", err)
	}
	w.close()
	// SQLite would copy the analysis's pages from the write-ahead log into
	// the store's file as part of the commit (its automatic checkpoint,
	// past 1,000 pages in the log); after a nightly analysis of 10,000
	// objects that is some 40 MB and a flush to disk, a fifth of a second
	// in which nothing else runs. The commit leaves it instead to a
	// checkpoint in the background, which runs while the alerts are raised
	// and mailed; Close waits for it.
	if _, err := w.tx.ExecContext(ctx, `PRAGMA wal_autocheckpoint = 0`); err != nil {
		w.Rollback()
		return fmt.Errorf("save analysis run: %w", err)
	}
	err := w.tx.Commit()
	w.db.background.Add(1)
	go func() {
		defer w.db.background.Done()
		ctx := context.WithoutCancel(ctx)
		if err == nil {
			beforeCheckpoint()
			// PASSIVE: readers and the next writer go on meanwhile; what a
			// reader still needs is copied by a later checkpoint.
			if _, err := w.conn.ExecContext(ctx, `PRAGMA wal_checkpoint(PASSIVE)`); err == nil && w.db.path != "" {
				// A failed flush leaves it to SQLite's next checkpoint,
				// as before; the store is as safe either way.
				w.db.background.flushStore(w.db.path)
			}
		}
		// The connection goes back to the pool as the others are.
		w.conn.ExecContext(ctx, fmt.Sprintf(`PRAGMA wal_autocheckpoint = %d`, autoCheckpointPages))
		w.conn.Close()
	}()
	return err
}

// autoCheckpointPages is SQLite's own default for wal_autocheckpoint, which
// every other connection keeps.
const autoCheckpointPages = 1000

// beforeCheckpoint runs before an analysis's checkpoint; tests hold it back.
var beforeCheckpoint = func() {}

// Rollback drops everything the writer stored.
func (w *AnalysisWriter) Rollback() {
	w.close()
	w.tx.Rollback()
	w.conn.Close()
}

func (w *AnalysisWriter) close() {
	for _, s := range []*sql.Stmt{w.fits, w.fitsBatch, w.dropFits, w.updateInputs, w.insertInputs, w.open, w.insert, w.update} {
		if s != nil {
			s.Close()
		}
	}
}

// ObjectInputs returns the input hash of every object's latest analysis.
func (db *DB) ObjectInputs(ctx context.Context) (map[string]string, error) {
	rows, err := db.q().QueryContext(ctx, `SELECT object, input_hash FROM object_inputs`)
	if err != nil {
		return nil, err
	}
	defer rows.Close()
	out := map[string]string{}
	for rows.Next() {
		var o, h string
		if err := rows.Scan(&o, &h); err != nil {
			return nil, err
		}
		out[o] = h
	}
	return out, rows.Err()
}

const (
	insertFit = `INSERT OR FAIL INTO fits (analysis_run_id, object, account, cost_center, driver, lag, model, n,
		intercept, intercept_se, intercept_p, slope, slope_se, slope_t, slope_p, slope_adjusted_p, r2, residual_se, press, aicc,
		range_min, range_max, significant, implausible, chosen, rank,
		levels, driver2, lag2, slope2, slope2_se, slope2_p, vif, durbin_watson, robust_intercept, robust_slope, outliers)
		VALUES ` + fitValues
	fitValues = `(?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?)`
)

// fitBatch is how many fits one INSERT carries: an analysis stores eight
// or so an object, and a row at a time binds each of its 37 values with a
// call into SQLite of its own; the query path binds a whole statement's in
// one (insertRows). 25 × 37 values stay far below SQLite's limit of 32,766.
const fitBatch = 25

func (w *AnalysisWriter) insertFit(ctx context.Context, f costdrift.Fit) error {
	if _, err := w.fits.ExecContext(ctx, fitArgs(nil, w.run.ID, f)...); err != nil {
		return fmt.Errorf("save fit %s %s lag %d %s: %w", f.Object, f.Driver, f.Lag, f.Model, err)
	}
	return nil
}

// insertFits stores fitBatch fits with one INSERT.
func (w *AnalysisWriter) insertFits(ctx context.Context, fits []costdrift.Fit) error {
	args := w.fitArgs[:0]
	for _, f := range fits {
		args = fitArgs(args, w.run.ID, f)
	}
	w.fitArgs = args
	if err := insertRows(ctx, w.fitsBatch, args); err != nil {
		return fmt.Errorf("save the fits of %s to %s: %w", fits[0].Object, fits[len(fits)-1].Object, err)
	}
	return nil
}

// fitArgs appends a fit's values as insertFit binds them.
func fitArgs(args []any, runID int64, f costdrift.Fit) []any {
	var rank any
	if f.PlausibleRanked > 0 {
		rank = f.PlausibleRanked
	}
	return append(args, runID, f.Object.String(), f.Object.Account, f.Object.CostCenter, f.Driver, f.Lag, string(f.Model), f.N,
		num(f.Intercept), num(f.InterceptSE), num(f.InterceptP), num(f.Slope), num(f.SlopeSE), num(f.SlopeT), num(f.SlopeP),
		num(f.SlopeAdjustedP), num(f.R2), num(f.ResidualSE), num(f.PRESS), num(f.AICc), num(f.RangeMin), num(f.RangeMax),
		f.Significant, f.Implausible, f.Chosen, rank,
		jsonOrNull(f.Levels), nullString(f.Driver2), lag2(f), num2(f, f.Slope2), num2(f, f.Slope2SE), num2(f, f.Slope2P), num2(f, f.VIF),
		diagNum(f, f.DurbinWatson), diagNum(f, f.RobustIntercept), diagNum(f, f.RobustSlope), jsonOrNull(f.Outliers))
}

// jsonOrNull stores an empty list as NULL and anything else as JSON.
func jsonOrNull[T any](v []T) any {
	if len(v) == 0 {
		return nil
	}
	j, err := json.Marshal(v)
	if err != nil {
		return nil
	}
	return string(j)
}

func lag2(f costdrift.Fit) any {
	if f.Driver2 == "" {
		return nil
	}
	return f.Lag2
}

// num2 stores a second-driver number only on two-driver fits.
func num2(f costdrift.Fit, v float64) any {
	if f.Driver2 == "" {
		return nil
	}
	return num(v)
}

// diagNum stores diagnostics only on the chosen fit, where they were computed.
func diagNum(f costdrift.Fit, v float64) any {
	if !f.Chosen {
		return nil
	}
	return num(v)
}

// saveBehaviour keeps an object's effective-dated history (README, Drift):
//
//   - no open row: the behaviour opens one from its first period; with a
//     break, a closed row for the periods before the break is written first,
//     with the formula fitted on them;
//   - a break after the open row began: the open row closes the period before
//     the break, and the new behaviour opens from it;
//   - the same class, driver and lag: the open row is refreshed;
//   - another class, driver or lag without a break: the change is pending
//     until the next analysis sees it again; only then does it replace the
//     open row. A change seen once and then not again is dropped, so the
//     behaviour never flaps.
func (w *AnalysisWriter) saveBehaviour(ctx context.Context, b *costdrift.Behaviour) error {
	tx, open, runID, now := w.tx, w.open, w.run.ID, w.now
	var id int64
	var class, driver, since, until, pendingText string
	var lag sql.NullInt64
	err := open.QueryRowContext(ctx, b.Object.String()).Scan(&id, &class, &driver, &lag, &since, &until, &pendingText)
	switch {
	case errors.Is(err, sql.ErrNoRows):
		id = 0
	case err != nil:
		return err
	}
	hasDriver := b.Driver != ""
	sameLag := (!hasDriver && !lag.Valid) || (hasDriver && lag.Valid && int(lag.Int64) == b.Lag)
	same := id != 0 && class == string(b.Class) && driver == b.Driver && sameLag
	newBreak := b.Break != nil && (id == 0 || since < b.Break.Period)

	switch {
	case id == 0:
		if b.Break != nil {
			if err := insertBefore(ctx, tx, runID, now, b); err != nil {
				return err
			}
		}
		return w.insertBehaviour(ctx, b, b.Since)
	case newBreak:
		if err := closeBehaviour(ctx, tx, id, now, b.Break.LastBefore); err != nil {
			return err
		}
		return w.insertBehaviour(ctx, b, b.Since)
	case same:
		b.Pending = nil
		return w.updateBehaviour(ctx, id, b)
	}

	// A change of class, driver or lag without a break.
	var pending costdrift.Pending
	if pendingText != "" {
		if err := json.Unmarshal([]byte(pendingText), &pending); err != nil {
			return fmt.Errorf("pending: %w", err)
		}
	}
	if pendingText != "" && pending.Class == b.Class && pending.Driver == b.Driver && pending.Lag == b.Lag {
		// Seen a second time in a row: it takes effect after the last
		// period the old behaviour was confirmed on.
		if err := closeBehaviour(ctx, tx, id, now, until); err != nil {
			return err
		}
		b.Pending = nil
		return w.insertBehaviour(ctx, b, b.Since)
	}
	p, _ := json.Marshal(costdrift.Pending{Class: b.Class, Driver: b.Driver, Lag: b.Lag, Seen: 1})
	_, err = tx.ExecContext(ctx, `UPDATE OR FAIL behaviour_history SET pending = ?, last_run_id = ?, until = ? WHERE id = ?`,
		string(p), runID, nullString(b.Until), id)
	return err
}

// behaviourValues are the columns a behaviour row carries, in the order of
// behaviourColumns.
const behaviourColumns = `class, driver, unit, lag, fixed_per_period, variable_rate, r2, n, range_min, range_max, since, until, steps, reason,
	mean_cost, cv, high_low, driver2, unit2, lag2, variable_rate2, outliers, diagnostics, break, pending, spending, prediction,
	cadence, cadence_phase, price_base`

func behaviourValues(b *costdrift.Behaviour) ([]any, error) {
	steps, highLow, diagnostics, brk, pending := "", "", "", "", ""
	if len(b.Steps) > 0 {
		j, _ := json.Marshal(b.Steps)
		steps = string(j)
	}
	if b.HighLow != nil {
		j, _ := json.Marshal(highLowJSON(*b.HighLow))
		highLow = string(j)
	}
	if b.Diagnostics != nil {
		j, err := json.Marshal(toDiagnosticsJSON(*b.Diagnostics))
		if err != nil {
			return nil, fmt.Errorf("diagnostics: %w", err)
		}
		diagnostics = string(j)
	}
	if b.Break != nil {
		bb := *b.Break
		if math.IsInf(bb.Statistic, 0) || math.IsNaN(bb.Statistic) {
			bb.Statistic = math.MaxFloat64 // an exact step: JSON has no infinity
		}
		j, err := json.Marshal(bb)
		if err != nil {
			return nil, fmt.Errorf("break: %w", err)
		}
		brk = string(j)
	}
	if b.Pending != nil {
		j, _ := json.Marshal(b.Pending)
		pending = string(j)
	}
	var lag2 any
	if b.Driver2 != "" {
		lag2 = b.Lag2
	}
	return []any{string(b.Class), nullString(b.Driver), nullString(b.Unit), lagValue(b), num(b.FixedPerPeriod), num(b.VariableRate),
		num(b.R2), b.N, rangeValue(b, b.RangeMin), rangeValue(b, b.RangeMax), nullString(b.Since), nullString(b.Until),
		nullString(steps), b.Reason, num(b.MeanCost), num(b.CV), nullString(highLow),
		nullString(b.Driver2), nullString(b.Unit2), lag2, rate2(b), jsonOrNull(b.Outliers), nullString(diagnostics),
		nullString(brk), nullString(pending), spendingJSON(b.Spending), predictionJSON(b.Prediction),
		cadenceEvery(b), cadencePhase(b), nullString(b.PriceBase)}, nil
}

// cadenceEvery and cadencePhase are a cadence's columns, NULL for a cost
// posted every period.
func cadenceEvery(b *costdrift.Behaviour) any {
	if b.Cadence == nil {
		return nil
	}
	return b.Cadence.Every
}

func cadencePhase(b *costdrift.Behaviour) any {
	if b.Cadence == nil {
		return nil
	}
	return b.Cadence.Phase
}

// predictionJSON stores the formula's prediction terms; terms that are not
// complete, finite numbers are left out (NULL), and a budget then says it
// has no interval.
func predictionJSON(t *costdrift.PredictionTerms) any {
	if t == nil || t.Check() != nil {
		return nil
	}
	j, err := json.Marshal(t)
	if err != nil {
		return nil
	}
	return string(j)
}

// placeholders is "?, ?, …" for n values.
func placeholders(n int) string {
	return strings.TrimSuffix(strings.Repeat("?, ", n), ", ")
}

// spendingJSON stores the spending checks, leaving out any that are not
// finite numbers (JSON has no NaN).
func spendingJSON(checks []costdrift.SpendingCheck) any {
	var keep []costdrift.SpendingCheck
	for _, c := range checks {
		if !math.IsNaN(c.Low+c.High+c.Actual+c.Expected+c.Activity) && !math.IsInf(c.Low+c.High+c.Actual+c.Expected+c.Activity, 0) {
			keep = append(keep, c)
		}
	}
	return jsonOrNull(keep)
}

// behaviourValueCount is the number of behaviourColumns.
var behaviourValueCount = len(strings.Split(behaviourColumns, ","))

var (
	insertBehaviourSQL = `INSERT INTO behaviour_history (` + behaviourColumns + `,
		object, account, cost_center, first_run_id, last_run_id, valid_from_run_at, valid_from_period)
		VALUES (` + placeholders(behaviourValueCount+7) + `)`
	updateBehaviourSQL = `UPDATE OR FAIL behaviour_history SET (` + behaviourColumns + `, last_run_id)
		= (` + placeholders(behaviourValueCount+1) + `) WHERE id = ?`
)

func (w *AnalysisWriter) insertBehaviour(ctx context.Context, b *costdrift.Behaviour, from string) error {
	values, err := behaviourValues(b)
	if err != nil {
		return err
	}
	_, err = w.insert.ExecContext(ctx,
		append(values, b.Object.String(), b.Object.Account, b.Object.CostCenter, w.run.ID, w.run.ID, w.now, nullString(from))...)
	return err
}

func (w *AnalysisWriter) updateBehaviour(ctx context.Context, id int64, b *costdrift.Behaviour) error {
	values, err := behaviourValues(b)
	if err != nil {
		return err
	}
	_, err = w.update.ExecContext(ctx, append(values, w.run.ID, id)...)
	return err
}

func closeBehaviour(ctx context.Context, tx *sql.Tx, id int64, now, lastPeriod string) error {
	_, err := tx.ExecContext(ctx, `UPDATE behaviour_history SET valid_to_run_at = ?, valid_to_period = ? WHERE id = ?`, now, nullString(lastPeriod), id)
	return err
}

// insertBefore records the behaviour before a break the first analysis of
// an object found: the same class and driver, with the formula fitted on
// the periods before the break, closed at the last of them.
func insertBefore(ctx context.Context, tx *sql.Tx, runID int64, now string, b *costdrift.Behaviour) error {
	before := *b
	br := b.Break
	before.Break, before.Pending, before.Steps, before.HighLow, before.Diagnostics, before.Outliers, before.Spending = nil, nil, nil, nil, nil, nil, nil
	before.Prediction = br.PredictionBefore
	before.Driver2, before.Unit2 = "", ""
	before.FixedPerPeriod, before.VariableRate = br.FixedBefore, br.RateBefore
	if br.Driver == "" {
		before.Class, before.Driver, before.Unit = b.Class, "", ""
		if b.Class != costdrift.Fixed && b.Class != costdrift.Unexplained {
			before.Class = costdrift.Fixed
		}
		before.VariableRate = 0
	}
	before.Since, before.Until = br.WindowFrom, br.LastBefore
	before.N = 0
	before.Reason = fmt.Sprintf("before the break at %s: fitted on %s to %s with the same driver", br.Period, br.WindowFrom, br.LastBefore)
	values, err := behaviourValues(&before)
	if err != nil {
		return err
	}
	_, err = tx.ExecContext(ctx, `INSERT INTO behaviour_history (`+behaviourColumns+`,
		object, account, cost_center, first_run_id, last_run_id, valid_from_run_at, valid_to_run_at, valid_from_period, valid_to_period)
		VALUES (`+placeholders(len(values)+9)+`)`,
		append(values, b.Object.String(), b.Object.Account, b.Object.CostCenter, runID, runID, now, now, nullString(br.WindowFrom), nullString(br.LastBefore))...)
	return err
}

// CurrentBehaviour returns the open behaviour of every object, by object.
func (db *DB) CurrentBehaviour(ctx context.Context) ([]costdrift.Behaviour, error) {
	return db.behaviours(ctx, `valid_to_run_at IS NULL`)
}

// BehaviourIn returns, for every object, the behaviour in force in period:
// the row whose periods hold it, the newest such row when an object's rows
// overlap (a change confirmed without a break reaches back over its
// window), and the open row for a period after its last one.
func (db *DB) BehaviourIn(ctx context.Context, period string) ([]costdrift.Behaviour, error) {
	return db.behaviours(ctx, `id IN (
		SELECT (SELECT h.id FROM behaviour_history h
		        WHERE h.object = o.object AND COALESCE(h.valid_from_period, h.since, '') <= ?
		          AND (h.valid_to_run_at IS NULL OR h.valid_to_period >= ?)
		        ORDER BY h.valid_from_run_at DESC, h.id DESC LIMIT 1)
		FROM (SELECT DISTINCT object FROM behaviour_history) o)`, period, period)
}

// behaviours reads the behaviour rows that match where, by object.
func (db *DB) behaviours(ctx context.Context, where string, args ...any) ([]costdrift.Behaviour, error) {
	var out []costdrift.Behaviour
	err := db.eachBehaviour(ctx, where, func(b costdrift.Behaviour) error {
		out = append(out, b)
		return nil
	}, args...)
	return out, err
}

// eachBehaviour hands fn the behaviour rows that match where, by object,
// one at a time.
func (db *DB) eachBehaviour(ctx context.Context, where string, fn func(costdrift.Behaviour) error, args ...any) error {
	return eachBehaviourOf(ctx, db.db, readColumns, where, fn, args...)
}

// readColumns are the columns eachBehaviourOf reads into a behaviour;
// briefColumns the same but for the evidence the alert rules do not read
// (high-low, outliers, diagnostics, prediction terms), which is most of a
// row's JSON.
const (
	readColumns = `account, cost_center, class, COALESCE(driver, ''), COALESCE(unit, ''), lag,
		fixed_per_period, variable_rate, r2, n, range_min, range_max, COALESCE(since, ''), COALESCE(until, ''),
		COALESCE(steps, ''), reason, mean_cost, cv, COALESCE(high_low, ''),
		COALESCE(driver2, ''), COALESCE(unit2, ''), lag2, variable_rate2, COALESCE(outliers, ''), COALESCE(diagnostics, ''),
		COALESCE(break, ''), COALESCE(pending, ''), COALESCE(spending, ''), COALESCE(prediction, ''), cadence, cadence_phase, COALESCE(price_base, '')`
	briefColumns = `account, cost_center, class, COALESCE(driver, ''), COALESCE(unit, ''), lag,
		fixed_per_period, variable_rate, r2, n, range_min, range_max, COALESCE(since, ''), COALESCE(until, ''),
		COALESCE(steps, ''), reason, mean_cost, cv, '',
		COALESCE(driver2, ''), COALESCE(unit2, ''), lag2, variable_rate2, '', '',
		COALESCE(break, ''), COALESCE(pending, ''), COALESCE(spending, ''), '', cadence, cadence_phase, COALESCE(price_base, '')`
)

// eachBehaviourOf is eachBehaviour reading columns (readColumns or
// briefColumns) through q.
func eachBehaviourOf(ctx context.Context, q conn, columns, where string, fn func(costdrift.Behaviour) error, args ...any) error {
	rows, err := q.QueryContext(ctx, `SELECT `+columns+`
		FROM behaviour_history WHERE `+where+` ORDER BY account, cost_center`, args...)
	if err != nil {
		return err
	}
	defer rows.Close()
	for rows.Next() {
		var b costdrift.Behaviour
		var class, steps, highLow string
		var lag sql.NullInt64
		var fixed, rate, r2, lo, hi, mean, cv sql.NullFloat64
		var outliers, diagnostics, brk, pending, spending, prediction string
		var lag2 sql.NullInt64
		var rate2 sql.NullFloat64
		var cadence, phase sql.NullInt64
		if err := rows.Scan(&b.Object.Account, &b.Object.CostCenter, &class, &b.Driver, &b.Unit, &lag, &fixed, &rate, &r2, &b.N,
			&lo, &hi, &b.Since, &b.Until, &steps, &b.Reason, &mean, &cv, &highLow,
			&b.Driver2, &b.Unit2, &lag2, &rate2, &outliers, &diagnostics, &brk, &pending, &spending, &prediction, &cadence, &phase, &b.PriceBase); err != nil {
			return err
		}
		if cadence.Valid {
			b.Cadence = &costdrift.Cadence{Every: int(cadence.Int64), Phase: int(phase.Int64)}
		}
		if prediction != "" {
			b.Prediction = &costdrift.PredictionTerms{}
			if err := json.Unmarshal([]byte(prediction), b.Prediction); err != nil {
				return fmt.Errorf("behaviour %s: prediction: %w", b.Object, err)
			}
		}
		if spending != "" {
			if err := json.Unmarshal([]byte(spending), &b.Spending); err != nil {
				return fmt.Errorf("behaviour %s: spending: %w", b.Object, err)
			}
		}
		if brk != "" {
			b.Break = &costdrift.Break{}
			if err := json.Unmarshal([]byte(brk), b.Break); err != nil {
				return fmt.Errorf("behaviour %s: break: %w", b.Object, err)
			}
		}
		if pending != "" {
			b.Pending = &costdrift.Pending{}
			if err := json.Unmarshal([]byte(pending), b.Pending); err != nil {
				return fmt.Errorf("behaviour %s: pending: %w", b.Object, err)
			}
		}
		b.Lag2, b.VariableRate2 = int(lag2.Int64), rate2.Float64
		if outliers != "" {
			if err := json.Unmarshal([]byte(outliers), &b.Outliers); err != nil {
				return fmt.Errorf("behaviour %s: outliers: %w", b.Object, err)
			}
		}
		if diagnostics != "" {
			var d diagnosticsJSON
			if err := json.Unmarshal([]byte(diagnostics), &d); err != nil {
				return fmt.Errorf("behaviour %s: diagnostics: %w", b.Object, err)
			}
			b.Diagnostics = d.domain()
		}
		b.Class = costdrift.Class(class)
		b.Lag = int(lag.Int64)
		b.FixedPerPeriod, b.VariableRate, b.R2 = orNaN(fixed), orNaN(rate), orNaN(r2)
		b.RangeMin, b.RangeMax, b.MeanCost, b.CV = orNaN(lo), orNaN(hi), orNaN(mean), orNaN(cv)
		if steps != "" {
			if err := json.Unmarshal([]byte(steps), &b.Steps); err != nil {
				return fmt.Errorf("behaviour %s: steps: %w", b.Object, err)
			}
		}
		if highLow != "" {
			var h highLowJSON
			if err := json.Unmarshal([]byte(highLow), &h); err != nil {
				return fmt.Errorf("behaviour %s: high_low: %w", b.Object, err)
			}
			hl := costdrift.HighLow(h)
			b.HighLow = &hl
		}
		if err := fn(b); err != nil {
			return err
		}
	}
	return rows.Err()
}

// diagnosticsJSON is the stored form of costdrift.Diagnostics: unknown
// numbers (NaN) are null, since JSON has no NaN.
type diagnosticsJSON struct {
	Models          []modelJSON `json:"models"`
	DurbinWatson    *float64    `json:"durbin_watson"`
	RobustIntercept *float64    `json:"robust_intercept"`
	RobustSlope     *float64    `json:"robust_slope"`
	RobustNote      string      `json:"robust_note,omitempty"`
	Candidates      int         `json:"candidates"`
}

type modelJSON struct {
	Model  string   `json:"model"`
	Driver string   `json:"driver,omitempty"`
	Lag    int      `json:"lag"`
	N      int      `json:"n"`
	AICc   *float64 `json:"aicc"`
	PRESS  *float64 `json:"press"`
	R2     *float64 `json:"r2"`
}

func finite(v float64) *float64 {
	if v != v || v > 1e308 || v < -1e308 {
		return nil
	}
	return &v
}

func value(p *float64) float64 {
	if p == nil {
		return math.NaN()
	}
	return *p
}

func toDiagnosticsJSON(d costdrift.Diagnostics) diagnosticsJSON {
	out := diagnosticsJSON{DurbinWatson: finite(d.DurbinWatson), RobustIntercept: finite(d.RobustIntercept),
		RobustSlope: finite(d.RobustSlope), RobustNote: d.RobustNote, Candidates: d.Candidates}
	for _, m := range d.Models {
		out.Models = append(out.Models, modelJSON{Model: string(m.Model), Driver: m.Driver, Lag: m.Lag, N: m.N,
			AICc: finite(m.AICc), PRESS: finite(m.PRESS), R2: finite(m.R2)})
	}
	return out
}

func (d diagnosticsJSON) domain() *costdrift.Diagnostics {
	out := &costdrift.Diagnostics{DurbinWatson: value(d.DurbinWatson), RobustIntercept: value(d.RobustIntercept),
		RobustSlope: value(d.RobustSlope), RobustNote: d.RobustNote, Candidates: d.Candidates}
	for _, m := range d.Models {
		out.Models = append(out.Models, costdrift.ModelSummary{Model: costdrift.Model(m.Model), Driver: m.Driver, Lag: m.Lag, N: m.N,
			AICc: value(m.AICc), PRESS: value(m.PRESS), R2: value(m.R2)})
	}
	return out
}

func rate2(b *costdrift.Behaviour) any {
	if b.Driver2 == "" {
		return nil
	}
	return num(b.VariableRate2)
}

// highLowJSON fixes the JSON names of the high-low column.
type highLowJSON struct {
	HighPeriod   string  `json:"high_period"`
	LowPeriod    string  `json:"low_period"`
	HighActivity float64 `json:"high_activity"`
	LowActivity  float64 `json:"low_activity"`
	HighCost     float64 `json:"high_cost"`
	LowCost      float64 `json:"low_cost"`
	Fixed        float64 `json:"fixed"`
	Rate         float64 `json:"rate"`
	Warning      string  `json:"warning,omitempty"`
}

func lagValue(b *costdrift.Behaviour) any {
	if b.Driver == "" {
		return nil
	}
	return b.Lag
}

func rangeValue(b *costdrift.Behaviour, v float64) any {
	if b.Driver == "" {
		return nil
	}
	return num(v)
}

// num stores NaN and infinities as NULL: SQLite has no such values.
func num(v float64) any {
	if v != v || v > 1e308 || v < -1e308 {
		return nil
	}
	return v
}

// orNaN reads a NULL number back as NaN, unknown, as num stored it: reading
// it as 0 would turn an unknown R² or an infinite CV into a measured value.
func orNaN(v sql.NullFloat64) float64 {
	if !v.Valid {
		return math.NaN()
	}
	return v.Float64
}

func nullString(s string) any {
	if s == "" {
		return nil
	}
	return s
}

// PreviousBehaviour returns, for each object whose behaviour has changed at
// least once, the behaviour its current one replaced: class, driver, lag
// and formula.
func (db *DB) PreviousBehaviour(ctx context.Context) (map[string]costdrift.Behaviour, error) {
	rows, err := db.q().QueryContext(ctx, previousBehaviourQuery)
	if err != nil {
		return nil, err
	}
	out := map[string]costdrift.Behaviour{}
	if err := scanPrevious(rows, out); err != nil {
		return nil, err
	}
	return out, nil
}

const previousBehaviourQuery = `SELECT account, cost_center, class, COALESCE(driver, ''), COALESCE(lag, 0),
		fixed_per_period, variable_rate, COALESCE(valid_from_period, since, '')
		FROM behaviour_history h
		WHERE valid_to_run_at IS NOT NULL
		  AND id = (SELECT MAX(id) FROM behaviour_history p WHERE p.object = h.object AND p.valid_to_run_at IS NOT NULL)`

// scanPrevious reads the rows of previousBehaviourQuery into out, by object.
func scanPrevious(rows *sql.Rows, out map[string]costdrift.Behaviour) error {
	defer rows.Close()
	for rows.Next() {
		var b costdrift.Behaviour
		var class string
		var fixed, rate sql.NullFloat64
		if err := rows.Scan(&b.Object.Account, &b.Object.CostCenter, &class, &b.Driver, &b.Lag, &fixed, &rate, &b.Since); err != nil {
			return err
		}
		b.Class = costdrift.Class(class)
		b.FixedPerPeriod, b.VariableRate = orNaN(fixed), orNaN(rate)
		out[b.Object.String()] = b
	}
	return rows.Err()
}

// Stored returns, as this analysis leaves them, the brief open behaviours
// of the objects named (as EachCurrentBehaviour reads them, by object) and
// their latest closed ones (as PreviousBehaviour does): what the alert rules
// weigh, read a batch at a time while the analysis is still being written,
// not all at once after it.
func (w *AnalysisWriter) Stored(ctx context.Context, objects []string) ([]costdrift.Behaviour, map[string]costdrift.Behaviour, error) {
	var current []costdrift.Behaviour
	previous := map[string]costdrift.Behaviour{}
	err := inChunks(objects, func(in string, args []any) error {
		err := eachBehaviourOf(ctx, w.tx, briefColumns, `valid_to_run_at IS NULL AND object IN (`+in+`)`,
			func(b costdrift.Behaviour) error {
				current = append(current, b)
				return nil
			}, args...)
		if err != nil {
			return err
		}
		rows, err := w.tx.QueryContext(ctx, previousBehaviourQuery+` AND h.object IN (`+in+`)`, args...)
		if err != nil {
			return err
		}
		return scanPrevious(rows, previous)
	})
	if err != nil {
		return nil, nil, err
	}
	return current, previous, nil
}

// OpenBehaviours counts the objects with an open behaviour.
func (db *DB) OpenBehaviours(ctx context.Context) (int, error) {
	var n int
	err := db.q().QueryRowContext(ctx, `SELECT COUNT(*) FROM behaviour_history WHERE valid_to_run_at IS NULL`).Scan(&n)
	return n, err
}

// NewestPeriods returns, per source, the newest period of its ledger lines
// and activity. It reads the rows stored per file and period that every
// load records (source_periods), not the lines: a maximum over the ledger
// read every line after each sync. A file loaded before the store kept
// those counts (schema 14) and not read since has none; its lines are read
// through the per-file index.
func (db *DB) NewestPeriods(ctx context.Context) (map[string]string, error) {
	out := map[string]string{}
	keep := func(s, p string) {
		if p > out[s] {
			out[s] = p
		}
	}
	rows, err := db.q().QueryContext(ctx, `SELECT source, MAX(period) FROM source_periods WHERE rows_stored > 0 GROUP BY source`)
	if err != nil {
		return nil, err
	}
	defer rows.Close()
	for rows.Next() {
		var s, p string
		if err := rows.Scan(&s, &p); err != nil {
			return nil, err
		}
		keep(s, p)
	}
	if err := rows.Err(); err != nil {
		return nil, err
	}
	rows.Close()
	uncounted, err := db.q().QueryContext(ctx, `SELECT f.source,
		COALESCE((SELECT MAX(period) FROM gl_lines WHERE source_file_id = f.id), ''),
		COALESCE((SELECT MAX(period) FROM activity WHERE source_file_id = f.id), '')
		FROM source_files f WHERE NOT EXISTS (SELECT 1 FROM source_periods p WHERE p.source_file_id = f.id)`)
	if err != nil {
		return nil, err
	}
	defer uncounted.Close()
	for uncounted.Next() {
		var s, gl, act string
		if err := uncounted.Scan(&s, &gl, &act); err != nil {
			return nil, err
		}
		if gl != "" {
			keep(s, gl)
		}
		if act != "" {
			keep(s, act)
		}
	}
	return out, uncounted.Err()
}
