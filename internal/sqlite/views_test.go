package sqlite

import (
	"context"
	"math"
	"testing"

	"github.com/costdrift/costdrift/internal/costdrift"
)

// TestBudgetViewsRoundMoney: flexible_budget and spending_variances give
// money with the currency's decimals, as cost_series does (README "The
// store"), though budget_lines and variance_lines keep the formulas' floats.
// Expected by hand: 17138.1440248978 is 17138.14 in EUR (two decimals) and
// 17138 in JPY (none; ISO 4217, common practice); a variance is actual minus
// budget of the rounded figures, so spending + activity variance = actual −
// static budget to the cent.
func TestBudgetViewsRoundMoney(t *testing.T) {
	ctx := context.Background()
	nan := math.NaN()
	line := costdrift.BudgetLine{Kind: costdrift.LineObject, Object: costdrift.CostObject{Account: "5100", CostCenter: "WELD"},
		Period: "2026-07", Class: costdrift.Variable, Driver: "frames_built", Activity: 1000, Activity2: nan, Objects: 1,
		Estimate: costdrift.Estimate{Value: 17138.1440248978, SE: 310.5, DF: 34,
			Low80: 16731.0049999, High80: 17545.2850001, Low95: 16505.5551, High95: 17770.7329}}
	variance := costdrift.VarianceLine{Kind: costdrift.LineObject, Object: line.Object, Period: "2026-06", Class: costdrift.Variable,
		Driver: "frames_built", ActualActivity: 990, PlanActivity: 1000, Objects: 1, Actual: 17000.01,
		Flexible: costdrift.Estimate{Value: 16966.3025, Low95: 16340.004, High95: 17592.6012},
		Static:   17138.1440248978, SpendingVariance: 17000.01 - 16966.3025, ActivityVariance: 16966.3025 - 17138.1440248978}

	for _, tc := range []struct {
		name  string
		db    *DB
		want  string
		wantV string
	}{
		{"EUR", func() *DB { db, _ := mustOpen(t); return db }(),
			"float64:17138.14|float64:16731|float64:17545.29|float64:16505.56|float64:17770.73\n",
			`float64:17000.01|float64:16966.3|float64:16340|float64:17592.6|float64:17138.14|float64:33.71|"U"|float64:-171.84|"F"` + "\n"},
		{"JPY", func() *DB { db, _ := mustOpenAt(t, t.TempDir()+"/yen.db", jpy); return db }(),
			"float64:17138|float64:16731|float64:17545|float64:16506|float64:17771\n",
			`float64:17000|float64:16966|float64:16340|float64:17593|float64:17138|float64:34|"U"|float64:-172|"F"` + "\n"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			if err := tc.db.SaveBudget(ctx, "q3", nil, []costdrift.BudgetLine{line}, tc.db.Now()); err != nil {
				t.Fatal(err)
			}
			if got := dump(t, tc.db, `SELECT budget, low80, high80, low95, high95 FROM flexible_budget`); got != tc.want {
				t.Errorf("flexible_budget:\n got  %s want %s", got, tc.want)
			}
			if err := tc.db.SaveVariances(ctx, "june", "2026-06", "", []costdrift.VarianceLine{variance}, tc.db.Now()); err != nil {
				t.Fatal(err)
			}
			if got := dump(t, tc.db, `SELECT actual, flexible_budget, low95, high95, static_budget, spending_variance, spending_mark,
				activity_variance, activity_mark FROM spending_variances`); got != tc.wantV {
				t.Errorf("spending_variances:\n got  %s want %s", got, tc.wantV)
			}
		})
	}
}

// TestSavedNamesKeepEarlierResults: budgets and variance reports stored
// before results were saved under a name stay. A budget keeps its plan's
// name as its name; a variance report is named after its period and plan.
func TestSavedNamesKeepEarlierResults(t *testing.T) {
	db, ms := storeBefore(t, 15)
	ctx := context.Background()
	mustExec(t, db, `INSERT INTO budget_lines (plan, period, line, object, account, cost_center, objects, budget, computed_at)
		VALUES ('plan-2026-q3', '2026-07', 'total', '', '', '', 13, 80123.456, '2026-06-30T08:00:00Z')`)
	mustExec(t, db, `INSERT INTO variance_lines (period, plan, line, object, account, cost_center, objects, actual, spending_variance, spending_mark, computed_at)
		VALUES ('2026-06', '', 'total', '', '', '', 13, 79000.5, -12.25, 'F', '2026-07-02T08:00:00Z'),
		       ('2026-06', 'plan-2026-q2', 'total', '', '', '', 13, 79000.5, -12.25, 'F', '2026-07-02T08:00:00Z')`)
	if err := db.applyMigrations(ctx, ms); err != nil {
		t.Fatal(err)
	}
	if got := dump(t, db, `SELECT plan, period, line, budget FROM budget_lines`); got != `"plan-2026-q3"|"2026-07"|"total"|float64:80123.456`+"\n" {
		t.Errorf("budget_lines after the migration:\n%s", got)
	}
	if got, want := dump(t, db, `SELECT name, period, plan, actual, spending_variance, spending_mark FROM variance_lines ORDER BY name`),
		`"2026-06"|"2026-06"|""|float64:79000.5|float64:-12.25|"F"`+"\n"+
			`"2026-06 plan-2026-q2"|"2026-06"|"plan-2026-q2"|float64:79000.5|float64:-12.25|"F"`+"\n"; got != want {
		t.Errorf("variance_lines after the migration:\n%s\nwant\n%s", got, want)
	}
}
