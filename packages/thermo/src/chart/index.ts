export * from './chart.js';
