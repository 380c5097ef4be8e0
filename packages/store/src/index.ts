export * from './database.js';
export * from './embedded.js';
export * from './migrate.js';
