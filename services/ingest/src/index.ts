export * from './csv/file.js';
export * from './csv/format.js';
export type { CsvHandlers, CsvSummary, QuarantineEntry, QuarantineReason } from './csv/parse.js';
export { parseCsv, parseQuality, parseValue } from './csv/parse.js';
export { BUILT_IN_TIME_FORMATS, ZoneResolver } from './csv/time.js';
export * from './errors.js';
export * from './pg-sink.js';
export * from './types.js';
