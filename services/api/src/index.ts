export * from './app.js';
