-- costdrift store, schema 6: behaviour history dated by period.

-- The periods a behaviour held: from its first period (a break's, or the
-- window's) to the last before the next behaviour took over; NULL while it
-- holds. A break found by the analysis, and a change of class or driver
-- waiting for a second analysis to confirm it, are kept with the row.
ALTER TABLE behaviour_history ADD COLUMN valid_from_period TEXT;
ALTER TABLE behaviour_history ADD COLUMN valid_to_period TEXT;
ALTER TABLE behaviour_history ADD COLUMN break TEXT;    -- JSON: period, test, statistic, p, formula before and after
ALTER TABLE behaviour_history ADD COLUMN pending TEXT;  -- JSON: the class, driver and lag seen once, awaiting confirmation
UPDATE behaviour_history SET valid_from_period = since;

-- Each object's behaviour period by period: "what was the formula of
-- 6110/PAINT in 2025-06?" is
--   SELECT * FROM behaviour_periods WHERE object = '6110/PAINT'
--     AND valid_from_period <= '2025-06' AND (valid_to_period IS NULL OR valid_to_period >= '2025-06');
CREATE VIEW behaviour_periods AS
SELECT object, account, cost_center, valid_from_period, valid_to_period, class, driver, unit, lag,
       fixed_per_period, variable_rate, driver2, variable_rate2, steps, r2, n, reason, break
FROM behaviour_history
WHERE valid_from_period IS NOT NULL;

DROP VIEW current_behaviour;
CREATE VIEW current_behaviour AS
SELECT object, account, cost_center, class, driver, unit, lag, fixed_per_period, variable_rate,
       driver2, unit2, lag2, variable_rate2,
       r2, n, range_min, range_max, since, until, steps, reason, mean_cost, cv, high_low, outliers, diagnostics,
       last_run_id AS analysis_run_id, break, pending
FROM behaviour_history
WHERE valid_to_run_at IS NULL;
