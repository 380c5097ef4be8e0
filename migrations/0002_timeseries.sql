-- Up Migration
-- Time-series tables, partitioned by time with native RANGE partitions.
--
-- Partitions are created ahead by ensurePartitions (packages/store/src/partitions.ts),
-- called by the writers before each batch and on start; there is NO default partition:
-- a row for a month without a partition fails loudly instead of parking in a default that
-- would later block creating that month's partition (PostgreSQL must then move the rows)
-- and that retention could never drop by time.
--
-- Ready for Citus: every primary key leads with the distribution key (tag_id or
-- machine_id) then time, and nothing holds a foreign key into these tables (nor do they
-- hold one out, so COPY does no lookups).

-- Raw samples as received, in the tag's own unit; time in UTC.
CREATE TABLE samples (
  tag_id integer NOT NULL,
  time timestamptz NOT NULL,
  value double precision NOT NULL,
  -- Quality code as received, OPC DA style (bits 7-6: 11 good, 01 uncertain, 00 bad):
  -- 192 = good, 64 = uncertain, 0 = bad, as services/ingest stores them; substatus and
  -- limit bits are kept. See packages/store/src/quality.ts.
  quality smallint NOT NULL DEFAULT 192,
  PRIMARY KEY (tag_id, time)
) PARTITION BY RANGE (time);

-- Rollups kept by the sample writer in each batch's transaction (the batch's new rows
-- merged into their buckets, never by a per-row trigger; rebuildRollups recomputes a range). sum and count give the mean; min and max keep
-- spikes visible in any downsampled trend; last_value/last_time the value at bucket end.
CREATE TABLE samples_1m (
  tag_id integer NOT NULL,
  bucket timestamptz NOT NULL,
  min double precision NOT NULL,
  max double precision NOT NULL,
  sum double precision NOT NULL,
  count integer NOT NULL,
  last_value double precision NOT NULL,
  last_time timestamptz NOT NULL,
  PRIMARY KEY (tag_id, bucket)
) PARTITION BY RANGE (bucket);

CREATE TABLE samples_1h (
  tag_id integer NOT NULL,
  bucket timestamptz NOT NULL,
  min double precision NOT NULL,
  max double precision NOT NULL,
  sum double precision NOT NULL,
  count integer NOT NULL,
  last_value double precision NOT NULL,
  last_time timestamptz NOT NULL,
  PRIMARY KEY (tag_id, bucket)
) PARTITION BY RANGE (bucket);

-- Computed results per machine and time (one row per evaluation window end).
-- State points in SI: p [Pa], T [K], h [J/kg], s [J/(kg K)]; "out_s" is the isentropic
-- outlet state at p_out and s_in. Each u_* is the standard uncertainty (GUM) of its figure.
CREATE TABLE results (
  machine_id integer NOT NULL,
  time timestamptz NOT NULL,
  p_in double precision,
  t_in double precision,
  h_in double precision,
  s_in double precision,
  p_out double precision,
  t_out double precision,
  h_out double precision,
  s_out double precision,
  t_out_s double precision,
  h_out_s double precision,
  mass_flow double precision, -- [kg/s]
  efficiency double precision, -- isentropic, fraction 0..1
  u_efficiency double precision,
  polytropic_efficiency double precision,
  u_polytropic_efficiency double precision,
  specific_work double precision, -- [J/kg]
  u_specific_work double precision,
  power double precision, -- [W]
  u_power double precision,
  entropy_generation double precision, -- s_out - s_in [J/(kg K)]
  u_entropy_generation double precision,
  -- Operating point value for the baseline (load [W], mass flow [kg/s] or pressure ratio [-]).
  operating_point double precision,
  steady boolean NOT NULL DEFAULT false,
  -- Data-quality and state flags, e.g. {'not-steady','tag-stale:ST1.PI-100','wet-exhaust'}.
  flags text[] NOT NULL DEFAULT '{}',
  valid boolean NOT NULL DEFAULT false,
  computed_at timestamptz NOT NULL DEFAULT now(),
  PRIMARY KEY (machine_id, time)
) PARTITION BY RANGE (time);

-- Per-tag last stored time, kept by the sample writer; the cheap "is this batch new?"
-- check of the fast COPY path and a quick "last value seen" for the fleet page.
CREATE TABLE tag_last (
  tag_id integer PRIMARY KEY,
  time timestamptz NOT NULL,
  value double precision NOT NULL
);
