-- Up Migration
-- Instrument findings of the jobs (services/jobs/src/instrument): a gauge/absolute pressure
-- mix-up found as a lasting step of one ambient pressure in a pressure tag. One row per step,
-- kept after the step has left the detector's trailing window, so the results from it on stay
-- flagged (`fault:gauge-absolute:<role>`, valid = false) until a later step reverts it.
-- The instrument alert the alert job raises on those flags names the machine and tag_id; the
-- evidence of the mix-up is this row (same machine_id and tag_id, at <= the alert's window).
-- Pressures are absolute as configured [Pa]; shift_ambients = shift_pa / ambient_pa [-].
CREATE TABLE instrument_findings (
  id bigint GENERATED ALWAYS AS IDENTITY PRIMARY KEY,
  machine_id integer NOT NULL REFERENCES machines (id),
  -- The tag in the role when the step was found (NULL if it has gone since).
  tag_id integer REFERENCES tags (id),
  role text NOT NULL CHECK (role IN ('inletPressure', 'outletPressure')),
  kind text NOT NULL CHECK (kind IN ('gauge-absolute')),
  -- First result at the new level; ended_at: first result after a reverting step (NULL = standing).
  at timestamptz NOT NULL,
  ended_at timestamptz,
  -- standing: flagged from `at` on; reverted: flagged over [at, ended_at); dismissed: the machine
  -- cross-check found the temperatures followed (a real process change), nothing flagged.
  status text NOT NULL CHECK (status IN ('standing', 'reverted', 'dismissed')),
  direction text NOT NULL CHECK (direction IN ('reads-high', 'reads-low')),
  likely_cause text NOT NULL,
  shift_pa double precision NOT NULL,
  shift_ambients double precision NOT NULL,
  level_before_pa double precision NOT NULL,
  level_after_pa double precision NOT NULL,
  ambient_pa double precision NOT NULL,
  -- Machine cross-check (pressureRatioConsistency): 'mix-up', 'unexplained', 'consistent', or
  -- 'not-checked' (pumps, fans, too few points); cross_check_detail holds its figures or reason.
  cross_check text NOT NULL CHECK (cross_check IN ('mix-up', 'unexplained', 'consistent', 'not-checked')),
  cross_check_detail jsonb NOT NULL DEFAULT '{}',
  detected_at timestamptz NOT NULL DEFAULT now(),
  UNIQUE (machine_id, role, kind, at)
);
CREATE INDEX instrument_findings_tag_idx ON instrument_findings (tag_id, at DESC);
