-- Up Migration
-- Alerts, notifications, ingestion records, exports, users and tokens, audit, jobs.

-- Alerts: one row per alert episode; ANSI/ISA-18.2 states. Drift (efficiency) and
-- instrument (e.g. negative entropy generation beyond uncertainty) are kept apart by category.
CREATE TABLE alerts (
  id bigint GENERATED ALWAYS AS IDENTITY PRIMARY KEY,
  machine_id integer NOT NULL REFERENCES machines (id),
  category text NOT NULL CHECK (category IN ('drift', 'instrument')),
  -- Tag concerned, for instrument alerts.
  tag_id integer REFERENCES tags (id),
  level text NOT NULL CHECK (level IN ('warning', 'alarm')),
  severity text NOT NULL CHECK (severity IN ('low', 'medium', 'high', 'urgent')),
  state text NOT NULL CHECK (
    state IN ('normal', 'active_unacknowledged', 'active_acknowledged', 'returned_unacknowledged', 'shelved', 'suppressed', 'out_of_service')
  ),
  message text NOT NULL,
  evidence jsonb NOT NULL DEFAULT '{}',
  raised_at timestamptz NOT NULL,
  acknowledged_at timestamptz,
  acknowledged_by text,
  shelved_until timestamptz,
  shelved_by text,
  cleared_at timestamptz,
  updated_at timestamptz NOT NULL DEFAULT now()
);
-- At most one open alert per machine, category and tag.
CREATE UNIQUE INDEX alerts_open_idx ON alerts (machine_id, category, coalesce(tag_id, 0)) WHERE state <> 'normal';
CREATE INDEX alerts_machine_time_idx ON alerts (machine_id, raised_at DESC);

CREATE TABLE alert_events (
  id bigint GENERATED ALWAYS AS IDENTITY PRIMARY KEY,
  alert_id bigint NOT NULL REFERENCES alerts (id),
  time timestamptz NOT NULL DEFAULT now(),
  from_state text,
  to_state text NOT NULL,
  -- 'system' for the state machine, else the user.
  actor text NOT NULL,
  note text,
  data jsonb NOT NULL DEFAULT '{}'
);
CREATE INDEX alert_events_alert_idx ON alert_events (alert_id, time);

CREATE TABLE notifications (
  id integer GENERATED ALWAYS AS IDENTITY PRIMARY KEY,
  name text NOT NULL UNIQUE,
  channel text NOT NULL CHECK (channel IN ('webhook', 'email')),
  target text NOT NULL,
  -- Filters; NULL = any.
  machine_id integer REFERENCES machines (id),
  category text CHECK (category IN ('drift', 'instrument')),
  min_severity text NOT NULL DEFAULT 'low' CHECK (min_severity IN ('low', 'medium', 'high', 'urgent')),
  enabled boolean NOT NULL DEFAULT true,
  created_at timestamptz NOT NULL DEFAULT now()
);

CREATE TABLE deliveries (
  id bigint GENERATED ALWAYS AS IDENTITY PRIMARY KEY,
  notification_id integer NOT NULL REFERENCES notifications (id),
  alert_event_id bigint NOT NULL REFERENCES alert_events (id),
  status text NOT NULL DEFAULT 'pending' CHECK (status IN ('pending', 'sent', 'failed')),
  attempts integer NOT NULL DEFAULT 0,
  next_attempt_at timestamptz NOT NULL DEFAULT now(),
  last_error text,
  response_status integer,
  created_at timestamptz NOT NULL DEFAULT now(),
  sent_at timestamptz,
  UNIQUE (notification_id, alert_event_id)
);
CREATE INDEX deliveries_pending_idx ON deliveries (next_attempt_at) WHERE status = 'pending';

-- Every file taken in; the checksum (SHA-256, hex) makes a re-dropped file a no-op.
CREATE TABLE ingested_files (
  id bigint GENERATED ALWAYS AS IDENTITY PRIMARY KEY,
  source text NOT NULL,
  path text NOT NULL,
  checksum text NOT NULL UNIQUE,
  size_bytes bigint NOT NULL,
  rows_total integer,
  rows_stored integer,
  rows_quarantined integer,
  status text NOT NULL DEFAULT 'processing' CHECK (status IN ('processing', 'done', 'failed')),
  error text,
  received_at timestamptz NOT NULL DEFAULT now(),
  finished_at timestamptz
);

-- Rows that could not be stored, with where they came from and why.
CREATE TABLE quarantine (
  id bigint GENERATED ALWAYS AS IDENTITY PRIMARY KEY,
  file_id bigint REFERENCES ingested_files (id),
  source text NOT NULL,
  line integer,
  column_name text,
  reason text NOT NULL,
  raw text,
  created_at timestamptz NOT NULL DEFAULT now()
);
CREATE INDEX quarantine_file_idx ON quarantine (file_id);
CREATE INDEX quarantine_created_idx ON quarantine (created_at DESC);

CREATE TABLE exports (
  id bigint GENERATED ALWAYS AS IDENTITY PRIMARY KEY,
  kind text NOT NULL,
  machine_id integer REFERENCES machines (id),
  period_from timestamptz NOT NULL,
  period_to timestamptz NOT NULL,
  format text NOT NULL CHECK (format IN ('csv', 'json', 'html', 'pdf')),
  status text NOT NULL DEFAULT 'pending' CHECK (status IN ('pending', 'done', 'failed')),
  content bytea,
  checksum text,
  error text,
  created_by text NOT NULL,
  created_at timestamptz NOT NULL DEFAULT now(),
  finished_at timestamptz
);

CREATE TABLE users (
  id integer GENERATED ALWAYS AS IDENTITY PRIMARY KEY,
  username text NOT NULL UNIQUE,
  display_name text,
  -- A password hash in its own self-describing format (e.g. scrypt with parameters); never the password.
  password_hash text,
  role text NOT NULL CHECK (role IN ('viewer', 'operator', 'engineer', 'admin')),
  created_at timestamptz NOT NULL DEFAULT now(),
  disabled_at timestamptz
);

CREATE TABLE api_tokens (
  id integer GENERATED ALWAYS AS IDENTITY PRIMARY KEY,
  user_id integer NOT NULL REFERENCES users (id),
  name text NOT NULL,
  -- Hash of the secret (SHA-256 hex); the secret itself is shown once and never stored.
  token_hash text NOT NULL UNIQUE,
  -- First characters of the token, to recognise it in lists.
  prefix text NOT NULL,
  scopes text[] NOT NULL DEFAULT '{}',
  created_at timestamptz NOT NULL DEFAULT now(),
  expires_at timestamptz,
  last_used_at timestamptz,
  revoked_at timestamptz
);

CREATE TABLE audit_log (
  id bigint GENERATED ALWAYS AS IDENTITY PRIMARY KEY,
  time timestamptz NOT NULL DEFAULT now(),
  actor text NOT NULL,
  action text NOT NULL,
  entity text NOT NULL,
  entity_id text,
  before jsonb,
  after jsonb
);
CREATE INDEX audit_log_time_idx ON audit_log (time DESC);
CREATE INDEX audit_log_entity_idx ON audit_log (entity, entity_id, time DESC);

-- How far each job has processed, per key (e.g. compute per machine id).
CREATE TABLE job_watermarks (
  job text NOT NULL,
  key text NOT NULL,
  watermark timestamptz NOT NULL,
  updated_at timestamptz NOT NULL DEFAULT now(),
  PRIMARY KEY (job, key)
);

CREATE TABLE job_runs (
  id bigint GENERATED ALWAYS AS IDENTITY PRIMARY KEY,
  job text NOT NULL,
  instance text NOT NULL,
  started_at timestamptz NOT NULL DEFAULT now(),
  finished_at timestamptz,
  status text NOT NULL DEFAULT 'running' CHECK (status IN ('running', 'ok', 'failed', 'skipped')),
  error text,
  stats jsonb NOT NULL DEFAULT '{}'
);
CREATE INDEX job_runs_job_idx ON job_runs (job, started_at DESC);
