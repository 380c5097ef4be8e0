export * from './errors.js';
export * from './load.js';
export * from './schema.js';
export * from './units.js';
