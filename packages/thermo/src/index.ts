export * from './errors.js';
export * from './fluid.js';
export * from './perfect-gas.js';
export * from './units/index.js';
