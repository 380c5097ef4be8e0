-- Up Migration
-- Plant configuration: sites, machines, tags, sources, bands, baselines.
-- Written by applyPlant (packages/store/src/plant-config.ts) from a validated plant file;
-- the validated objects are kept whole in `spec` so nothing of the file is lost, and the
-- fields queries filter on are columns. Tags and machines are never deleted once they
-- have data (samples and results hold their ids without a foreign key, see 0002), they
-- are retired instead.

CREATE TABLE sites (
  id integer GENERATED ALWAYS AS IDENTITY PRIMARY KEY,
  slug text NOT NULL UNIQUE,
  name text NOT NULL,
  time_zone text NOT NULL,
  -- Fixed ambient pressure as written ("1.013 bara"); converted by the thermo unit parser.
  ambient_pressure text,
  barometer_tag text,
  elevation_m double precision,
  spec jsonb NOT NULL,
  created_at timestamptz NOT NULL DEFAULT now(),
  updated_at timestamptz NOT NULL DEFAULT now()
);

CREATE TABLE machines (
  id integer GENERATED ALWAYS AS IDENTITY PRIMARY KEY,
  site_id integer NOT NULL REFERENCES sites (id),
  slug text NOT NULL,
  name text NOT NULL,
  kind text NOT NULL CHECK (kind IN ('turbine', 'compressor', 'pump', 'fan')),
  fluid jsonb NOT NULL,
  ratings jsonb NOT NULL DEFAULT '{}',
  driver_efficiency double precision CHECK (driver_efficiency > 0 AND driver_efficiency <= 1),
  out_of_service boolean NOT NULL DEFAULT false,
  key_tags text[] NOT NULL DEFAULT '{}',
  baseline_spec jsonb,
  -- Set when the machine disappears from the plant file; its history stays.
  retired_at timestamptz,
  spec jsonb NOT NULL,
  created_at timestamptz NOT NULL DEFAULT now(),
  updated_at timestamptz NOT NULL DEFAULT now(),
  UNIQUE (site_id, slug)
);

CREATE TABLE tags (
  id integer GENERATED ALWAYS AS IDENTITY PRIMARY KEY,
  site_id integer NOT NULL REFERENCES sites (id),
  machine_id integer REFERENCES machines (id),
  -- The name the plant writes (CSV header, OPC UA display name).
  name text NOT NULL,
  description text,
  role text NOT NULL,
  -- Unit the raw samples are stored in (as received).
  unit text NOT NULL,
  uncertainty jsonb,
  valid_min double precision,
  valid_max double precision,
  compression_method text CHECK (compression_method IN ('deadband', 'swinging-door')),
  -- Error bound of the stored samples [tag unit] when compression is on.
  compression_deviation double precision CHECK (compression_deviation > 0),
  opcua_endpoint text,
  opcua_node_id text,
  retired_at timestamptz,
  spec jsonb NOT NULL,
  created_at timestamptz NOT NULL DEFAULT now(),
  updated_at timestamptz NOT NULL DEFAULT now(),
  UNIQUE (site_id, name),
  CHECK ((compression_method IS NULL) = (compression_deviation IS NULL))
);
CREATE INDEX tags_machine_idx ON tags (machine_id);

CREATE TABLE sources (
  id integer GENERATED ALWAYS AS IDENTITY PRIMARY KEY,
  site_id integer NOT NULL REFERENCES sites (id),
  slug text NOT NULL,
  kind text NOT NULL CHECK (kind IN ('csv', 'opcua', 'http')),
  spec jsonb NOT NULL,
  retired_at timestamptz,
  updated_at timestamptz NOT NULL DEFAULT now(),
  UNIQUE (site_id, slug)
);

-- Alert bands per machine, in points of efficiency (1 = one percentage point).
CREATE TABLE bands (
  machine_id integer PRIMARY KEY REFERENCES machines (id),
  warning double precision NOT NULL CHECK (warning > 0),
  alarm double precision NOT NULL,
  on_delay_s double precision NOT NULL CHECK (on_delay_s >= 0),
  off_delay_s double precision NOT NULL CHECK (off_delay_s >= 0),
  deadband double precision NOT NULL CHECK (deadband >= 0),
  min_coverage double precision NOT NULL CHECK (min_coverage BETWEEN 0 AND 1),
  severity text NOT NULL CHECK (severity IN ('low', 'medium', 'high', 'urgent')),
  require_beyond_uncertainty boolean NOT NULL,
  updated_at timestamptz NOT NULL DEFAULT now(),
  CHECK (alarm > warning)
);

-- Fitted baselines: efficiency as a polynomial in the operating point over a reference period.
CREATE TABLE baselines (
  id bigint GENERATED ALWAYS AS IDENTITY PRIMARY KEY,
  machine_id integer NOT NULL REFERENCES machines (id),
  operating_point text NOT NULL CHECK (operating_point IN ('load', 'massFlow', 'pressureRatio')),
  reference_from timestamptz NOT NULL,
  reference_to timestamptz NOT NULL,
  -- Polynomial coefficients, lowest power first.
  coefficients double precision[] NOT NULL,
  -- Operating-point range covered by the fit; outside it the baseline is an extrapolation.
  x_min double precision,
  x_max double precision,
  n integer NOT NULL CHECK (n >= 0),
  residual_std double precision,
  r_squared double precision,
  statistics jsonb NOT NULL DEFAULT '{}',
  active boolean NOT NULL DEFAULT true,
  created_at timestamptz NOT NULL DEFAULT now(),
  created_by text NOT NULL,
  CHECK (reference_from < reference_to)
);
-- One active baseline per machine.
CREATE UNIQUE INDEX baselines_active_idx ON baselines (machine_id) WHERE active;
