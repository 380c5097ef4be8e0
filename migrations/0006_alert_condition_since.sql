-- Up Migration
-- When an alert's condition began, apart from when the alert was raised (raised_at). An alert
-- raised on history (a first start, or the jobs catching up after a stop) finds a condition that
-- already held: a drift beyond its band for months, a transmitter wrong since it was replaced.
-- raised_at keeps the time the alert job raised it; condition_since says since when the condition
-- of the alert's current level has held without a break, as the alert job found it
-- (services/jobs/src/alerts/condition-since.ts): for drift, the first UTC day of the unbroken run
-- of daily mean drifts beyond the level (else the start of the on-delay); for an instrument fault,
-- the first time of its instrument finding or of the unbroken run of flagged results.
-- Set at each activation (a raise, an escalation, a return of the condition). NULL: alerts raised
-- before this column existed, whose condition start was not recorded.
ALTER TABLE alerts ADD COLUMN condition_since timestamptz;

-- Down Migration
ALTER TABLE alerts DROP COLUMN condition_since;
