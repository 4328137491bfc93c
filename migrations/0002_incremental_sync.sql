-- costdrift store, schema 2: incremental file sync.

-- Every file a source has loaded, with the fingerprint that tells whether it
-- changed. A changed file replaces exactly the rows it loaded before.
CREATE TABLE source_files (
    id          INTEGER PRIMARY KEY,
    source      TEXT NOT NULL,
    path        TEXT NOT NULL,                 -- absolute path as resolved at sync time
    size        INTEGER NOT NULL,
    sha256      TEXT NOT NULL,
    rows        INTEGER NOT NULL,              -- rows stored from it
    loaded_at   TEXT NOT NULL,
    sync_run_id INTEGER NOT NULL REFERENCES sync_runs (id),
    UNIQUE (source, path)
);

-- Which file a row came from; NULL for rows from a database query.
ALTER TABLE gl_lines ADD COLUMN source_file_id INTEGER REFERENCES source_files (id);
ALTER TABLE activity ADD COLUMN source_file_id INTEGER REFERENCES source_files (id);
ALTER TABLE accounts ADD COLUMN source_file_id INTEGER REFERENCES source_files (id);
CREATE INDEX gl_lines_file ON gl_lines (source_file_id);
CREATE INDEX activity_file ON activity (source_file_id);
CREATE INDEX accounts_file ON accounts (source_file_id);

-- More of what a sync did, per source.
ALTER TABLE sync_runs ADD COLUMN files_skipped INTEGER NOT NULL DEFAULT 0;  -- unchanged since the last sync
ALTER TABLE sync_runs ADD COLUMN rows_replaced INTEGER NOT NULL DEFAULT 0;  -- removed because their file changed
ALTER TABLE sync_runs ADD COLUMN reasons TEXT;                              -- JSON: reject reason -> count
ALTER TABLE sync_runs ADD COLUMN warnings TEXT;                             -- e.g. unbalanced entries
ALTER TABLE sync_runs ADD COLUMN duration_ms INTEGER;

-- The newest watermark value a SQL source in watermark mode has read.
CREATE TABLE source_watermarks (
    source     TEXT PRIMARY KEY,
    value      TEXT NOT NULL,
    updated_at TEXT NOT NULL
);

-- cost_series lists cost rows even when no activity has been loaded yet.
DROP VIEW cost_series;
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
LEFT JOIN drivers d ON 1 = 1
LEFT JOIN driver_values own
       ON own.period = c.period AND own.driver = d.driver AND own.cost_center = c.cost_center AND c.cost_center <> ''
LEFT JOIN driver_values company
       ON company.period = c.period AND company.driver = d.driver AND company.cost_center = '';
