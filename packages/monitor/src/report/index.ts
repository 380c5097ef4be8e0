export * from './monthly.js';
export * from './render.js';
