-- costdrift store, schema 10: flexible budgets and spending variances from
-- the discovered formulas.

-- What a prediction from the formula needs, so that budgets and their
-- intervals come from the store without refitting: JSON {intercept, centre,
-- coef, cov, s, n, df, levels} (see the README, "Budgets and variances").
ALTER TABLE behaviour_history ADD COLUMN prediction TEXT;

DROP VIEW current_behaviour;
CREATE VIEW current_behaviour AS
SELECT object, account, cost_center, class, driver, unit, lag, fixed_per_period, variable_rate,
       driver2, unit2, lag2, variable_rate2,
       r2, n, range_min, range_max, since, until, steps, reason, mean_cost, cv, high_low, outliers, diagnostics,
       last_run_id AS analysis_run_id, break, pending, spending, prediction
FROM behaviour_history
WHERE valid_to_run_at IS NULL;

-- Planned activity, as read from a plan file by `costdrift budget` or
-- `costdrift variance --plan`; a plan read again replaces its rows.
CREATE TABLE plans (
    plan        TEXT NOT NULL,               -- the plan file's name without folder and extension
    period      TEXT NOT NULL,
    driver      TEXT NOT NULL,
    cost_center TEXT NOT NULL DEFAULT '',    -- '' for a company-wide value
    value       REAL NOT NULL,
    location    TEXT NOT NULL,               -- file:line the value was read from
    loaded_at   TEXT NOT NULL,               -- RFC 3339, UTC
    PRIMARY KEY (plan, period, driver, cost_center)
);

-- The latest budget of each plan: one line per cost object and period, and
-- totals per cost centre (line = 'cost_center', object '') and overall
-- (line = 'total'). Money in currency units; NULL where there is no figure
-- (the warning says why).
CREATE TABLE budget_lines (
    plan             TEXT NOT NULL,
    period           TEXT NOT NULL,
    line             TEXT NOT NULL CHECK (line IN ('object', 'cost_center', 'total')),
    object           TEXT NOT NULL,          -- '' on totals
    account          TEXT NOT NULL,          -- '' on totals
    cost_center      TEXT NOT NULL,          -- '' on the overall total
    class            TEXT,                   -- objects only
    driver           TEXT,
    activity         REAL,                   -- planned activity of the driver (at its lag)
    driver2          TEXT,
    activity2        REAL,
    objects          INTEGER NOT NULL,       -- objects in the line
    budget           REAL,
    low80            REAL,
    high80           REAL,
    low95            REAL,
    high95           REAL,
    se               REAL,                   -- standard error of one period's cost
    df               REAL,                   -- its degrees of freedom (Welch-Satterthwaite on totals)
    warning          TEXT NOT NULL DEFAULT '',
    computed_at      TEXT NOT NULL,
    PRIMARY KEY (plan, period, line, object, cost_center)
);

-- The latest variance report of each closed period (and plan: '' without
-- one): actual cost against the flexible budget at actual activity and,
-- with a plan, against the static budget at planned activity. A variance is
-- actual minus budget: positive is unfavourable (U), negative favourable (F).
CREATE TABLE variance_lines (
    period             TEXT NOT NULL,
    plan               TEXT NOT NULL,        -- '' without a plan
    line               TEXT NOT NULL CHECK (line IN ('object', 'cost_center', 'total')),
    object             TEXT NOT NULL,
    account            TEXT NOT NULL,
    cost_center        TEXT NOT NULL,
    class              TEXT,
    driver             TEXT,
    actual_activity    REAL,
    planned_activity   REAL,
    objects            INTEGER NOT NULL,
    actual             REAL NOT NULL,
    flexible_budget    REAL,
    low95              REAL,
    high95             REAL,
    static_budget      REAL,
    spending_variance  REAL,
    spending_mark      TEXT NOT NULL DEFAULT '' CHECK (spending_mark IN ('', 'F', 'U')),
    activity_variance  REAL,
    activity_mark      TEXT NOT NULL DEFAULT '' CHECK (activity_mark IN ('', 'F', 'U')),
    outside95          INTEGER NOT NULL DEFAULT 0, -- 1: actual outside the flexible budget's 95 % interval
    warning            TEXT NOT NULL DEFAULT '',
    computed_at        TEXT NOT NULL,
    PRIMARY KEY (period, plan, line, object, cost_center)
);

-- For a spreadsheet: the budget lines with the account's name, objects
-- first, then cost-centre totals, then the overall total, per period.
CREATE VIEW flexible_budget AS
SELECT b.plan, b.period, b.line, b.object, b.account,
       COALESCE((SELECT a.name FROM accounts a WHERE a.account = b.account AND a.name <> '' ORDER BY a.source LIMIT 1), '') AS account_name,
       b.cost_center, b.class, b.driver, b.activity, b.driver2, b.activity2, b.objects,
       b.budget, b.low80, b.high80, b.low95, b.high95, b.warning, b.computed_at
FROM budget_lines b
ORDER BY b.plan, b.period, CASE b.line WHEN 'object' THEN 0 WHEN 'cost_center' THEN 1 ELSE 2 END, b.cost_center, b.account;

CREATE VIEW spending_variances AS
SELECT v.period, v.plan, v.line, v.object, v.account,
       COALESCE((SELECT a.name FROM accounts a WHERE a.account = v.account AND a.name <> '' ORDER BY a.source LIMIT 1), '') AS account_name,
       v.cost_center, v.class, v.driver, v.actual_activity, v.planned_activity, v.objects,
       v.actual, v.flexible_budget, v.low95, v.high95, v.spending_variance, v.spending_mark,
       v.static_budget, v.activity_variance, v.activity_mark, v.outside95, v.warning, v.computed_at
FROM variance_lines v
ORDER BY v.period, v.plan, CASE v.line WHEN 'object' THEN 0 WHEN 'cost_center' THEN 1 ELSE 2 END, v.cost_center, v.account;
