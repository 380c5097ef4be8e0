export * from './demo.js';
export * from './history.js';
export * from './live.js';
export * from './plant.js';
export * from './scenario.js';
