-- costdrift store, schema 19: the current behaviours' list columns, narrow.
--
-- The web view lists, counts, filters, sorts and groups the current
-- behaviour of every object (by cost centre, account, class, since, R² and
-- mean cost). Read from the table, each of those rows carries its evidence
-- as JSON, about a kilobyte, so a list of 100,000 objects read a hundred
-- megabytes to show fifty rows. This partial index holds the open rows'
-- list columns alone, in the list's default order, so that those queries
-- read it instead of the table. It carries valid_to_run_at too (always
-- NULL in it): SQLite reads an index alone only when it holds every column
-- the query names, its own condition's included.
CREATE INDEX behaviour_current_list ON behaviour_history (account, cost_center, class, since, r2, mean_cost, object, valid_to_run_at)
    WHERE valid_to_run_at IS NULL;
