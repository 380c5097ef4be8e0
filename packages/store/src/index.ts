export * from './audit.js';
export * from './baselines.js';
export * from './blocks/index.js';
export * from './catalog.js';
export * from './compression.js';
export {
  COPY_HEADER_BYTES,
  COPY_SIGNATURE,
  PG_EPOCH_MS,
  readCopyTime,
  writeCopyTime,
} from './copy-binary.js';
export * from './database.js';
export * from './embedded.js';
export * from './errors.js';
export * from './ingest-records.js';
export * from './migrate.js';
export * from './monthly-figures.js';
export * from './partitions.js';
export * from './plant-config.js';
export * from './quality.js';
export * from './results.js';
export * from './retention.js';
export * from './rollup-rebuild.js';
export * from './rollups.js';
export * from './samples-writer.js';
export * from './transaction.js';
export * from './trends.js';
export * from './watermarks.js';
