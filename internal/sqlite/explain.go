package sqlite

import (
	"context"
	"database/sql"
	"encoding/json"
	"errors"
	"fmt"
	"math"
	"sort"
	"strings"
	"time"

	"github.com/costdrift/costdrift/internal/costdrift"
)

// ErrNoAnalysis means the store holds no analysis run yet.
var ErrNoAnalysis = errors.New("no analysis stored yet")

// ErrNotAnalysed means the store has analyses, but none of them classified
// the object asked for.
var ErrNotAnalysed = errors.New("no behaviour stored for this cost object")

// ObjectAnalysis is what the store holds on one cost object: its current
// behaviour, the analysis run that last confirmed it with the settings it
// ran with, and every fit of the object's latest analysis.
type ObjectAnalysis struct {
	Behaviour costdrift.Behaviour
	Run       costdrift.AnalysisRun
	// Settings are Run.Settings read back; zero when the stored JSON
	// cannot be read, so that the object is still explained, without the
	// run's significance level and lags.
	Settings costdrift.AnalysisSettings
	Fits     []costdrift.Fit
}

// ObjectAnalysis reads one cost object, named as the report names it
// ("6200/WELD", or "6200" without a cost centre). It returns ErrNoAnalysis
// when no analysis has run, and ErrNotAnalysed when the object has no
// current behaviour.
//
// The fits are those of the object's latest analysis: the run recorded in
// object_inputs (the latest_fits view) when there is one, else the run that
// last confirmed the behaviour.
func (db *DB) ObjectAnalysis(ctx context.Context, object string) (ObjectAnalysis, error) {
	var out ObjectAnalysis
	var runs int
	if err := db.db.QueryRowContext(ctx, `SELECT COUNT(*) FROM analysis_runs`).Scan(&runs); err != nil {
		return out, err
	}
	if runs == 0 {
		return out, ErrNoAnalysis
	}
	b, runID, err := db.objectBehaviour(ctx, object)
	if err != nil {
		return out, err
	}
	out.Behaviour = b
	if out.Run, err = db.analysisRun(ctx, runID); err != nil {
		return out, err
	}
	if err := json.Unmarshal([]byte(out.Run.Settings), &out.Settings); err != nil {
		out.Settings = costdrift.AnalysisSettings{}
	}
	var fitsRun int64
	if err := db.db.QueryRowContext(ctx, `SELECT COALESCE((SELECT analysis_run_id FROM object_inputs WHERE object = ?), ?)`,
		object, runID).Scan(&fitsRun); err != nil {
		return out, err
	}
	if out.Fits, err = db.objectFits(ctx, object, fitsRun); err != nil {
		return out, fmt.Errorf("fits of %s: %w", object, err)
	}
	return out, nil
}

// objectBehaviour reads one object's open behaviour row and the run that
// last confirmed it.
func (db *DB) objectBehaviour(ctx context.Context, object string) (costdrift.Behaviour, int64, error) {
	bs, err := db.behaviours(ctx, `valid_to_run_at IS NULL AND object = ?`, object)
	if err != nil {
		return costdrift.Behaviour{}, 0, err
	}
	if len(bs) == 0 {
		return costdrift.Behaviour{}, 0, ErrNotAnalysed
	}
	var runID int64
	if err := db.db.QueryRowContext(ctx, `SELECT last_run_id FROM behaviour_history WHERE valid_to_run_at IS NULL AND object = ?`, object).Scan(&runID); err != nil {
		return costdrift.Behaviour{}, 0, err
	}
	return bs[0], runID, nil
}

// analysisRun reads one row of analysis_runs.
func (db *DB) analysisRun(ctx context.Context, id int64) (costdrift.AnalysisRun, error) {
	r := costdrift.AnalysisRun{ID: id}
	var started, finished, grain string
	var from, to sql.NullString
	err := db.db.QueryRowContext(ctx, `SELECT started_at, finished_at, window_from, window_to, grain, objects, settings
		FROM analysis_runs WHERE id = ?`, id).Scan(&started, &finished, &from, &to, &grain, &r.Objects, &r.Settings)
	if err != nil {
		return r, fmt.Errorf("analysis run %d: %w", id, err)
	}
	r.WindowFrom, r.WindowTo, r.Grain = from.String, to.String, costdrift.Grain(grain)
	// The times were written by SaveAnalysis in RFC 3339; a row edited by
	// hand into something else only loses its time, not the explanation.
	r.StartedAt, _ = time.Parse(time.RFC3339, started)
	r.FinishedAt, _ = time.Parse(time.RFC3339, finished)
	return r, nil
}

// objectFits reads every fit of one object in one run, in the order driver,
// lag, model.
func (db *DB) objectFits(ctx context.Context, object string, runID int64) ([]costdrift.Fit, error) {
	rows, err := db.db.QueryContext(ctx, `SELECT account, cost_center, driver, lag, model, n,
		intercept, intercept_se, intercept_p, slope, slope_se, slope_t, slope_p, slope_adjusted_p, r2, residual_se, press, aicc,
		range_min, range_max, significant, implausible, chosen, rank,
		COALESCE(levels, ''), COALESCE(driver2, ''), lag2, slope2, slope2_se, slope2_p, vif,
		durbin_watson, robust_intercept, robust_slope, COALESCE(outliers, '')
		FROM fits WHERE analysis_run_id = ? AND object = ? ORDER BY driver, lag, model`, runID, object)
	if err != nil {
		return nil, err
	}
	defer rows.Close()
	var out []costdrift.Fit
	for rows.Next() {
		var f costdrift.Fit
		var model, levels, outliers string
		var rank, lag2 sql.NullInt64
		var v [21]sql.NullFloat64
		if err := rows.Scan(&f.Object.Account, &f.Object.CostCenter, &f.Driver, &f.Lag, &model, &f.N,
			&v[0], &v[1], &v[2], &v[3], &v[4], &v[5], &v[6], &v[7], &v[8], &v[9], &v[10], &v[11],
			&v[12], &v[13], &f.Significant, &f.Implausible, &f.Chosen, &rank,
			&levels, &f.Driver2, &lag2, &v[14], &v[15], &v[16], &v[17], &v[18], &v[19], &v[20], &outliers); err != nil {
			return nil, err
		}
		f.Model = costdrift.Model(model)
		f.PlausibleRanked, f.Lag2 = int(rank.Int64), int(lag2.Int64)
		for i, p := range []*float64{&f.Intercept, &f.InterceptSE, &f.InterceptP, &f.Slope, &f.SlopeSE, &f.SlopeT, &f.SlopeP,
			&f.SlopeAdjustedP, &f.R2, &f.ResidualSE, &f.PRESS, &f.AICc, &f.RangeMin, &f.RangeMax,
			&f.Slope2, &f.Slope2SE, &f.Slope2P, &f.VIF, &f.DurbinWatson, &f.RobustIntercept, &f.RobustSlope} {
			*p = orNaN(v[i])
		}
		if levels != "" {
			if err := json.Unmarshal([]byte(levels), &f.Levels); err != nil {
				return nil, fmt.Errorf("%s %s lag %d levels: %w", f.Model, f.Driver, f.Lag, err)
			}
		}
		if outliers != "" {
			if err := json.Unmarshal([]byte(outliers), &f.Outliers); err != nil {
				return nil, fmt.Errorf("%s %s lag %d outliers: %w", f.Model, f.Driver, f.Lag, err)
			}
		}
		out = append(out, f)
	}
	return out, rows.Err()
}

// AnalysedObjects returns the name of every cost object with a current
// behaviour, sorted.
func (db *DB) AnalysedObjects(ctx context.Context) ([]string, error) {
	rows, err := db.db.QueryContext(ctx, `SELECT object FROM current_behaviour ORDER BY object`)
	if err != nil {
		return nil, err
	}
	defer rows.Close()
	var out []string
	for rows.Next() {
		var o string
		if err := rows.Scan(&o); err != nil {
			return nil, err
		}
		out = append(out, o)
	}
	return out, rows.Err()
}

// HasLedgerLines reports whether the ledger holds lines of the cost object:
// of the account in the cost centre, or, with allCostCenters (account
// grain), of the account in any cost centre.
func (db *DB) HasLedgerLines(ctx context.Context, o costdrift.CostObject, allCostCenters bool) (bool, error) {
	var found int
	err := db.db.QueryRowContext(ctx, `SELECT EXISTS (SELECT 1 FROM gl_lines WHERE account = ? AND (? OR cost_center = ?))`,
		o.Account, allCostCenters, o.CostCenter).Scan(&found)
	return found == 1, err
}

// CostPerPeriod returns, for the periods first to last, the net amount in
// minor units the cost object posted in each period it posted in, and the set
// of periods in which the ledger as a whole has postings (the analysis counts
// an object's silent period as zero cost only in those). With allCostCenters
// (account grain) the object is the account in every cost centre. A period
// whose lines add up to more than int64 holds is an error naming it.
func (db *DB) CostPerPeriod(ctx context.Context, o costdrift.CostObject, allCostCenters bool, first, last string) (map[string]int64, map[string]bool, error) {
	rows, err := db.db.QueryContext(ctx, `SELECT period, `+sumParts+` FROM gl_lines
		WHERE account = ? AND (? OR cost_center = ?) AND period BETWEEN ? AND ? GROUP BY period`,
		o.Account, allCostCenters, o.CostCenter, first, last)
	if err != nil {
		return nil, nil, err
	}
	defer rows.Close()
	costs := map[string]int64{}
	for rows.Next() {
		var p string
		var billions, rest int64
		if err := rows.Scan(&p, &billions, &rest); err != nil {
			return nil, nil, err
		}
		v, ok := joinParts(billions, rest)
		if !ok {
			return nil, nil, overflowError(o, p)
		}
		costs[p] = v
	}
	if err := rows.Err(); err != nil {
		return nil, nil, err
	}
	ledger, err := db.ledgerPeriodsIn(ctx, first, last)
	return costs, ledger, err
}

func overflowError(o costdrift.CostObject, period string) error {
	return fmt.Errorf("the lines of %s in %s add up to more than an int64 of minor units holds; they include amounts beyond the bound sync enforces", o, period)
}

// ledgerPeriodsIn returns the periods first to last in which the ledger has
// postings.
func (db *DB) ledgerPeriodsIn(ctx context.Context, first, last string) (map[string]bool, error) {
	rows, err := db.db.QueryContext(ctx, `SELECT DISTINCT period FROM gl_lines WHERE period BETWEEN ? AND ?`, first, last)
	if err != nil {
		return nil, err
	}
	defer rows.Close()
	ledger := map[string]bool{}
	for rows.Next() {
		var p string
		if err := rows.Scan(&p); err != nil {
			return nil, err
		}
		ledger[p] = true
	}
	return ledger, rows.Err()
}

// LedgerCosts are the costs of several objects per period, read in one
// pass over the ledger (CostsPerPeriod), for those who need many objects'
// costs: reading them one object at a time reads the whole ledger each
// time.
type LedgerCosts struct {
	first, last string
	totals      map[costdrift.CostObject]map[string]costdrift.CostTotal
	ledger      map[string]bool
}

// CostsPerPeriod reads the costs of the objects in the periods first to
// last, as CostPerPeriod reads one object's: per account and cost centre,
// or with allCostCenters per account over its cost centres.
func (db *DB) CostsPerPeriod(ctx context.Context, objects []costdrift.CostObject, allCostCenters bool, first, last string) (*LedgerCosts, error) {
	lc := &LedgerCosts{first: first, last: last, totals: map[costdrift.CostObject]map[string]costdrift.CostTotal{}}
	// A chunk of objects per pass; SQLite takes up to 32,766 parameters.
	const chunk = 2000
	for len(objects) > 0 {
		n := min(chunk, len(objects))
		args := []any{first, last}
		var query string
		if allCostCenters {
			query = `SELECT account, '', period, ` + sumParts + ` FROM gl_lines
				WHERE period BETWEEN ? AND ? AND account IN (` + placeholders(n) + `) GROUP BY account, period`
			for _, o := range objects[:n] {
				args = append(args, o.Account)
			}
		} else {
			query = `SELECT account, cost_center, period, ` + sumParts + ` FROM gl_lines
				WHERE period BETWEEN ? AND ? AND (account, cost_center) IN (VALUES ` +
				strings.TrimSuffix(strings.Repeat("(?, ?), ", n), ", ") + `) GROUP BY account, cost_center, period`
			for _, o := range objects[:n] {
				args = append(args, o.Account, o.CostCenter)
			}
		}
		rows, err := db.db.QueryContext(ctx, query, args...)
		if err != nil {
			return nil, err
		}
		for rows.Next() {
			var account, centre, period string
			var billions, rest int64
			if err := rows.Scan(&account, &centre, &period, &billions, &rest); err != nil {
				rows.Close()
				return nil, err
			}
			c := costTotal(period, account, centre, billions, rest)
			o := costdrift.CostObject{Account: c.Account, CostCenter: c.CostCenter}
			if lc.totals[o] == nil {
				lc.totals[o] = map[string]costdrift.CostTotal{}
			}
			lc.totals[o][c.Period] = c
		}
		rows.Close()
		if err := rows.Err(); err != nil {
			return nil, err
		}
		objects = objects[n:]
	}
	var err error
	lc.ledger, err = db.ledgerPeriodsIn(ctx, first, last)
	return lc, err
}

// CostPerPeriod is sqlite.DB.CostPerPeriod on the costs read: an object
// read with allCostCenters is named by its account alone.
func (lc *LedgerCosts) CostPerPeriod(_ context.Context, o costdrift.CostObject, allCostCenters bool, first, last string) (map[string]int64, map[string]bool, error) {
	if first < lc.first || last > lc.last {
		return nil, nil, fmt.Errorf("costs of %s in %s to %s: only %s to %s were read", o, first, last, lc.first, lc.last)
	}
	key := o
	if allCostCenters {
		key.CostCenter = ""
	}
	costs := map[string]int64{}
	overflow := ""
	for p, c := range lc.totals[key] {
		switch {
		case p < first || p > last:
		case c.Overflow:
			if overflow == "" || p < overflow {
				overflow = p // the first, as CostPerPeriod names it
			}
		default:
			costs[p] = c.AmountMinor
		}
	}
	if overflow != "" {
		return nil, nil, overflowError(o, overflow)
	}
	ledger := map[string]bool{}
	for p := range lc.ledger {
		if p >= first && p <= last {
			ledger[p] = true
		}
	}
	return costs, ledger, nil
}

// Driver series names for DriverValues: which activity series was read.
const (
	SeriesCompanyWide = "company-wide"          // the series without a cost centre
	SeriesTotal       = "total of cost centres" // account grain: the cost centres' series added up
)

// DriverValues returns the values of a driver per period, first to last,
// summed over sources, read the way the analysis reads them: the cost
// centre's own series when it has one in that span, else the company-wide
// series. At account grain (allCostCenters) a driver kept only per cost
// centre is added up over its cost centres, in the periods in which every
// one of them reported. The second result names the series used: the cost
// centre, SeriesCompanyWide or SeriesTotal ("" when there is none).
func (db *DB) DriverValues(ctx context.Context, driver, costCenter string, allCostCenters bool, first, last string) (map[string]float64, string, error) {
	rows, err := db.db.QueryContext(ctx, `SELECT cost_center, period, SUM(value) FROM activity
		WHERE driver = ? AND period BETWEEN ? AND ? GROUP BY cost_center, period`, driver, first, last)
	if err != nil {
		return nil, "", err
	}
	defer rows.Close()
	byCenter := map[string]map[string]float64{}
	for rows.Next() {
		var cc, p string
		var v float64
		if err := rows.Scan(&cc, &p, &v); err != nil {
			return nil, "", err
		}
		if byCenter[cc] == nil {
			byCenter[cc] = map[string]float64{}
		}
		byCenter[cc][p] = v
	}
	if err := rows.Err(); err != nil {
		return nil, "", err
	}
	if own, ok := byCenter[costCenter]; ok && costCenter != "" && !allCostCenters {
		return own, costCenter, nil
	}
	if company, ok := byCenter[""]; ok {
		return company, SeriesCompanyWide, nil
	}
	if !allCostCenters || len(byCenter) == 0 {
		return map[string]float64{}, "", nil
	}
	centers := make([]string, 0, len(byCenter))
	periods := map[string]bool{}
	for cc, values := range byCenter {
		centers = append(centers, cc)
		for p := range values {
			periods[p] = true
		}
	}
	sort.Strings(centers)
	total := map[string]float64{}
	for p := range periods {
		sum := 0.0
		for _, cc := range centers {
			v, ok := byCenter[cc][p]
			if !ok {
				sum = math.NaN() // a cost centre that did not report leaves the total unknown
				break
			}
			sum += v
		}
		if !math.IsNaN(sum) {
			total[p] = sum
		}
	}
	return total, SeriesTotal, nil
}
