-- costdrift store, schema 1.
-- Money is stored as integer minor units of the functional currency (store_meta).

CREATE TABLE store_meta (
    key   TEXT PRIMARY KEY,
    value TEXT NOT NULL
);

-- One row per source per sync: what was read, stored and rejected.
CREATE TABLE sync_runs (
    id            INTEGER PRIMARY KEY,
    source        TEXT NOT NULL,
    role          TEXT NOT NULL CHECK (role IN ('ledger', 'activity', 'accounts')),
    kind          TEXT NOT NULL,
    started_at    TEXT NOT NULL,               -- RFC 3339, UTC
    finished_at   TEXT,
    status        TEXT NOT NULL CHECK (status IN ('running', 'ok', 'failed')),
    files         INTEGER NOT NULL DEFAULT 0,
    rows_read     INTEGER NOT NULL DEFAULT 0,
    rows_loaded   INTEGER NOT NULL DEFAULT 0,  -- new or changed rows written
    rows_unchanged INTEGER NOT NULL DEFAULT 0, -- rows already stored with the same values
    rows_rejected INTEGER NOT NULL DEFAULT 0,
    error         TEXT
);

CREATE TABLE gl_lines (
    source       TEXT NOT NULL,
    entry_id     TEXT NOT NULL,
    line         INTEGER NOT NULL,
    posted_on    TEXT NOT NULL,                -- YYYY-MM-DD
    period       TEXT NOT NULL,                -- YYYY-MM
    account      TEXT NOT NULL,
    cost_center  TEXT NOT NULL DEFAULT '',     -- '' when the line has none
    amount_minor INTEGER NOT NULL,             -- signed, debit positive
    description  TEXT NOT NULL DEFAULT '',
    sync_run_id  INTEGER NOT NULL REFERENCES sync_runs (id),
    UNIQUE (source, entry_id, line)
);
CREATE INDEX gl_lines_period_account ON gl_lines (period, account, cost_center);

CREATE TABLE activity (
    source      TEXT NOT NULL,
    period      TEXT NOT NULL,
    driver      TEXT NOT NULL,
    cost_center TEXT NOT NULL DEFAULT '',      -- '' for a company-wide series
    value       REAL NOT NULL,
    unit        TEXT NOT NULL DEFAULT '',
    sync_run_id INTEGER NOT NULL REFERENCES sync_runs (id),
    UNIQUE (source, period, driver, cost_center)
);
CREATE INDEX activity_driver_period ON activity (driver, cost_center, period);

CREATE TABLE accounts (
    source        TEXT NOT NULL,
    account       TEXT NOT NULL,
    name          TEXT NOT NULL DEFAULT '',
    type          TEXT NOT NULL DEFAULT '',
    account_group TEXT NOT NULL DEFAULT '',
    sync_run_id   INTEGER NOT NULL REFERENCES sync_runs (id),
    UNIQUE (source, account)
);

CREATE TABLE rejects (
    id          INTEGER PRIMARY KEY,
    sync_run_id INTEGER NOT NULL REFERENCES sync_runs (id),
    source      TEXT NOT NULL,
    location    TEXT NOT NULL,                 -- file:line
    reason      TEXT NOT NULL,
    raw         TEXT NOT NULL                  -- the row as read
);

-- One row per analysis: the window it saw and the settings it used.
CREATE TABLE analysis_runs (
    id           INTEGER PRIMARY KEY,
    started_at   TEXT NOT NULL,
    finished_at  TEXT NOT NULL,
    window_from  TEXT,                         -- first and last period analysed
    window_to    TEXT,
    grain        TEXT NOT NULL,
    objects      INTEGER NOT NULL,
    settings     TEXT NOT NULL                 -- JSON of the analysis settings
);

-- Every candidate model of every cost object in every analysis.
CREATE TABLE fits (
    analysis_run_id  INTEGER NOT NULL REFERENCES analysis_runs (id),
    object           TEXT NOT NULL,
    account          TEXT NOT NULL,
    cost_center      TEXT NOT NULL,
    driver           TEXT NOT NULL,            -- '' for the constant model
    lag              INTEGER NOT NULL,
    model            TEXT NOT NULL,            -- constant | linear | proportional | step
    n                INTEGER NOT NULL,
    intercept        REAL,
    intercept_se     REAL,
    intercept_p      REAL,
    slope            REAL,
    slope_se         REAL,
    slope_t          REAL,
    slope_p          REAL,
    slope_adjusted_p REAL,                     -- after the correction for the candidates tried
    r2               REAL,
    residual_se      REAL,
    press            REAL,
    aicc             REAL,
    range_min        REAL,
    range_max        REAL,
    significant      INTEGER NOT NULL,         -- 1: positive slope significant after correction
    implausible      INTEGER NOT NULL,         -- 1: significant negative slope
    chosen           INTEGER NOT NULL,         -- 1: the behaviour rests on this fit
    rank             INTEGER,                  -- by PRESS among significant plausible fits
    PRIMARY KEY (analysis_run_id, object, driver, lag, model)
);

-- Each object's classified behaviour. A row is open (valid_to NULL) while
-- analyses keep finding the same class, driver and lag; a change closes it.
CREATE TABLE behaviour_history (
    id                INTEGER PRIMARY KEY,
    object            TEXT NOT NULL,
    account           TEXT NOT NULL,
    cost_center       TEXT NOT NULL,
    class             TEXT NOT NULL CHECK (class IN ('fixed', 'variable', 'mixed', 'step', 'unexplained', 'insufficient_data')),
    driver            TEXT,                    -- NULL for fixed, unexplained, insufficient data
    unit              TEXT,
    lag               INTEGER,
    fixed_per_period  REAL,                    -- currency units
    variable_rate     REAL,                    -- currency units per unit of driver
    r2                REAL,
    n                 INTEGER NOT NULL,
    range_min         REAL,
    range_max         REAL,
    since             TEXT,                    -- first period of this behaviour
    until             TEXT,                    -- last period the latest analysis saw
    steps             TEXT,                    -- JSON [{from, to, level}] for step costs
    reason            TEXT NOT NULL,
    mean_cost         REAL,
    cv                REAL,
    high_low          TEXT,                    -- JSON of the high-low estimate
    first_run_id      INTEGER NOT NULL REFERENCES analysis_runs (id),
    last_run_id       INTEGER NOT NULL REFERENCES analysis_runs (id),
    valid_from_run_at TEXT NOT NULL,
    valid_to_run_at   TEXT                     -- NULL while current
);
CREATE UNIQUE INDEX behaviour_history_current ON behaviour_history (object) WHERE valid_to_run_at IS NULL;

CREATE TABLE alerts (
    id          INTEGER PRIMARY KEY,
    kind        TEXT NOT NULL,
    object      TEXT NOT NULL,
    severity    TEXT NOT NULL CHECK (severity IN ('info', 'warning', 'critical')),
    status      TEXT NOT NULL CHECK (status IN ('open', 'acknowledged', 'resolved')),
    period      TEXT,
    message     TEXT NOT NULL,
    fingerprint TEXT NOT NULL UNIQUE,
    created_at  TEXT NOT NULL,
    updated_at  TEXT NOT NULL
);

-- The behaviour each object has now.
CREATE VIEW current_behaviour AS
SELECT object, account, cost_center, class, driver, unit, lag, fixed_per_period, variable_rate,
       r2, n, range_min, range_max, since, until, steps, reason, mean_cost, cv, high_low,
       last_run_id AS analysis_run_id
FROM behaviour_history
WHERE valid_to_run_at IS NULL;

-- Cost per account and cost centre per period, in currency units, beside
-- each driver's value for that period (the cost centre's own series when it
-- has one, else the company-wide series of the same name).
CREATE VIEW cost_series AS
WITH cost AS (
    SELECT period, account, cost_center, SUM(amount_minor) AS amount_minor
    FROM gl_lines GROUP BY period, account, cost_center
), driver_values AS (
    SELECT period, driver, cost_center, SUM(value) AS value, MAX(unit) AS unit
    FROM activity GROUP BY period, driver, cost_center
), drivers AS (
    SELECT DISTINCT driver FROM activity
)
SELECT c.period,
       c.account,
       c.cost_center,
       c.amount_minor,
       c.amount_minor / CAST((SELECT value FROM store_meta WHERE key = 'minor_per_unit') AS REAL) AS amount,
       d.driver,
       COALESCE(own.value, company.value) AS driver_value,
       COALESCE(own.unit, company.unit) AS driver_unit
FROM cost c
CROSS JOIN drivers d
LEFT JOIN driver_values own
       ON own.period = c.period AND own.driver = d.driver AND own.cost_center = c.cost_center AND c.cost_center <> ''
LEFT JOIN driver_values company
       ON company.period = c.period AND company.driver = d.driver AND company.cost_center = '';

CREATE VIEW open_alerts AS
SELECT id, kind, object, severity, status, period, message, created_at, updated_at
FROM alerts
WHERE status = 'open';
