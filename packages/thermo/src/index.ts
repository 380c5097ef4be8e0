export * from './errors.js';
export * from './fluid.js';
export * from './perfect-gas.js';
