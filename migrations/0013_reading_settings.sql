-- costdrift store, schema 13: a file is read again when the settings it is
-- read with change.
--
-- reading_settings holds, as canonical JSON, the source's keys that shape
-- what the file yields (columns, date_format, decimal_comma, ...) when it
-- was last read. NULL, as for every file loaded before this schema, means
-- unknown: the file is not read again for it, and the next sync records the
-- settings in force.
ALTER TABLE source_files ADD COLUMN reading_settings TEXT;

-- The same for a database source read by watermark: a changed query or
-- mapping reads the whole source again once.
ALTER TABLE source_watermarks ADD COLUMN reading_settings TEXT;
