/**
 * @isentrope/monitor: pure monitoring logic (no I/O, no clock; times are epoch milliseconds).
 *
 * Order of use in the compute and alert jobs:
 *   alignTags -> validateAligned -> detectSteadyState -> (machine model per point, in thermo)
 *   -> rollingWindows / bucketStats -> fitBaseline / computeDrift -> stepBand -> stepAlert;
 *   monthly: localMonth / localDays (site time zone) -> daily drift means -> degradation (Theil-Sen)
 *   -> buildMonthlyReport -> renderReportCsv / Json / Html.
 * Conventions: values in SI; efficiencies are fractions [-]; drift and degradation rates are in
 * points of efficiency [%-points] (1 point = 0.01), negative = loss. Errors are MonitorError
 * subclasses with a stable `code` (MONITOR_ERRORS). Show CAUTION beside every figure.
 */

export * from './alert-states.js';
export * from './alerts.js';
export * from './align.js';
export * from './bands.js';
export * from './baseline.js';
export * from './caution.js';
export * from './degradation.js';
export * from './errors.js';
export * from './instrument/index.js';
export * from './local-calendar.js';
export * from './report/index.js';
export * from './rolling.js';
export * from './stats.js';
export * from './steady-state.js';
export * from './validate.js';
