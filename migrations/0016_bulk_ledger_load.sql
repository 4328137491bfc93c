-- costdrift store, schema 16: a ledger line's foreign keys are checked when
-- its load commits, not as each line is stored.
--
-- A multi-row INSERT into a table whose foreign keys are checked at once
-- may fail part way, so SQLite keeps a journal of every page the statement
-- changes, to undo it: for a large file, hundreds of megabytes written to a
-- temporary file and most of the system time of the load. Checked at
-- commit, the keys are as binding: a load whose lines name a sync run or a
-- file that does not exist does not commit.
--
-- Only the text of the two constraints changes, not how a row is stored:
-- SQLite's documented way to change constraints in place (sqlite.org,
-- "ALTER TABLE", section "Making Other Kinds Of Table Schema Changes") is
-- to edit the table's definition in sqlite_schema in a transaction, as
-- here; RESET makes this connection read the schema again.
PRAGMA writable_schema = ON;
UPDATE sqlite_schema
SET sql = replace(replace(sql,
    'REFERENCES sync_runs (id)', 'REFERENCES sync_runs (id) DEFERRABLE INITIALLY DEFERRED'),
    'REFERENCES source_files (id)', 'REFERENCES source_files (id) DEFERRABLE INITIALLY DEFERRED')
WHERE type = 'table' AND name = 'gl_lines' AND sql NOT LIKE '%DEFERRABLE%';
PRAGMA writable_schema = RESET;
-- Any change of the schema through SQL counts up its version, which is what
-- tells other connections to read it again; the edit above does not.
CREATE INDEX schema16_version_step ON store_meta (value);
DROP INDEX schema16_version_step;
