-- costdrift store, schema 11: restated rows remember the version they replaced.

-- When a file of a source restates a key that another file of the same
-- source loaded (an entry moved to a newer export), the newer file's row is
-- stored and the older file's version waits here. Forgetting the newer file,
-- or a new version of it without the key, gives the key back to the file
-- that still holds it, so a line is never lost while a present file carries
-- it. source_file_id is the file holding this version; displaced_by the file
-- whose version is stored now.
CREATE TABLE displaced_gl_lines (
    source         TEXT NOT NULL,
    entry_id       TEXT NOT NULL,
    line           INTEGER NOT NULL,
    posted_on      TEXT NOT NULL,
    period         TEXT NOT NULL,
    account        TEXT NOT NULL,
    cost_center    TEXT NOT NULL,
    amount_minor   INTEGER NOT NULL,
    description    TEXT NOT NULL,
    sync_run_id    INTEGER NOT NULL REFERENCES sync_runs (id),
    source_file_id INTEGER NOT NULL REFERENCES source_files (id),
    displaced_by   INTEGER NOT NULL REFERENCES source_files (id),
    UNIQUE (source, entry_id, line, source_file_id)
);
CREATE INDEX displaced_gl_lines_by ON displaced_gl_lines (displaced_by);
CREATE INDEX displaced_gl_lines_file ON displaced_gl_lines (source_file_id);

CREATE TABLE displaced_activity (
    source         TEXT NOT NULL,
    period         TEXT NOT NULL,
    driver         TEXT NOT NULL,
    cost_center    TEXT NOT NULL,
    value          REAL NOT NULL,
    unit           TEXT NOT NULL,
    sync_run_id    INTEGER NOT NULL REFERENCES sync_runs (id),
    source_file_id INTEGER NOT NULL REFERENCES source_files (id),
    displaced_by   INTEGER NOT NULL REFERENCES source_files (id),
    UNIQUE (source, period, driver, cost_center, source_file_id)
);
CREATE INDEX displaced_activity_by ON displaced_activity (displaced_by);
CREATE INDEX displaced_activity_file ON displaced_activity (source_file_id);

CREATE TABLE displaced_accounts (
    source         TEXT NOT NULL,
    account        TEXT NOT NULL,
    name           TEXT NOT NULL,
    type           TEXT NOT NULL,
    account_group  TEXT NOT NULL,
    sync_run_id    INTEGER NOT NULL REFERENCES sync_runs (id),
    source_file_id INTEGER NOT NULL REFERENCES source_files (id),
    displaced_by   INTEGER NOT NULL REFERENCES source_files (id),
    UNIQUE (source, account, source_file_id)
);
CREATE INDEX displaced_accounts_by ON displaced_accounts (displaced_by);
CREATE INDEX displaced_accounts_file ON displaced_accounts (source_file_id);

-- A file's row count is what it holds now: rows another file took over
-- before this schema are no longer counted as the older file's.
UPDATE source_files SET rows =
    (SELECT COUNT(*) FROM gl_lines WHERE source_file_id = source_files.id) +
    (SELECT COUNT(*) FROM activity WHERE source_file_id = source_files.id) +
    (SELECT COUNT(*) FROM accounts WHERE source_file_id = source_files.id);
