export * from './gather.js';
export * from './monthly.js';
export * from './render.js';
