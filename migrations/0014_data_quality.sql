-- costdrift store, schema 14: what share of each file's rows was rejected,
-- per period, so that analysis can hold back periods whose data are partial.

-- One row per loaded file and period: the rows the file stored for the
-- period and the rows it rejected. A rejected row's period is not known
-- (its date may be what was wrong), so a file's rejects are counted against
-- the newest period it stored rows for, or against period '' when it
-- stored none: a file rejected whole leaves its source incomplete as a
-- whole. Rows are replaced when the file is read again and removed when it
-- is forgotten. A database source (a query) has one set of rows, with
-- source_file_id NULL: a full refresh replaces them all, a watermark read
-- the periods it stored rows in.
CREATE TABLE source_periods (
    source_file_id INTEGER REFERENCES source_files (id), -- NULL for a database source's query
    source         TEXT NOT NULL,
    period         TEXT NOT NULL,                 -- '' = unknown: no row of the file was stored
    rows_stored    INTEGER NOT NULL,
    rows_rejected  INTEGER NOT NULL,              -- but rows repeating an earlier row exactly: nothing of them is missing
    reason         TEXT NOT NULL DEFAULT '',      -- the file's most frequent reject reason, one example of it
    sync_run_id    INTEGER NOT NULL REFERENCES sync_runs (id)
);
CREATE UNIQUE INDEX source_periods_key ON source_periods (source, IFNULL(source_file_id, 0), period);
CREATE INDEX source_periods_file ON source_periods (source_file_id);
