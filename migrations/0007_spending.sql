-- costdrift store, schema 7: the spending check of the newest periods.
ALTER TABLE behaviour_history ADD COLUMN spending TEXT; -- JSON [{period, activity, actual, expected, low95, high95}]

DROP VIEW current_behaviour;
CREATE VIEW current_behaviour AS
SELECT object, account, cost_center, class, driver, unit, lag, fixed_per_period, variable_rate,
       driver2, unit2, lag2, variable_rate2,
       r2, n, range_min, range_max, since, until, steps, reason, mean_cost, cv, high_low, outliers, diagnostics,
       last_run_id AS analysis_run_id, break, pending, spending
FROM behaviour_history
WHERE valid_to_run_at IS NULL;
