-- Up Migration
-- Analysis and alerting state written by services/jobs (analysis, alerts, notifications).
-- Units: efficiencies are fractions [-] (0.85 = 85 %); drift and its uncertainty are in points
-- of efficiency [%-points] (1 point = 0.01), negative = loss; every u_* is a standard
-- uncertainty (GUM, k = 1) in the unit of its figure.

-- Drift series, one value per result row (written by the analysis job, services/jobs/src/analysis).
-- Evaluated for every row with a finite efficiency and operating point, steady or not; the
-- rolling windows and the alerts use only steady, valid rows without instrument faults.
-- analyzed_at holds the results.computed_at the drift was derived from: when the compute job
-- rewrites a row (a recompute), computed_at moves on and the row is pending again.
ALTER TABLE results
  ADD COLUMN baseline_id bigint, -- baselines.id used (no foreign key: see 0002)
  ADD COLUMN baseline_efficiency double precision, -- baseline at this row's operating point [-]
  ADD COLUMN u_baseline double precision, -- [-]
  ADD COLUMN drift double precision, -- 100 (efficiency - baseline_efficiency) [%-points]
  ADD COLUMN u_drift double precision, -- sqrt(u_efficiency^2 + u_baseline^2), in [%-points]
  ADD COLUMN analyzed_at timestamptz;
-- Rows waiting for the analysis job (new, recomputed, or reset by a new baseline).
CREATE INDEX results_analysis_pending_idx ON results (machine_id, time)
  WHERE analyzed_at IS NULL OR analyzed_at <> computed_at;

-- Latest figures per machine for the fleet page (one row per machine, replaced each minute).
-- Windows are trailing and end at as_of (exclusive): the newest result time plus one grid step.
-- Only steady, valid results without an instrument fault count. coverage_* = points used over
-- the grid points the window holds. Window uncertainty (packages/monitor/src/rolling.ts):
-- u^2 = (mean per-point u)^2 + s^2 / n (systematic part does not average down).
CREATE TABLE machine_status (
  machine_id integer PRIMARY KEY REFERENCES machines (id),
  as_of timestamptz NOT NULL,
  updated_at timestamptz NOT NULL DEFAULT now(),
  baseline_id bigint, -- active baseline, NULL when none is fitted yet
  -- 1 hour window
  n_1h integer NOT NULL DEFAULT 0,
  coverage_1h double precision, -- 0..1
  efficiency_1h double precision, -- [-]
  u_efficiency_1h double precision, -- [-]
  baseline_efficiency_1h double precision, -- mean baseline at the window's points [-]
  drift_1h double precision, -- [%-points]
  u_drift_1h double precision, -- [%-points]
  operating_point_1h double precision, -- mean operating point (load [W], mass flow [kg/s] or pressure ratio [-])
  -- 24 hour window
  n_24h integer NOT NULL DEFAULT 0,
  coverage_24h double precision,
  efficiency_24h double precision,
  u_efficiency_24h double precision,
  baseline_efficiency_24h double precision,
  drift_24h double precision,
  u_drift_24h double precision,
  -- 7 day window
  n_7d integer NOT NULL DEFAULT 0,
  coverage_7d double precision,
  efficiency_7d double precision,
  u_efficiency_7d double precision,
  baseline_efficiency_7d double precision,
  drift_7d double precision,
  u_drift_7d double precision,
  -- Degradation: Theil-Sen slope of daily drift means over the last rate_window_days, with
  -- Sen's confidence interval (packages/monitor/src/degradation.ts) [%-points per month of 30.44 d].
  rate_window_days integer,
  rate_days integer, -- days with data used
  rate_pts_per_month double precision,
  rate_low_pts_per_month double precision,
  rate_high_pts_per_month double precision,
  rate_confidence double precision, -- e.g. 0.95
  alarm_pts double precision, -- alarm level of the drift [%-points], negative
  -- 'forecast' (dates set), 'reached' (forecast_at set), 'none' (forecast_text says why)
  forecast_status text CHECK (forecast_status IN ('forecast', 'reached', 'none')),
  forecast_at timestamptz, -- when the fitted line reaches the alarm level
  forecast_earliest timestamptz, -- from the confidence limits of the slope
  forecast_latest timestamptz,
  forecast_text text,
  -- Current drift band severity of the alert job ('normal', 'warning', 'alarm').
  band_severity text CHECK (band_severity IN ('normal', 'warning', 'alarm')),
  caution text NOT NULL
);

-- Band state of the alert job per machine and alert type, so that on/off delays survive
-- restarts and hold across instances. alert_key: 'drift', or 'instrument:<tag role>'
-- ('instrument:machine' for a fault of the machine as a whole, e.g. a second-law violation).
CREATE TABLE alert_band_state (
  machine_id integer NOT NULL REFERENCES machines (id),
  alert_key text NOT NULL,
  severity text NOT NULL DEFAULT 'normal' CHECK (severity IN ('normal', 'warning', 'alarm')),
  -- A severity waiting out its on- or off-delay, and since when (data time).
  pending_severity text CHECK (pending_severity IN ('normal', 'warning', 'alarm')),
  pending_since timestamptz,
  -- Last judged window end (data time): the next tick steps from here.
  evaluated_to timestamptz,
  -- The last sample judged: value ([%-points] for drift, 1/0 for a fault), u [%-points], coverage 0..1.
  last_value double precision,
  last_u double precision,
  last_coverage double precision,
  updated_at timestamptz NOT NULL DEFAULT now(),
  PRIMARY KEY (machine_id, alert_key),
  CHECK ((pending_severity IS NULL) = (pending_since IS NULL))
);

-- Per-target HMAC secret for webhooks; NULL = the service's configured secret.
ALTER TABLE notifications ADD COLUMN secret text;

-- Outbox: every alert event, from the alert job or from a user's action through the API, gets
-- one delivery per matching enabled notification target in the SAME transaction (this trigger),
-- never twice (UNIQUE (notification_id, alert_event_id) in 0003). Due at the event's time.
CREATE FUNCTION enqueue_alert_deliveries() RETURNS trigger
LANGUAGE plpgsql AS $$
BEGIN
  INSERT INTO deliveries (notification_id, alert_event_id, next_attempt_at)
  SELECT n.id, NEW.id, NEW.time
    FROM notifications n
    JOIN alerts a ON a.id = NEW.alert_id
   WHERE n.enabled
     AND (n.machine_id IS NULL OR n.machine_id = a.machine_id)
     AND (n.category IS NULL OR n.category = a.category)
     AND array_position(ARRAY['low', 'medium', 'high', 'urgent'], a.severity)
         >= array_position(ARRAY['low', 'medium', 'high', 'urgent'], n.min_severity)
  ON CONFLICT (notification_id, alert_event_id) DO NOTHING;
  RETURN NULL;
END
$$;

CREATE TRIGGER alert_events_outbox AFTER INSERT ON alert_events
  FOR EACH ROW EXECUTE FUNCTION enqueue_alert_deliveries();
