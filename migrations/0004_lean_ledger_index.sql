-- costdrift store, schema 4.
-- The (period, account, cost_center) index on gl_lines made every loaded line
-- cost a random insert into a second large index, several times the work of
-- storing the line; the analysis reads the whole ledger once per run and
-- groups it faster with a sort than it gained from the index.
DROP INDEX IF EXISTS gl_lines_period_account;
