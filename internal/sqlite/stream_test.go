package sqlite

import (
	"cmp"
	"context"
	"fmt"
	"reflect"
	"slices"
	"strings"
	"testing"

	"github.com/costdrift/costdrift/internal/costdrift"
)

// EachObjectCosts hands out the totals CostTotals returns, one object at a
// time in account and cost-centre order, limited to the periods asked for:
// per account and cost centre, or per account over all its cost centres.
func TestEachObjectCosts(t *testing.T) {
	db, _ := mustOpen(t)
	loadFile(t, db, "/gl.csv", []costdrift.LedgerLine{
		ledgerLine("gl", "E1", 1, "2025-01-31", "6200", "WELD", 100, ""),
		ledgerLine("gl", "E1", 2, "2025-01-31", "6200", "PAINT", 200, ""),
		ledgerLine("gl", "E2", 1, "2025-02-28", "6200", "WELD", 300, ""),
		ledgerLine("gl", "E2", 2, "2025-02-28", "6100", "", 400, ""),
		ledgerLine("gl", "E3", 1, "2025-03-31", "6100", "", 500, ""),
		ledgerLine("gl", "E4", 1, "2024-12-31", "6300", "", 600, ""), // before the periods asked for
	})
	ctx := context.Background()
	read := func(accountGrain bool) [][]costdrift.CostTotal {
		var out [][]costdrift.CostTotal
		err := db.EachObjectCosts(ctx, accountGrain, "2025-01", "2025-03", func(one []costdrift.CostTotal) error {
			out = append(out, append([]costdrift.CostTotal(nil), one...))
			return nil
		})
		if err != nil {
			t.Fatal(err)
		}
		return out
	}
	total := func(p, a, cc string, v int64) costdrift.CostTotal {
		return costdrift.CostTotal{Period: p, Account: a, CostCenter: cc, AmountMinor: v}
	}
	byCentre := [][]costdrift.CostTotal{
		{total("2025-02", "6100", "", 400), total("2025-03", "6100", "", 500)},
		{total("2025-01", "6200", "PAINT", 200)},
		{total("2025-01", "6200", "WELD", 100), total("2025-02", "6200", "WELD", 300)},
	}
	if got := read(false); !reflect.DeepEqual(got, byCentre) {
		t.Errorf("by account and cost centre:\n got  %+v\n want %+v", got, byCentre)
	}
	byAccount := [][]costdrift.CostTotal{byCentre[0], append(append([]costdrift.CostTotal(nil), byCentre[1]...), byCentre[2]...)}
	if got := read(true); !reflect.DeepEqual(got, byAccount) {
		t.Errorf("by account:\n got  %+v\n want %+v", got, byAccount)
	}
	one, err := db.ObjectCostTotals(ctx, costdrift.CostObject{Account: "6200", CostCenter: "WELD"}, false, "2025-01", "2025-03")
	if err != nil || !reflect.DeepEqual(one, byCentre[2]) {
		t.Errorf("ObjectCostTotals 6200/WELD: %+v, %v; want %+v", one, err, byCentre[2])
	}
	periods, err := db.LedgerPeriods(ctx)
	if err != nil || len(periods) != 4 {
		t.Errorf("LedgerPeriods: %v, %v; want the 4 periods with postings", periods, err)
	}
}

// Once the store holds the behaviours of an earlier analysis, EachObjectCosts
// reads its objects in two parts, cut at an account an eighth of the way
// through them; the objects come out as from one read, at either grain.
func TestEachObjectCostsReadInTwoPartsAsInOne(t *testing.T) {
	db, _ := mustOpen(t)
	ctx := context.Background()
	var lines []costdrift.LedgerLine
	var behaviours []costdrift.Behaviour
	for a := range 16 {
		account := fmt.Sprint(6100 + 10*a)
		for _, centre := range []string{"PAINT", "WELD"} {
			for m, day := range []string{"2025-01-31", "2025-02-28", "2025-03-31"} {
				lines = append(lines, ledgerLine("gl", fmt.Sprintf("E%s%s%d", account, centre, m), 1, day, account, centre, int64(100*a+10*m+len(centre)), ""))
			}
			behaviours = append(behaviours, costdrift.Behaviour{Object: costdrift.CostObject{Account: account, CostCenter: centre},
				Class: costdrift.Fixed, Reason: "test", N: 3, Since: "2025-01", Until: "2025-03"})
		}
	}
	loadFile(t, db, "/gl.csv", lines)
	read := func(accountGrain bool) [][]costdrift.CostTotal {
		var out [][]costdrift.CostTotal
		err := db.EachObjectCosts(ctx, accountGrain, "2025-01", "2025-03", func(one []costdrift.CostTotal) error {
			out = append(out, slices.Clone(one))
			return nil
		})
		if err != nil {
			t.Fatal(err)
		}
		return out
	}
	whole := map[bool][][]costdrift.CostTotal{false: read(false), true: read(true)}
	if len(whole[false]) != 32 || len(whole[true]) != 16 {
		t.Fatalf("read as one: %d objects by centre, %d by account; want 32 and 16", len(whole[false]), len(whole[true]))
	}

	run := &costdrift.AnalysisRun{Grain: costdrift.GrainAccountCostCenter, WindowFrom: "2025-01", WindowTo: "2025-03", Settings: "{}"}
	w, err := db.BeginAnalysis(ctx, run)
	if err != nil {
		t.Fatal(err)
	}
	if err := w.Save(ctx, nil, behaviours, map[string]string{}); err != nil {
		t.Fatal(err)
	}
	if err := w.Commit(ctx); err != nil {
		t.Fatal(err)
	}
	split, err := db.readSplit(ctx)
	if err != nil || split != "6120" {
		t.Fatalf("readSplit: %q, %v; want 6120, the account of the 5th of 32 objects", split, err)
	}
	for _, accountGrain := range []bool{false, true} {
		if got := read(accountGrain); !reflect.DeepEqual(got, whole[accountGrain]) {
			t.Errorf("account grain %v: read in two parts\n got  %+v\n want %+v", accountGrain, got, whole[accountGrain])
		}
	}
}

// An analysis written in batches is one transaction: a reader sees none of
// it until Commit, all of it after; a rolled-back one leaves nothing.
func TestAnalysisWriterBatchesAreOneTransaction(t *testing.T) {
	db, _ := mustOpen(t)
	ctx := context.Background()
	behaviour := func(account string) costdrift.Behaviour {
		return costdrift.Behaviour{Object: costdrift.CostObject{Account: account}, Class: costdrift.Fixed, Reason: "test", N: 12,
			FixedPerPeriod: 10, Since: "2025-01", Until: "2025-12"}
	}
	constant := func(account string) costdrift.Fit {
		return costdrift.Fit{Object: costdrift.CostObject{Account: account}, Model: costdrift.ModelConstant, N: 12, Intercept: 10, Chosen: true}
	}
	for _, commit := range []bool{false, true} {
		run := &costdrift.AnalysisRun{Grain: costdrift.GrainAccount, WindowFrom: "2025-01", WindowTo: "2025-12", Settings: "{}"}
		w, err := db.BeginAnalysis(ctx, run)
		if err != nil {
			t.Fatal(err)
		}
		for _, a := range []string{"6100", "6200"} {
			if err := w.Save(ctx, []costdrift.Fit{constant(a)}, []costdrift.Behaviour{behaviour(a)}, map[string]string{a: "hash " + a}); err != nil {
				t.Fatal(err)
			}
			for _, table := range []string{"analysis_runs", "fits", "behaviour_history", "object_inputs"} {
				if n := count(t, db, table); n != 0 {
					t.Fatalf("%s holds %d rows before the analysis is committed", table, n)
				}
			}
		}
		run.Objects = 2
		if !commit {
			w.Rollback()
			continue
		}
		if err := w.Commit(ctx); err != nil {
			t.Fatal(err)
		}
	}
	for table, want := range map[string]int{"analysis_runs": 1, "fits": 2, "behaviour_history": 2, "object_inputs": 2} {
		if n := count(t, db, table); n != want {
			t.Errorf("%s holds %d rows after the commit, want %d", table, n, want)
		}
	}
	if got := dump(t, db, `SELECT objects FROM analysis_runs`); got != "int64:2\n" {
		t.Errorf("the run counts %s objects, want 2", got)
	}
}

// The rules after an analysis read every object's latest closed behaviour:
// the lookup of an object's rows must search an index by object, not scan
// every object's rows for each one (a time growing with the square of the
// number of objects; minutes at 100,000).
func TestPreviousBehaviourSearchesByObject(t *testing.T) {
	db, _ := mustOpen(t)
	plan := queryPlan(t, db, previousBehaviourQuery)
	// SQLite's plan (https://sqlite.org/eqp.html): the correlated
	// subquery is a SEARCH of p using an index on object, not a SCAN.
	found := false
	for _, step := range plan {
		if strings.HasPrefix(step, "SEARCH p USING") && strings.Contains(step, "(object=?") && !strings.Contains(step, "AUTOMATIC") {
			found = true
		}
	}
	if !found {
		t.Errorf("the latest closed row of each object is not looked up by an index on object; plan:\n%s", strings.Join(plan, "\n"))
	}
}

// CostsPerPeriod reads many objects' costs in one pass and gives each the
// same costs, ledger periods and overflow error as CostPerPeriod reading it
// alone, at either grain.
func TestCostsPerPeriodIsCostPerPeriod(t *testing.T) {
	db, _ := mustOpen(t)
	loadFile(t, db, "/gl.csv", []costdrift.LedgerLine{
		ledgerLine("gl", "E1", 1, "2025-01-31", "6200", "WELD", 100, ""),
		ledgerLine("gl", "E1", 2, "2025-01-31", "6200", "PAINT", 200, ""),
		ledgerLine("gl", "E2", 1, "2025-02-28", "6200", "WELD", 300, ""),
		ledgerLine("gl", "E2", 2, "2025-02-28", "6100", "", 400, ""),
		ledgerLine("gl", "E3", 1, "2025-03-31", "6100", "", 500, ""),
		ledgerLine("gl", "E4", 1, "2025-03-31", "6300", "", 9_000_000_000_000_000_000, ""),
		ledgerLine("gl", "E4", 2, "2025-03-31", "6300", "", 9_000_000_000_000_000_000, ""),
		ledgerLine("gl", "E5", 1, "2025-04-30", "6100", "", 50, ""),
	})
	ctx := context.Background()
	objects := []costdrift.CostObject{{Account: "6100"}, {Account: "6200", CostCenter: "WELD"}, {Account: "6200", CostCenter: "PAINT"},
		{Account: "6300"}, {Account: "6400"}}
	for _, all := range []bool{false, true} {
		lc, err := db.CostsPerPeriod(ctx, objects, all, "2025-01", "2025-04")
		if err != nil {
			t.Fatal(err)
		}
		for _, o := range objects {
			for _, window := range [][2]string{{"2025-01", "2025-04"}, {"2025-02", "2025-03"}} {
				wantCosts, wantLedger, wantErr := db.CostPerPeriod(ctx, o, all, window[0], window[1])
				costs, ledger, err := lc.CostPerPeriod(ctx, o, all, window[0], window[1])
				if fmtErr(err) != fmtErr(wantErr) || !reflect.DeepEqual(costs, wantCosts) || !reflect.DeepEqual(ledger, wantLedger) {
					t.Errorf("%s (all cost centres %v) %v: %v %v %v; CostPerPeriod gives %v %v %v", o, all, window, costs, ledger, err,
						wantCosts, wantLedger, wantErr)
				}
			}
		}
	}
}

func fmtErr(err error) string {
	if err == nil {
		return ""
	}
	return err.Error()
}

// CurrentChoiceOf gives, of each named object's open behaviour, the class,
// driver and lag CurrentBehaviourOf reads, and leaves out closed rows (a
// break's earlier row, a replaced behaviour) and objects without one.
func TestCurrentChoiceOfIsCurrentBehaviourOfsChoice(t *testing.T) {
	db, _ := mustOpen(t)
	ctx := context.Background()
	analyse := func(bs ...costdrift.Behaviour) {
		t.Helper()
		run := &costdrift.AnalysisRun{Grain: costdrift.GrainAccountCostCenter, WindowFrom: "2025-01", WindowTo: "2025-12", Settings: "{}"}
		w, err := db.BeginAnalysis(ctx, run)
		if err != nil {
			t.Fatal(err)
		}
		inputs := map[string]string{}
		for _, b := range bs {
			inputs[b.Object.String()] = "hash"
		}
		if err := w.Save(ctx, nil, bs, inputs); err != nil {
			t.Fatal(err)
		}
		if err := w.Commit(ctx); err != nil {
			t.Fatal(err)
		}
	}
	rent := costdrift.CostObject{Account: "6100", CostCenter: "ADMIN"}
	power := costdrift.CostObject{Account: "6300", CostCenter: "WELD"}
	analyse(
		costdrift.Behaviour{Object: rent, Class: costdrift.Fixed, Reason: "flat", N: 12, FixedPerPeriod: 2600, Since: "2025-01", Until: "2025-12"},
		costdrift.Behaviour{Object: power, Class: costdrift.Variable, Driver: "machine_hours", Unit: "hour", Lag: 0, Reason: "follows hours",
			N: 12, VariableRate: 1.5, Since: "2025-01", Until: "2025-12",
			Break: &costdrift.Break{Period: "2025-06", Statistic: 12, P: 0.01}})
	// A change of class without a break takes two analyses that see it.
	for range 2 {
		analyse(costdrift.Behaviour{Object: power, Class: costdrift.Mixed, Driver: "machine_hours", Unit: "hour", Lag: 1, Reason: "fixed part",
			N: 12, FixedPerPeriod: 300, VariableRate: 1.2, Since: "2025-06", Until: "2025-12"})
	}
	names := []string{rent.String(), power.String(), "6900 · NOWHERE"}
	full, err := db.CurrentBehaviourOf(ctx, names)
	if err != nil {
		t.Fatal(err)
	}
	got, err := db.CurrentChoiceOf(ctx, names)
	if err != nil {
		t.Fatal(err)
	}
	if len(got) != 2 || len(full) != 2 {
		t.Fatalf("CurrentChoiceOf gave %d objects, CurrentBehaviourOf %d; want 2 each", len(got), len(full))
	}
	if b := got[power.String()]; b.Class != costdrift.Mixed || b.Driver != "machine_hours" || b.Lag != 1 || b.Object != power {
		t.Errorf("power's choice is %+v, want the open mixed behaviour on machine_hours at lag 1", b)
	}
	for name, f := range full {
		g := got[name]
		if g.Object != f.Object || g.Class != f.Class || g.Driver != f.Driver || g.Lag != f.Lag {
			t.Errorf("%s: choice %s %q lag %d, behaviour %s %q lag %d", name, g.Class, g.Driver, g.Lag, f.Class, f.Driver, f.Lag)
		}
	}
}

// The web view's list of objects, its counts and the overview's groups read
// the narrow index of the current behaviours' list columns, not the table
// rows with their evidence (a hundred megabytes at 100,000 objects); SQLite's
// plan (https://sqlite.org/eqp.html) says which it reads.
func TestObjectListsReadTheCurrentBehaviourIndex(t *testing.T) {
	db, _ := mustOpen(t)
	plan := func(query string, args ...any) string {
		t.Helper()
		return strings.Join(queryPlan(t, db, query, args...), "\n")
	}
	for _, q := range []ObjectQuery{
		{},
		{CostCenter: "WELD", Class: costdrift.Mixed, Sort: "r2", Descending: true},
		{Search: "power", Sort: "since"},
		{Account: "6200", ChangedSince: "2025-01", Sort: "mean"},
	} {
		where, args := objectWhere(q)
		for _, query := range []string{
			`SELECT COUNT(*) FROM behaviour_history WHERE ` + where,
			`SELECT object FROM behaviour_history WHERE ` + where + ` ORDER BY ` + fmt.Sprintf(ObjectSorts[cmp.Or(q.Sort, "object")], "ASC") + ` LIMIT 50 OFFSET 99950`,
		} {
			if p := plan(query, args...); !strings.Contains(p, "USING COVERING INDEX behaviour_current_list") {
				t.Errorf("%+v: the query reads the table:\n%s\nplan:\n%s", q, query, p)
			}
		}
	}
	if p := plan(`SELECT cost_center, class, COUNT(*) FROM behaviour_history WHERE valid_to_run_at IS NULL GROUP BY cost_center, class`); !strings.Contains(p, "USING COVERING INDEX behaviour_current_list") {
		t.Errorf("the overview's groups read the table; plan:\n%s", p)
	}
}

// queryPlan is SQLite's plan of query (https://sqlite.org/eqp.html), a
// step a line.
func queryPlan(t *testing.T, db *DB, query string, args ...any) []string {
	t.Helper()
	rows, err := db.SQL().Query(`EXPLAIN QUERY PLAN `+query, args...)
	if err != nil {
		t.Fatal(err)
	}
	defer rows.Close()
	var steps []string
	for rows.Next() {
		var id, parent, unused int
		var detail string
		if err := rows.Scan(&id, &parent, &unused, &detail); err != nil {
			t.Fatal(err)
		}
		steps = append(steps, detail)
	}
	return steps
}

// RecordedLedgerPeriods holds every period of the ledger without reading
// its lines, and may hold more: a period whose lines all moved to another
// when a later file restated them. A file loaded before the store counted
// its periods is read through the per-file index; a line from a database
// source leaves the answer to LedgerPeriods.
func TestRecordedLedgerPeriodsHoldTheLedgersPeriods(t *testing.T) {
	db, _ := mustOpen(t)
	ctx := context.Background()
	loadFile(t, db, "/jan-mar.csv", []costdrift.LedgerLine{
		ledgerLine("gl", "E1", 1, "2025-01-31", "6200", "WELD", 100, ""),
		ledgerLine("gl", "E2", 1, "2025-02-28", "6200", "WELD", 200, ""),
		ledgerLine("gl", "E3", 1, "2025-03-31", "6200", "WELD", 300, ""),
	})
	// The March line restated into February by a later file.
	loadFile(t, db, "/restated.csv", []costdrift.LedgerLine{ledgerLine("gl", "E3", 1, "2025-02-27", "6200", "WELD", 300, "")})
	loadFile(t, db, "/apr.csv", []costdrift.LedgerLine{ledgerLine("gl", "E4", 1, "2025-04-30", "6200", "WELD", 400, "")})
	// As a file loaded before schema 14 left it: no counts.
	mustExec(t, db, `DELETE FROM source_periods WHERE source_file_id = (SELECT id FROM source_files WHERE path = '/apr.csv')`)

	ledger, err := db.LedgerPeriods(ctx)
	if err != nil {
		t.Fatal(err)
	}
	slices.Sort(ledger)
	if want := []string{"2025-01", "2025-02", "2025-04"}; !slices.Equal(ledger, want) {
		t.Fatalf("LedgerPeriods = %v, want %v", ledger, want)
	}
	recorded, ok, err := db.RecordedLedgerPeriods(ctx)
	if err != nil || !ok {
		t.Fatalf("RecordedLedgerPeriods: %v, %v", ok, err)
	}
	slices.Sort(recorded)
	if want := []string{"2025-01", "2025-02", "2025-03", "2025-04"}; !slices.Equal(recorded, want) {
		t.Errorf("RecordedLedgerPeriods = %v, want %v (March recorded by the first file, April read through the index)", recorded, want)
	}
	for _, step := range queryPlan(t, db, `SELECT g.period FROM source_files f CROSS JOIN gl_lines g ON g.source_file_id = f.id
			WHERE NOT EXISTS (SELECT 1 FROM source_periods p WHERE p.source_file_id = f.id)`) {
		if strings.HasPrefix(step, "SCAN g") {
			t.Errorf("the uncounted files' lines are read by a scan of the ledger: %s", step)
		}
	}

	load(t, db, "erp", costdrift.RoleLedger, batch{lines: []costdrift.LedgerLine{ledgerLine("erp", "Q1", 1, "2025-05-31", "6200", "WELD", 500, "")}})
	if _, ok, err := db.RecordedLedgerPeriods(ctx); err != nil || ok {
		t.Errorf("with a database source's line: ok = %v (%v), want false", ok, err)
	}
}
