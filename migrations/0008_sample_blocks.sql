-- Up Migration
-- Compressed sample blocks (issue 16): closed ranges of raw samples of one tag, packed by the
-- pack job (packages/store/src/blocks/pack.ts) into one row per tag and UTC day (or per
-- sample cap), lossless (packages/codec: delta-of-delta times, XOR values after Pelkonen et
-- al., "Gorilla", VLDB 2015, run-length qualities). A key (tag_id, time) lives in the hot
-- `samples` table or in exactly one block, never both: the pack job and the sample writer
-- decide under the same per-tag advisory locks (TAG_LOCK_CLASS, rollups.ts).
-- The distribution key (tag_id) comes first and there are no foreign keys, as for samples,
-- so the table can be distributed by tag (Citus) as it is.
CREATE TABLE sample_blocks (
  tag_id integer NOT NULL,
  first_time timestamptz NOT NULL,
  last_time timestamptz NOT NULL,
  sample_count integer NOT NULL CHECK (sample_count > 0),
  -- Over the block's finite values (NULL when it holds none), so aggregates need no decode.
  min_value double precision,
  max_value double precision,
  sum_value double precision,
  payload bytea NOT NULL, -- encodeBlock output, its first byte the format version
  PRIMARY KEY (tag_id, first_time),
  CHECK (last_time >= first_time)
);
-- The payload is compressed already: pglz would spend time to gain nothing. EXTERNAL keeps
-- large payloads out of line (TOAST) without compressing them.
ALTER TABLE sample_blocks ALTER COLUMN payload SET STORAGE EXTERNAL;

-- Down Migration
DROP TABLE sample_blocks;
