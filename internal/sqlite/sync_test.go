package sqlite

import (
	"context"
	"database/sql"
	"errors"
	"math"
	"path/filepath"
	"reflect"
	"strconv"
	"testing"
	"time"

	"github.com/costdrift/costdrift/internal/costdrift"
)

func ledgerLine(source, entry string, line int, postedOn, account, costCenter string, minor int64, description string) costdrift.LedgerLine {
	return costdrift.LedgerLine{Source: source, EntryID: entry, Line: line, PostedOn: postedOn, Period: postedOn[:7], Account: account,
		CostCenter: costCenter, AmountMinor: minor, Description: description}
}

func activityValue(source, period, driver, costCenter string, value float64, unit string) costdrift.ActivityValue {
	return costdrift.ActivityValue{Source: source, Period: period, Driver: driver, CostCenter: costCenter, Value: value, Unit: unit}
}

// batch is what one sync of a source delivers.
type batch struct {
	lines    []costdrift.LedgerLine
	activity []costdrift.ActivityValue
	accounts []costdrift.Account
	rejects  []costdrift.Reject
}

func (b batch) fill(w costdrift.SourceWriter) error {
	for _, l := range b.lines {
		if err := w.LedgerLine(l); err != nil {
			return err
		}
	}
	for _, a := range b.activity {
		if err := w.Activity(a); err != nil {
			return err
		}
	}
	for _, a := range b.accounts {
		if err := w.Account(a); err != nil {
			return err
		}
	}
	for _, r := range b.rejects {
		if err := w.Reject(r); err != nil {
			return err
		}
	}
	return nil
}

// load syncs one batch as source and fails the test on error.
func load(t *testing.T, db *DB, source string, role costdrift.Role, b batch) costdrift.SyncRun {
	t.Helper()
	run := costdrift.SyncRun{Source: source, Role: role, Kind: "csv", Files: 1,
		RowsRead: len(b.lines) + len(b.activity) + len(b.accounts) + len(b.rejects)}
	if err := db.LoadSource(context.Background(), &run, b.fill); err != nil {
		t.Fatalf("LoadSource %s: %v", source, err)
	}
	return run
}

func checkCounts(t *testing.T, what string, run costdrift.SyncRun, loaded, unchanged, rejected int) {
	t.Helper()
	if run.RowsLoaded != loaded || run.RowsUnchanged != unchanged || run.RowsRejected != rejected || run.Status != "ok" {
		t.Errorf("%s: status %s, loaded %d, unchanged %d, rejected %d; want ok, %d, %d, %d",
			what, run.Status, run.RowsLoaded, run.RowsUnchanged, run.RowsRejected, loaded, unchanged, rejected)
	}
}

// glBatch is three lines of one ledger source and one reject.
func glBatch() batch {
	return batch{
		lines: []costdrift.LedgerLine{
			ledgerLine("gl", "JE-1", 1, "2025-01-31", "6200", "WELD", 431275, "Weld wire, January"),
			ledgerLine("gl", "JE-1", 2, "2025-01-31", "2100", "", -431275, "Payable"),
			ledgerLine("gl", "JE-2", 1, "2025-02-28", "6500", "", 250000, ""),
		},
		rejects: []costdrift.Reject{{Source: "gl", Location: "gl.csv:5", Reason: `bad date "2025-02-30": want YYYY-MM-DD`,
			Raw: "JE-3,1,2025-02-30,6100,PAINT,1775.00,Paint line power"}},
	}
}

const (
	glDump      = `SELECT rowid, * FROM gl_lines ORDER BY source, entry_id, line`
	rejectsDump = `SELECT * FROM rejects ORDER BY id`
)

func TestLoadSourceStoresBatch(t *testing.T) {
	db, _ := mustOpen(t)
	run := load(t, db, "gl", costdrift.RoleLedger, glBatch())
	checkCounts(t, "first load", run, 3, 0, 1)
	if run.ID == 0 || run.StartedAt.IsZero() || run.FinishedAt.IsZero() {
		t.Errorf("run not filled in: %+v", run)
	}
	want := "" +
		`"gl"|"JE-1"|int64:1|"2025-01-31"|"2025-01"|"6200"|"WELD"|int64:431275|"Weld wire, January"|int64:1` + "\n" +
		`"gl"|"JE-1"|int64:2|"2025-01-31"|"2025-01"|"2100"|""|int64:-431275|"Payable"|int64:1` + "\n" +
		`"gl"|"JE-2"|int64:1|"2025-02-28"|"2025-02"|"6500"|""|int64:250000|""|int64:1` + "\n"
	if got := dump(t, db, `SELECT source, entry_id, line, posted_on, period, account, cost_center, amount_minor, description, sync_run_id
		FROM gl_lines ORDER BY entry_id, line`); got != want {
		t.Errorf("gl_lines:\n%s\nwant\n%s", got, want)
	}
	wantRejects := `int64:1|"gl"|"gl.csv:5"|"bad date \"2025-02-30\": want YYYY-MM-DD"|"JE-3,1,2025-02-30,6100,PAINT,1775.00,Paint line power"` + "\n"
	if got := dump(t, db, `SELECT sync_run_id, source, location, reason, raw FROM rejects`); got != wantRejects {
		t.Errorf("rejects:\n%s\nwant\n%s", got, wantRejects)
	}
	wantRun := `"gl"|"ledger"|"csv"|"2025-06-01T06:00:00Z"|"2025-06-01T06:00:00Z"|"ok"|int64:1|int64:4|int64:3|int64:0|int64:1|NULL` + "\n"
	if got := dump(t, db, `SELECT source, role, kind, started_at, finished_at, status, files, rows_read, rows_loaded, rows_unchanged,
		rows_rejected, error FROM sync_runs`); got != wantRun {
		t.Errorf("sync_runs:\n%s\nwant\n%s", got, wantRun)
	}
}

func TestLoadSourceTwiceChangesNothing(t *testing.T) {
	db, clk := mustOpen(t)
	load(t, db, "gl", costdrift.RoleLedger, glBatch())
	acts := batch{activity: []costdrift.ActivityValue{
		activityValue("ops", "2025-01", "machine_hours", "WELD", 410.5, "machine hour"),
		activityValue("ops", "2025-01", "machine_hours", "", 1210, ""),
	}}
	load(t, db, "ops", costdrift.RoleActivity, acts)
	coa := batch{accounts: []costdrift.Account{{Source: "coa", Account: "6200", Name: "Welding consumables", Type: "expense", Group: "Overhead"}}}
	load(t, db, "coa", costdrift.RoleAccounts, coa)

	before := map[string]string{}
	tables := map[string]string{
		"gl_lines": glDump,
		"activity": `SELECT rowid, * FROM activity ORDER BY rowid`,
		"accounts": `SELECT rowid, * FROM accounts ORDER BY rowid`,
	}
	for name, q := range tables {
		before[name] = dump(t, db, q)
	}

	clk.t = clk.t.Add(24 * time.Hour)
	checkCounts(t, "ledger again", load(t, db, "gl", costdrift.RoleLedger, glBatch()), 0, 3, 1)
	checkCounts(t, "activity again", load(t, db, "ops", costdrift.RoleActivity, acts), 0, 2, 0)
	checkCounts(t, "accounts again", load(t, db, "coa", costdrift.RoleAccounts, coa), 0, 1, 0)
	for name, q := range tables {
		if after := dump(t, db, q); after != before[name] {
			t.Errorf("%s changed on a second sync of the same rows:\n%s\nwas\n%s", name, after, before[name])
		}
	}
}

func TestLoadSourceChangedRows(t *testing.T) {
	db, _ := mustOpen(t)
	first := load(t, db, "gl", costdrift.RoleLedger, glBatch())
	b := glBatch()
	b.lines[2].AmountMinor = 260000                                                               // rent went up
	b.lines = append(b.lines, ledgerLine("gl", "JE-2", 2, "2025-02-28", "2100", "", -260000, "")) // a new line
	b.rejects = nil
	second := load(t, db, "gl", costdrift.RoleLedger, b)
	checkCounts(t, "second load", second, 2, 2, 0)
	want := `"gl"|"JE-2"|int64:1|int64:260000|int64:` + strconv.FormatInt(second.ID, 10) + "\n" +
		`"gl"|"JE-2"|int64:2|int64:-260000|int64:` + strconv.FormatInt(second.ID, 10) + "\n"
	if got := dump(t, db, `SELECT source, entry_id, line, amount_minor, sync_run_id FROM gl_lines WHERE entry_id = 'JE-2' ORDER BY line`); got != want {
		t.Errorf("changed rows:\n%s\nwant\n%s", got, want)
	}
	// The unchanged lines keep the run that first stored them.
	if n := count(t, db, "gl_lines WHERE entry_id = 'JE-1' AND sync_run_id = ?", first.ID); n != 2 {
		t.Errorf("%d JE-1 lines still from run %d, want 2", n, first.ID)
	}

	// Changed activity values and account names count as loaded too.
	load(t, db, "ops", costdrift.RoleActivity, batch{activity: []costdrift.ActivityValue{activityValue("ops", "2025-01", "orders", "", 88, "")}})
	run := load(t, db, "ops", costdrift.RoleActivity, batch{activity: []costdrift.ActivityValue{
		activityValue("ops", "2025-01", "orders", "", 89, ""), activityValue("ops", "2025-02", "orders", "", 91, "")}})
	checkCounts(t, "activity", run, 2, 0, 0)
	load(t, db, "coa", costdrift.RoleAccounts, batch{accounts: []costdrift.Account{{Source: "coa", Account: "6500", Name: "Rent"}}})
	run = load(t, db, "coa", costdrift.RoleAccounts, batch{accounts: []costdrift.Account{{Source: "coa", Account: "6500", Name: "Rent and leases"}}})
	checkCounts(t, "accounts", run, 1, 0, 0)
	if got := dump(t, db, `SELECT name FROM accounts`); got != "\"Rent and leases\"\n" {
		t.Errorf("account name %s", got)
	}
}

func TestLoadSourceFailedBatchKeepsNothing(t *testing.T) {
	db, clk := mustOpen(t)
	load(t, db, "gl", costdrift.RoleLedger, glBatch())
	glBefore, rejectsBefore := dump(t, db, glDump), dump(t, db, rejectsDump)

	clk.t = clk.t.Add(time.Hour)
	readErr := errors.New("data/gl-2025-03.csv: read: input/output error")
	run := costdrift.SyncRun{Source: "gl", Role: costdrift.RoleLedger, Kind: "csv", Files: 1, RowsRead: 3}
	err := db.LoadSource(context.Background(), &run, func(w costdrift.SourceWriter) error {
		b := glBatch()
		b.lines[0].AmountMinor = 1                                                              // a change
		b.lines = append(b.lines, ledgerLine("gl", "JE-9", 1, "2025-03-31", "6200", "", 5, "")) // a new line
		if err := b.fill(w); err != nil {                                                       // and a reject
			return err
		}
		return readErr
	})
	if !errors.Is(err, readErr) {
		t.Fatalf("LoadSource error %v, want it to wrap %v", err, readErr)
	}
	if got := dump(t, db, glDump); got != glBefore {
		t.Errorf("gl_lines after a failed batch:\n%s\nwant as before:\n%s", got, glBefore)
	}
	if got := dump(t, db, rejectsDump); got != rejectsBefore {
		t.Errorf("rejects after a failed batch:\n%s\nwant as before:\n%s", got, rejectsBefore)
	}
	if run.Status != "failed" || run.Error != readErr.Error() || run.RowsLoaded != 0 || run.RowsUnchanged != 0 || run.RowsRejected != 0 {
		t.Errorf("run %+v, want failed with the error and no rows", run)
	}
	want := `"failed"|"2025-06-01T07:00:00Z"|int64:3|int64:0|int64:0|int64:0|"data/gl-2025-03.csv: read: input/output error"` + "\n"
	if got := dump(t, db, `SELECT status, finished_at, rows_read, rows_loaded, rows_unchanged, rows_rejected, error
		FROM sync_runs WHERE id = `+strconv.FormatInt(run.ID, 10)); got != want {
		t.Errorf("failed run:\n%s\nwant\n%s", got, want)
	}
}

func TestLoadSourceCancelledIsRecorded(t *testing.T) {
	// A sync cancelled mid-batch (the daemon stopping) keeps nothing of
	// the batch, and its run still says it failed.
	db, _ := mustOpen(t)
	ctx, cancel := context.WithCancel(context.Background())
	defer cancel()
	run := costdrift.SyncRun{Source: "gl", Role: costdrift.RoleLedger, Kind: "csv"}
	err := db.LoadSource(ctx, &run, func(w costdrift.SourceWriter) error {
		if err := w.LedgerLine(glBatch().lines[0]); err != nil {
			return err
		}
		cancel()
		return ctx.Err()
	})
	if !errors.Is(err, context.Canceled) {
		t.Fatalf("error %v, want context.Canceled", err)
	}
	if n := count(t, db, "gl_lines"); n != 0 {
		t.Errorf("%d ledger lines kept from a cancelled batch", n)
	}
	if got := dump(t, db, `SELECT status, error FROM sync_runs`); got != `"failed"|"context canceled"`+"\n" {
		t.Errorf("sync_runs: %s", got)
	}
}

func TestSyncRuns(t *testing.T) {
	db, clk := mustOpen(t)
	load(t, db, "coa", costdrift.RoleAccounts, batch{})
	clk.t = clk.t.Add(time.Minute)
	load(t, db, "gl", costdrift.RoleLedger, glBatch())
	runs, err := db.SyncRuns(context.Background(), 10)
	if err != nil {
		t.Fatal(err)
	}
	if len(runs) != 2 {
		t.Fatalf("%d runs, want 2", len(runs))
	}
	want := costdrift.SyncRun{ID: 2, Source: "gl", Role: costdrift.RoleLedger, Kind: "csv", Status: "ok", Files: 1, RowsRead: 4,
		RowsLoaded: 3, RowsRejected: 1, StartedAt: clk.t, FinishedAt: clk.t, Reasons: map[string]int{"bad date": 1}}
	if !reflect.DeepEqual(runs[0], want) {
		t.Errorf("newest run:\n got  %+v\n want %+v", runs[0], want)
	}
	if runs[1].Source != "coa" || runs[1].ID != 1 {
		t.Errorf("older run %+v, want coa with id 1", runs[1])
	}
	if runs, _ := db.SyncRuns(context.Background(), 1); len(runs) != 1 || runs[0].ID != 2 {
		t.Errorf("limit 1: %+v", runs)
	}
}

// seriesData loads two cost centres' costs, a line without a cost centre,
// and company-wide and per-centre drivers from two activity sources.
func seriesData(t *testing.T, db *DB) {
	t.Helper()
	load(t, db, "gl", costdrift.RoleLedger, batch{lines: []costdrift.LedgerLine{
		ledgerLine("gl", "E1", 1, "2025-01-15", "6200", "WELD", 100000, ""),
		ledgerLine("gl", "E1", 2, "2025-01-20", "6200", "WELD", 23456, ""),
		ledgerLine("gl", "E2", 1, "2025-01-31", "6200", "PAINT", 50000, ""),
		ledgerLine("gl", "E3", 1, "2025-01-31", "6500", "", 250000, ""),
		ledgerLine("gl", "E4", 1, "2025-02-28", "6200", "WELD", -1001, ""),
	}})
	load(t, db, "ops", costdrift.RoleActivity, batch{activity: []costdrift.ActivityValue{
		activityValue("ops", "2025-01", "machine_hours", "", 900, "machine hour"),
		activityValue("ops", "2025-01", "machine_hours", "WELD", 400, "machine hour"),
		activityValue("ops", "2025-01", "orders", "", 88, "order"),
		activityValue("ops", "2025-02", "machine_hours", "", 850, "machine hour"),
	}})
	load(t, db, "shopfloor", costdrift.RoleActivity, batch{activity: []costdrift.ActivityValue{
		activityValue("shopfloor", "2025-01", "machine_hours", "WELD", 20, ""),
	}})
}

// TestCostSeriesView: before any analysis, cost_series holds every account
// and cost centre of the ledger in every period the ledger has postings
// (0 where the object has none); cost_with_drivers sets each driver's value
// beside it.
func TestCostSeriesView(t *testing.T) {
	db, _ := mustOpen(t)
	seriesData(t, db)
	type row struct {
		period, account, costCenter string
		minor                       int64
		amount                      float64
		driver                      string
		value                       sql.NullFloat64
		unit                        string
	}
	// Expected by hand: cost is the sum of the period's lines, amount is
	// minor units / 100 (EUR, two decimals: ISO 4217, common practice); the
	// driver value is the cost centre's own series (summed over sources)
	// when it has one in that period, else the company-wide series.
	want := []row{
		{"2025-01", "6200", "PAINT", 50000, 500, "machine_hours", valid(900), "machine hour"}, // no own series: company
		{"2025-01", "6200", "PAINT", 50000, 500, "orders", valid(88), "order"},
		{"2025-01", "6200", "WELD", 123456, 1234.56, "machine_hours", valid(420), "machine hour"}, // own: 400 + 20 wins over 900
		{"2025-01", "6200", "WELD", 123456, 1234.56, "orders", valid(88), "order"},                // no own orders: company
		{"2025-01", "6500", "", 250000, 2500, "machine_hours", valid(900), "machine hour"},
		{"2025-01", "6500", "", 250000, 2500, "orders", valid(88), "order"},
		{"2025-02", "6200", "PAINT", 0, 0, "machine_hours", valid(850), "machine hour"}, // no postings while the ledger has some: 0
		{"2025-02", "6200", "PAINT", 0, 0, "orders", sql.NullFloat64{}, ""},
		{"2025-02", "6200", "WELD", -1001, -10.01, "machine_hours", valid(850), "machine hour"}, // own series has no 2025-02
		{"2025-02", "6200", "WELD", -1001, -10.01, "orders", sql.NullFloat64{}, ""},             // no value at all: NULL
		{"2025-02", "6500", "", 0, 0, "machine_hours", valid(850), "machine hour"},
		{"2025-02", "6500", "", 0, 0, "orders", sql.NullFloat64{}, ""},
	}
	rows, err := db.SQL().Query(`SELECT period, account, cost_center, amount_minor, amount, driver, driver_value, COALESCE(driver_unit, '')
		FROM cost_with_drivers ORDER BY period, account, cost_center, driver`)
	if err != nil {
		t.Fatal(err)
	}
	defer rows.Close()
	var got []row
	for rows.Next() {
		var r row
		if err := rows.Scan(&r.period, &r.account, &r.costCenter, &r.minor, &r.amount, &r.driver, &r.value, &r.unit); err != nil {
			t.Fatal(err)
		}
		got = append(got, r)
	}
	if err := rows.Err(); err != nil {
		t.Fatal(err)
	}
	const tol = 1e-9 // amount is one division of exact integers
	if len(got) != len(want) {
		t.Fatalf("cost_with_drivers has %d rows, want %d:\n%+v", len(got), len(want), got)
	}
	for i := range want {
		g, w := got[i], want[i]
		if math.Abs(g.amount-w.amount) > tol || math.Abs(g.value.Float64-w.value.Float64) > tol {
			t.Errorf("row %d: %+v, want %+v (tol %g)", i, g, w, tol)
		}
		g.amount, w.amount, g.value.Float64, w.value.Float64 = 0, 0, 0, 0
		if g != w {
			t.Errorf("row %d: %+v, want %+v", i, got[i], want[i])
		}
	}
}

func valid(v float64) sql.NullFloat64 { return sql.NullFloat64{Float64: v, Valid: true} }

func TestCostSeriesAmountInYen(t *testing.T) {
	// JPY has no minor unit (ISO 4217, common practice): amount = amount_minor.
	db, _ := mustOpenAt(t, filepath.Join(t.TempDir(), "yen.db"), jpy)
	load(t, db, "gl", costdrift.RoleLedger, batch{lines: []costdrift.LedgerLine{ledgerLine("gl", "E1", 1, "2025-01-15", "6200", "", 15000, "")}})
	load(t, db, "ops", costdrift.RoleActivity, batch{activity: []costdrift.ActivityValue{activityValue("ops", "2025-01", "orders", "", 3, "")}})
	if got := dump(t, db, `SELECT amount_minor, amount, driver_value FROM cost_with_drivers`); got != "int64:15000|float64:15000|float64:3\n" {
		t.Errorf("cost_series in JPY: %s", got)
	}
}

func TestReadersForTheAnalysis(t *testing.T) {
	db, _ := mustOpen(t)
	seriesData(t, db)
	load(t, db, "coa", costdrift.RoleAccounts, batch{accounts: []costdrift.Account{
		{Source: "coa", Account: "6200", Name: "Welding consumables"}, {Source: "coa", Account: "6500", Name: "Rent"}}})
	ctx := context.Background()

	totals, err := db.CostTotals(ctx)
	if err != nil {
		t.Fatal(err)
	}
	// Sums of the lines in seriesData, by hand.
	wantTotals := []costdrift.CostTotal{
		{Period: "2025-01", Account: "6200", CostCenter: "PAINT", AmountMinor: 50000},
		{Period: "2025-01", Account: "6200", CostCenter: "WELD", AmountMinor: 123456},
		{Period: "2025-02", Account: "6200", CostCenter: "WELD", AmountMinor: -1001},
		{Period: "2025-01", Account: "6500", CostCenter: "", AmountMinor: 250000},
	}
	if !reflect.DeepEqual(totals, wantTotals) {
		t.Errorf("CostTotals:\n got  %+v\n want %+v", totals, wantTotals)
	}

	acts, err := db.Activity(ctx)
	if err != nil {
		t.Fatal(err)
	}
	// Summed over the two sources; sources are not part of the result.
	wantActs := []costdrift.ActivityValue{
		{Period: "2025-01", Driver: "machine_hours", CostCenter: "", Value: 900, Unit: "machine hour"},
		{Period: "2025-02", Driver: "machine_hours", CostCenter: "", Value: 850, Unit: "machine hour"},
		{Period: "2025-01", Driver: "machine_hours", CostCenter: "WELD", Value: 420, Unit: "machine hour"},
		{Period: "2025-01", Driver: "orders", CostCenter: "", Value: 88, Unit: "order"},
	}
	if !reflect.DeepEqual(acts, wantActs) {
		t.Errorf("Activity:\n got  %+v\n want %+v", acts, wantActs)
	}

	names, err := db.AccountNames(ctx)
	if err != nil {
		t.Fatal(err)
	}
	if want := map[string]string{"6200": "Welding consumables", "6500": "Rent"}; !reflect.DeepEqual(names, want) {
		t.Errorf("AccountNames %v, want %v", names, want)
	}
}

func TestOpenAlertsView(t *testing.T) {
	db, _ := mustOpen(t)
	for _, a := range []struct{ kind, status, fingerprint string }{
		{"rate_shift", "open", "f1"}, {"data_gap", "acknowledged", "f2"}, {"fixed_shift", "resolved", "f3"}, {"spending_outlier", "open", "f4"},
	} {
		mustExec(t, db, `INSERT INTO alerts (kind, object, severity, status, period, message, fingerprint, created_at, updated_at)
			VALUES (?, '6200/WELD', 'warning', ?, '2025-05', 'rate rose', ?, '2025-06-01T06:00:00Z', '2025-06-01T06:00:00Z')`,
			a.kind, a.status, a.fingerprint)
	}
	want := `int64:1|"rate_shift"|"6200/WELD"|"warning"|"open"|"2025-05"|"rate rose"|"2025-06-01T06:00:00Z"|"2025-06-01T06:00:00Z"` + "\n" +
		`int64:4|"spending_outlier"|"6200/WELD"|"warning"|"open"|"2025-05"|"rate rose"|"2025-06-01T06:00:00Z"|"2025-06-01T06:00:00Z"` + "\n"
	if got := dump(t, db, `SELECT id, kind, object, severity, status, period, message, created_at, updated_at FROM open_alerts ORDER BY id`); got != want {
		t.Errorf("open_alerts:\n%s\nwant\n%s", got, want)
	}
}
