export * from './compute/config.js';
export * from './compute/job.js';
export * from './compute/pipeline.js';
export * from './errors.js';
export { readResults, writeResults } from './queries/results.js';
export * from './scheduler.js';
