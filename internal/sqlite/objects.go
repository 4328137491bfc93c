package sqlite

import (
	"context"
	"fmt"
	"strings"

	"github.com/costdrift/costdrift/internal/costdrift"
)

// ObjectQuery selects a page of the current behaviours for a list that may
// hold a hundred thousand objects: the store filters, sorts and counts, and
// only the page's rows are read.
type ObjectQuery struct {
	CostCenter   string          // exact; "" for every cost centre
	Account      string          // exact; "" for every account
	Class        costdrift.Class // "" for every class
	ChangedSince string          // behaviours found in this period or later; "" for any
	Search       string          // part of the object, or of its account's name, any case
	Sort         string          // one of ObjectSorts; "" sorts by object
	Descending   bool
	Limit        int // rows of the page, at least 1
	Offset       int
}

// ObjectSorts are the orders an ObjectQuery takes, by name, each ending in
// the object so that pages never overlap.
var ObjectSorts = map[string]string{
	"object": "account %[1]s, cost_center %[1]s",
	"class":  "class %[1]s, account, cost_center",
	"r2":     "r2 IS NULL, r2 %[1]s, account, cost_center",
	"mean":   "mean_cost IS NULL, mean_cost %[1]s, account, cost_center",
	"since":  "since %[1]s, account, cost_center",
}

// ObjectPage returns the page of current behaviours q selects, in its
// order, and how many match q in all.
func (db *DB) ObjectPage(ctx context.Context, q ObjectQuery) ([]costdrift.Behaviour, int, error) {
	where, args := objectWhere(q)
	var total int
	if err := db.db.QueryRowContext(ctx, `SELECT COUNT(*) FROM behaviour_history WHERE `+where, args...).Scan(&total); err != nil {
		return nil, 0, fmt.Errorf("object page: %w", err)
	}
	sort := q.Sort
	if sort == "" {
		sort = "object"
	}
	order, ok := ObjectSorts[sort]
	if !ok {
		return nil, 0, fmt.Errorf("object page: no sort %q", q.Sort)
	}
	dir := "ASC"
	if q.Descending {
		dir = "DESC"
	}
	limit := max(q.Limit, 1)
	rows, err := db.db.QueryContext(ctx, `SELECT object FROM behaviour_history WHERE `+where+
		` ORDER BY `+fmt.Sprintf(order, dir)+` LIMIT ? OFFSET ?`, append(args, limit, max(q.Offset, 0))...)
	if err != nil {
		return nil, 0, fmt.Errorf("object page: %w", err)
	}
	var objects []string
	for rows.Next() {
		var o string
		if err := rows.Scan(&o); err != nil {
			rows.Close()
			return nil, 0, fmt.Errorf("object page: %w", err)
		}
		objects = append(objects, o)
	}
	rows.Close()
	if err := rows.Err(); err != nil {
		return nil, 0, fmt.Errorf("object page: %w", err)
	}
	byObject, err := db.CurrentBehaviourOf(ctx, objects)
	if err != nil {
		return nil, 0, fmt.Errorf("object page: %w", err)
	}
	out := make([]costdrift.Behaviour, 0, len(objects))
	for _, o := range objects {
		if b, ok := byObject[o]; ok {
			out = append(out, b)
		}
	}
	return out, total, nil
}

// objectWhere is the condition of q over the current behaviour rows.
func objectWhere(q ObjectQuery) (string, []any) {
	conds := []string{"valid_to_run_at IS NULL"}
	var args []any
	if q.CostCenter != "" {
		conds, args = append(conds, "cost_center = ?"), append(args, q.CostCenter)
	}
	if q.Account != "" {
		conds, args = append(conds, "account = ?"), append(args, q.Account)
	}
	if q.Class != "" {
		conds, args = append(conds, "class = ?"), append(args, string(q.Class))
	}
	if q.ChangedSince != "" {
		conds, args = append(conds, "since >= ?"), append(args, q.ChangedSince)
	}
	if s := strings.TrimSpace(q.Search); s != "" {
		like := "%" + likeEscaper.Replace(s) + "%"
		conds = append(conds, `(object LIKE ? ESCAPE '\' OR account IN (SELECT account FROM accounts WHERE name LIKE ? ESCAPE '\'))`)
		args = append(args, like, like)
	}
	return strings.Join(conds, " AND "), args
}

// likeEscaper makes a search's own % and _ match themselves.
var likeEscaper = strings.NewReplacer(`\`, `\\`, `%`, `\%`, `_`, `\_`)

// ClassCount is how many objects of a cost centre have a class now.
type ClassCount struct {
	CostCenter string
	Class      costdrift.Class
	Objects    int
}

// ClassCounts counts the current behaviours by cost centre and class.
func (db *DB) ClassCounts(ctx context.Context) ([]ClassCount, error) {
	rows, err := db.db.QueryContext(ctx, `SELECT cost_center, class, COUNT(*) FROM behaviour_history
		WHERE valid_to_run_at IS NULL GROUP BY cost_center, class ORDER BY cost_center, class`)
	if err != nil {
		return nil, fmt.Errorf("class counts: %w", err)
	}
	defer rows.Close()
	var out []ClassCount
	for rows.Next() {
		var c ClassCount
		if err := rows.Scan(&c.CostCenter, &c.Class, &c.Objects); err != nil {
			return nil, fmt.Errorf("class counts: %w", err)
		}
		out = append(out, c)
	}
	return out, rows.Err()
}

// LatestAnalysis reads the newest analysis run; nil before the first.
func (db *DB) LatestAnalysis(ctx context.Context) (*costdrift.AnalysisRun, error) {
	var id int64
	err := db.db.QueryRowContext(ctx, `SELECT COALESCE(MAX(id), 0) FROM analysis_runs`).Scan(&id)
	if err != nil || id == 0 {
		return nil, err
	}
	r, err := db.analysisRun(ctx, id)
	if err != nil {
		return nil, err
	}
	return &r, nil
}
