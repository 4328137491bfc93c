-- costdrift store, schema 22: the keys from an analysis's rows to their
-- analysis run are checked when the analysis commits, not as each row is
-- written.
--
-- A statement that may fail part way after changing rows makes SQLite
-- journal every page it changes, to undo it alone, and past 64 KiB that
-- journal goes to a temporary file that serves every later statement of
-- the transaction. An analysis stores its fits 25 to an INSERT, and
-- updates each object's behaviour and input hash, which move a key to the
-- run: a statement that changes a key checked at once may fail. A nightly
-- analysis of 10,000 objects wrote some 700 MB to that file. Checked at
-- commit, the keys are as binding: an analysis whose rows name a run that
-- does not exist does not commit. (Its statements fail without undoing
-- their earlier rows, OR FAIL, which needs no journal either: the analysis
-- is then rolled back whole.)
--
-- Only the text of the constraints changes, not how a row is stored, as in
-- schema 16: SQLite's documented way to change constraints in place
-- (sqlite.org, "ALTER TABLE", section "Making Other Kinds Of Table Schema
-- Changes") is to edit the tables' definitions in sqlite_schema in a
-- transaction; RESET makes this connection read the schema again.
PRAGMA writable_schema = ON;
UPDATE sqlite_schema
SET sql = replace(sql, 'REFERENCES analysis_runs (id)', 'REFERENCES analysis_runs (id) DEFERRABLE INITIALLY DEFERRED')
WHERE type = 'table' AND name IN ('fits', 'object_inputs', 'behaviour_history') AND sql NOT LIKE '%DEFERRABLE%';
PRAGMA writable_schema = RESET;
-- Any change of the schema through SQL counts up its version, which is what
-- tells other connections to read it again; the edit above does not.
CREATE INDEX schema22_version_step ON store_meta (value);
DROP INDEX schema22_version_step;
