export * from './chart/index.js';
export * from './errors.js';
export * from './fluid.js';
export * from './liquid.js';
export * from './machines/index.js';
export * from './perfect-gas.js';
export * from './uncertainty/index.js';
export * from './units/index.js';
