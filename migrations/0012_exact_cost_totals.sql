-- costdrift store, schema 12: cost_series answers whatever the ledger holds.
--
-- Lines stored before sync bounded amounts can add up, in one account, cost
-- centre and period, to more than an integer holds (±9,223,372,036,854,775,807
-- minor units), and SQLite's SUM then fails the whole query with "integer
-- overflow". The lines are now summed in two parts that cannot overflow, the
-- whole billions of minor units and the rest, as the program itself sums them.
-- amount_minor is the exact total, or NULL where it lies beyond an integer;
-- amount, in currency units, is there on every row (from TOTAL, a float that
-- never fails, where amount_minor is NULL).
DROP VIEW cost_series;
CREATE VIEW cost_series AS
WITH parts AS (
    SELECT period, account, cost_center,
           SUM(amount_minor / 1000000000) AS billions,
           SUM(amount_minor % 1000000000) AS rest,
           TOTAL(amount_minor) AS approx
    FROM gl_lines GROUP BY period, account, cost_center
), carried AS (
    -- The rest's whole billions carried over: |rest| < 10^9.
    SELECT period, account, cost_center, approx,
           billions + rest / 1000000000 AS billions, rest % 1000000000 AS rest
    FROM parts
), aligned AS (
    -- Both parts of one sign, so that billions * 10^9 + rest leaves an
    -- integer only when the total does; SQLite then makes it a REAL.
    SELECT period, account, cost_center, approx,
           billions - (billions > 0 AND rest < 0) + (billions < 0 AND rest > 0) AS billions,
           rest + 1000000000 * ((billions > 0 AND rest < 0) - (billions < 0 AND rest > 0)) AS rest
    FROM carried
), cost AS (
    SELECT period, account, cost_center, approx,
           CASE WHEN typeof(billions * 1000000000 + rest) = 'integer' THEN billions * 1000000000 + rest END AS amount_minor
    FROM aligned
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
       COALESCE(c.amount_minor, c.approx) / CAST((SELECT value FROM store_meta WHERE key = 'minor_per_unit') AS REAL) AS amount,
       d.driver,
       COALESCE(own.value, company.value) AS driver_value,
       COALESCE(own.unit, company.unit) AS driver_unit
FROM cost c
LEFT JOIN drivers d ON 1 = 1
LEFT JOIN driver_values own
       ON own.period = c.period AND own.driver = d.driver AND own.cost_center = c.cost_center AND c.cost_center <> ''
LEFT JOIN driver_values company
       ON company.period = c.period AND company.driver = d.driver AND company.cost_center = '';
