-- costdrift store, schema 21: costs posted every few periods.
--
-- A cost posted once a quarter, half-year or year and not in between keeps
-- its cadence with its behaviour: cadence is the number of periods from one
-- posting to the next (3, 6 or 12), cadence_phase the remainder that the
-- posting periods' position in the year (the month, or the period of a
-- 4-4-5 year, 1 to 12) leaves when divided by it. Both are NULL for a cost
-- posted every period. The formula stays per period (fixed_per_period is
-- the posting spread evenly), so one posting is cadence × fixed_per_period.
ALTER TABLE behaviour_history ADD COLUMN cadence INTEGER;
ALTER TABLE behaviour_history ADD COLUMN cadence_phase INTEGER;

-- The current behaviours posted at a cadence, with the amount of one
-- posting beside the amount per period.
CREATE VIEW cadence_behaviour AS
SELECT object, account, cost_center, class, cadence, cadence_phase,
       fixed_per_period * cadence AS per_posting, fixed_per_period AS per_period,
       since, until, reason
FROM behaviour_history
WHERE valid_to_run_at IS NULL AND cadence IS NOT NULL;
