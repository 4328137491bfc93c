-- costdrift store, schema 3: step and two-driver models, diagnostics.

-- Step model rows carry their levels; two-driver rows their second driver.
ALTER TABLE fits ADD COLUMN levels TEXT;               -- JSON [{from, to, level, n}] for model = 'step'
ALTER TABLE fits ADD COLUMN driver2 TEXT;              -- model = 'two_driver': the second driver
ALTER TABLE fits ADD COLUMN lag2 INTEGER;
ALTER TABLE fits ADD COLUMN slope2 REAL;
ALTER TABLE fits ADD COLUMN slope2_se REAL;
ALTER TABLE fits ADD COLUMN slope2_p REAL;             -- partial F test of the second driver
ALTER TABLE fits ADD COLUMN vif REAL;                  -- variance inflation of the two drivers
-- Diagnostics, on the fits the behaviour rests on.
ALTER TABLE fits ADD COLUMN durbin_watson REAL;
ALTER TABLE fits ADD COLUMN robust_intercept REAL;     -- Huber M-estimate beside least squares
ALTER TABLE fits ADD COLUMN robust_slope REAL;
ALTER TABLE fits ADD COLUMN outliers TEXT;             -- JSON [{period, cooks_d, studentised}] with Cook's D > 4/n

ALTER TABLE behaviour_history ADD COLUMN driver2 TEXT;
ALTER TABLE behaviour_history ADD COLUMN unit2 TEXT;
ALTER TABLE behaviour_history ADD COLUMN lag2 INTEGER;
ALTER TABLE behaviour_history ADD COLUMN variable_rate2 REAL;
ALTER TABLE behaviour_history ADD COLUMN outliers TEXT;    -- JSON, as in fits
ALTER TABLE behaviour_history ADD COLUMN diagnostics TEXT; -- JSON: Durbin-Watson, robust fit, model comparison

-- What each object's last analysis saw, so an unchanged object need not be
-- fitted again.
CREATE TABLE object_inputs (
    object          TEXT PRIMARY KEY,
    input_hash      TEXT NOT NULL,     -- of the cost and driver series and the settings
    analysis_run_id INTEGER NOT NULL REFERENCES analysis_runs (id)
);

-- The fits of each object's latest analysis: "which accounts does machine
-- hours drive?" is one query on this view.
CREATE VIEW latest_fits AS
SELECT f.*
FROM fits f
JOIN object_inputs o ON o.object = f.object AND o.analysis_run_id = f.analysis_run_id;

DROP VIEW current_behaviour;
CREATE VIEW current_behaviour AS
SELECT object, account, cost_center, class, driver, unit, lag, fixed_per_period, variable_rate,
       driver2, unit2, lag2, variable_rate2,
       r2, n, range_min, range_max, since, until, steps, reason, mean_cost, cv, high_low, outliers, diagnostics,
       last_run_id AS analysis_run_id
FROM behaviour_history
WHERE valid_to_run_at IS NULL;
