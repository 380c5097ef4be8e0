-- Up Migration
-- What the store did with a file's rows (issue 18 item 14): rows_stored counts only rows new to
-- the store; a row repeating a stored (tag, time) with the same value bit for bit and the same
-- quality is a duplicate; one with another value or quality is refused (the first stored value
-- is kept) and quarantined as conflicting-value. NULL for files recorded before this migration.
ALTER TABLE ingested_files
  ADD COLUMN rows_duplicate integer,
  ADD COLUMN rows_conflicting integer;

-- Down Migration
ALTER TABLE ingested_files
  DROP COLUMN rows_duplicate,
  DROP COLUMN rows_conflicting;
