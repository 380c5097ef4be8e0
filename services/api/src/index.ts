export * from './app.js';
export { checkNewPassword, MIN_PASSWORD_LENGTH, storeNewPassword } from './auth/password-change.js';
export { API_ERRORS, ApiError, type ApiErrorCode, type Problem, toProblem } from './errors.js';
export { createMetricsRegistry, type GaugeCollector, type Labels, MetricsRegistry } from './metrics.js';
export { EXPORT_KIND, renderMonthlyExport } from './routes/exports.js';
