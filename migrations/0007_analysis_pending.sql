-- Up Migration
-- Ranges of results waiting for the analysis job, in place of the partial index on results
-- (results_analysis_pending_idx, 0004): every row the compute job wrote passed through that index,
-- which cost about a quarter of the database's time to COPY result rows (measured: 403,200 rows
-- in 1.38-1.44 s with it, 0.97-1.06 s without). A writer of results now adds the range it wrote
-- here, in the same statement or transaction as the rows; the analysis job reads a machine's
-- ranges, derives the drift of the rows in them that are pending (analyzed_at IS NULL OR
-- analyzed_at <> computed_at, as before) and deletes the ranges it has read. A range written
-- while the job runs stays for its next pass.
CREATE TABLE analysis_pending (
  id bigserial PRIMARY KEY,
  machine_id integer NOT NULL, -- machines.id (no foreign key, as results has none: see 0002)
  from_time timestamptz NOT NULL, -- inclusive
  to_time timestamptz NOT NULL, -- exclusive
  queued_at timestamptz NOT NULL DEFAULT now(),
  CHECK (to_time > from_time)
);
CREATE INDEX analysis_pending_machine_idx ON analysis_pending (machine_id);

-- Rows pending now stay pending.
INSERT INTO analysis_pending (machine_id, from_time, to_time)
SELECT machine_id, min(time), max(time) + interval '1 millisecond'
  FROM results
 WHERE analyzed_at IS NULL OR analyzed_at <> computed_at
 GROUP BY machine_id;

DROP INDEX results_analysis_pending_idx;

-- Down Migration
CREATE INDEX results_analysis_pending_idx ON results (machine_id, time)
  WHERE analyzed_at IS NULL OR analyzed_at <> computed_at;
DROP TABLE analysis_pending;
