export * from './errors.js';
export * from './units.js';
