-- costdrift store, schema 15: views that mean what they say.
--
-- cost_series held one row per account, cost centre, period and driver: a
-- SUM(amount) over it counted each cost once per driver, a period without
-- postings had no row (the analysis counts it as zero when the ledger has
-- postings in it, README "The method"), and accounts outside the analysis
-- were there. It now holds one row per cost object and period as the latest
-- analysis sees them; the driver values have views of their own.
--
-- flexible_budget and spending_variances gave the formulas' unrounded
-- floats; they now give money with the currency's decimals. A variance
-- report is kept under the name it was saved with (variance_lines.name).

-- Each cost object in scope: the objects analysed with the account scope
-- and grain of the latest analysis (a view cannot read the config, and the
-- analysis is what chose them). An object analysed under another scope or
-- grain, before the settings changed, is left out. Before the first
-- analysis: every account and cost centre of the ledger.
CREATE VIEW scope_objects AS
WITH latest AS (
    SELECT grain, json_extract(settings, '$.accounts') AS accounts
    FROM analysis_runs ORDER BY id DESC LIMIT 1
)
SELECT b.object, b.account, b.cost_center, l.grain
FROM behaviour_history b
JOIN analysis_runs r ON r.id = b.last_run_id
JOIN latest l ON l.grain = r.grain AND l.accounts IS json_extract(r.settings, '$.accounts')
WHERE b.valid_to_run_at IS NULL
UNION ALL
SELECT DISTINCT account || CASE WHEN cost_center = '' THEN '' ELSE '/' || cost_center END,
       account, cost_center, 'account_cost_center'
FROM gl_lines
WHERE NOT EXISTS (SELECT 1 FROM analysis_runs);

DROP VIEW cost_series;
-- The lines are summed in two parts that cannot overflow, as schema 12 does
-- (see 0012_exact_cost_totals.sql): amount_minor is the exact total, or
-- NULL where it lies beyond an integer; amount is there on every row.
CREATE VIEW cost_series AS
WITH parts AS (
    SELECT period, account, cost_center,
           SUM(amount_minor / 1000000000) AS billions,
           SUM(amount_minor % 1000000000) AS rest,
           TOTAL(amount_minor) AS approx
    FROM gl_lines GROUP BY period, account, cost_center
), object_parts AS (
    -- At account grain an object is the account over all its cost centres.
    SELECT o.object, p.period, SUM(p.billions) AS billions, SUM(p.rest) AS rest, TOTAL(p.approx) AS approx
    FROM scope_objects o
    JOIN parts p ON p.account = o.account AND (o.grain = 'account' OR p.cost_center = o.cost_center)
    GROUP BY o.object, p.period
), carried AS (
    SELECT object, period, approx,
           billions + rest / 1000000000 AS billions, rest % 1000000000 AS rest
    FROM object_parts
), aligned AS (
    SELECT object, period, approx,
           billions - (billions > 0 AND rest < 0) + (billions < 0 AND rest > 0) AS billions,
           rest + 1000000000 * ((billions > 0 AND rest < 0) - (billions < 0 AND rest > 0)) AS rest
    FROM carried
), cost AS (
    SELECT object, period, approx,
           CASE WHEN typeof(billions * 1000000000 + rest) = 'integer' THEN billions * 1000000000 + rest END AS amount_minor
    FROM aligned
), ledger_periods AS (
    -- A period in which the ledger has no postings at all is unknown to the
    -- analysis, not zero: it has no row.
    SELECT DISTINCT period FROM gl_lines
)
SELECT lp.period,
       o.account,
       o.cost_center,
       CASE WHEN c.object IS NULL THEN 0 ELSE c.amount_minor END AS amount_minor,
       COALESCE(c.amount_minor, c.approx, 0) / CAST((SELECT value FROM store_meta WHERE key = 'minor_per_unit') AS REAL) AS amount,
       o.object
FROM scope_objects o
CROSS JOIN ledger_periods lp
LEFT JOIN cost c ON c.object = o.object AND c.period = lp.period;

-- Each driver's value per period and cost centre ('' company-wide), summed
-- over the sources that report it.
CREATE VIEW driver_series AS
SELECT period, driver, cost_center, SUM(value) AS value, MAX(unit) AS unit
FROM activity GROUP BY period, driver, cost_center;

-- cost_series beside each driver's value in the same period (the cost
-- centre's own series, else the company-wide one): one row per object,
-- period and driver, so a sum over it counts each cost once per driver;
-- filter on one driver.
CREATE VIEW cost_with_drivers AS
SELECT c.period, c.account, c.cost_center, c.amount_minor, c.amount, c.object,
       d.driver,
       COALESCE(own.value, company.value) AS driver_value,
       COALESCE(own.unit, company.unit) AS driver_unit
FROM cost_series c
CROSS JOIN (SELECT DISTINCT driver FROM activity) d
LEFT JOIN driver_series own
       ON own.period = c.period AND own.driver = d.driver AND own.cost_center = c.cost_center AND c.cost_center <> ''
LEFT JOIN driver_series company
       ON company.period = c.period AND company.driver = d.driver AND company.cost_center = '';

-- The budget and variance views give money as the rest of the store does:
-- in currency units with the currency's decimals (store_meta
-- minor_per_unit), not the unrounded floats the formulas give; the tables
-- budget_lines and variance_lines keep those. SQLite's round() rounds half
-- away from zero. A variance is the difference of the rounded figures, so
-- that spending + activity variance = actual - static budget to the cent
-- on every line, and its mark is the mark of that difference.
DROP VIEW flexible_budget;
CREATE VIEW flexible_budget AS
WITH m AS (SELECT CAST(value AS REAL) AS minor FROM store_meta WHERE key = 'minor_per_unit')
SELECT b.plan, b.period, b.line, b.object, b.account,
       COALESCE((SELECT a.name FROM accounts a WHERE a.account = b.account AND a.name <> '' ORDER BY a.source LIMIT 1), '') AS account_name,
       b.cost_center, b.class, b.driver, b.activity, b.driver2, b.activity2, b.objects,
       round(b.budget * m.minor) / m.minor AS budget,
       round(b.low80 * m.minor) / m.minor AS low80,
       round(b.high80 * m.minor) / m.minor AS high80,
       round(b.low95 * m.minor) / m.minor AS low95,
       round(b.high95 * m.minor) / m.minor AS high95,
       b.warning, b.computed_at
FROM budget_lines b, m
ORDER BY b.plan, b.period, CASE b.line WHEN 'object' THEN 0 WHEN 'cost_center' THEN 1 ELSE 2 END, b.cost_center, b.account;

DROP VIEW spending_variances;

-- A variance report is kept only when saved under a name (`costdrift
-- variance --save NAME`), and a report saved again under the same name
-- replaces it: the name joins the key. A report kept before is named after
-- its period and plan, as it was found: "2026-06", or "2026-06 plan-2026-q2".
CREATE TABLE variance_lines_named (
    name               TEXT NOT NULL,        -- the name it was saved under
    period             TEXT NOT NULL,
    plan               TEXT NOT NULL,        -- the plan file's name, '' without one
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
    outside95          INTEGER NOT NULL DEFAULT 0,
    warning            TEXT NOT NULL DEFAULT '',
    computed_at        TEXT NOT NULL,
    PRIMARY KEY (name, line, object, cost_center)
);
INSERT INTO variance_lines_named
SELECT CASE WHEN plan = '' THEN period ELSE period || ' ' || plan END,
       period, plan, line, object, account, cost_center, class, driver, actual_activity, planned_activity, objects,
       actual, flexible_budget, low95, high95, static_budget, spending_variance, spending_mark,
       activity_variance, activity_mark, outside95, warning, computed_at
FROM variance_lines;
DROP TABLE variance_lines;
ALTER TABLE variance_lines_named RENAME TO variance_lines;

CREATE VIEW spending_variances AS
WITH m AS (SELECT CAST(value AS REAL) AS minor FROM store_meta WHERE key = 'minor_per_unit'),
scaled AS (
    SELECT v.*, m.minor,
           round(v.actual * m.minor) AS actual_m,
           round(v.flexible_budget * m.minor) AS flexible_m,
           round(v.static_budget * m.minor) AS static_m
    FROM variance_lines v, m
), figures AS (
    SELECT scaled.*, actual_m - flexible_m AS spending_m, flexible_m - static_m AS activity_m
    FROM scaled
)
SELECT v.period, v.plan, v.line, v.object, v.account,
       COALESCE((SELECT a.name FROM accounts a WHERE a.account = v.account AND a.name <> '' ORDER BY a.source LIMIT 1), '') AS account_name,
       v.cost_center, v.class, v.driver, v.actual_activity, v.planned_activity, v.objects,
       v.actual_m / v.minor AS actual,
       v.flexible_m / v.minor AS flexible_budget,
       round(v.low95 * v.minor) / v.minor AS low95,
       round(v.high95 * v.minor) / v.minor AS high95,
       v.spending_m / v.minor AS spending_variance,
       CASE WHEN v.spending_m > 0 THEN 'U' WHEN v.spending_m < 0 THEN 'F' ELSE '' END AS spending_mark,
       v.static_m / v.minor AS static_budget,
       v.activity_m / v.minor AS activity_variance,
       CASE WHEN v.activity_m > 0 THEN 'U' WHEN v.activity_m < 0 THEN 'F' ELSE '' END AS activity_mark,
       v.outside95, v.warning, v.computed_at, v.name
FROM figures v
ORDER BY v.period, v.plan, v.name, CASE v.line WHEN 'object' THEN 0 WHEN 'cost_center' THEN 1 ELSE 2 END, v.cost_center, v.account;
