import { defineConfig } from 'vitest/config';

// Two tiers: `unit` runs pure logic with no I/O; `db` runs against a real PostgreSQL
// (TEST_DATABASE_URL, else a testcontainers PostgreSQL when an engine answers, else the
// embedded one), prepared once by test/global-setup.ts with the migrations applied.
const failOnConsole = ['./test/fail-on-console.ts'];

export default defineConfig({
  test: {
    projects: [
      {
        test: {
          name: 'unit',
          include: ['packages/*/src/**/*.test.ts', 'services/*/src/**/*.test.ts', 'test/unit/**/*.test.ts'],
          exclude: ['**/*.db.test.ts', '**/node_modules/**'],
          setupFiles: failOnConsole,
          pool: 'threads',
        },
      },
      {
        test: {
          name: 'db',
          include: [
            'packages/*/src/**/*.db.test.ts',
            'services/*/src/**/*.db.test.ts',
            'test/**/*.db.test.ts',
          ],
          exclude: ['**/node_modules/**'],
          globalSetup: ['./test/global-setup.ts'],
          setupFiles: failOnConsole,
          pool: 'forks',
          testTimeout: 60_000,
          hookTimeout: 120_000,
        },
      },
      {
        // The short fault run (test/faults): a real Isentrope on a PostgreSQL cluster of its own,
        // so it needs no test database and runs once, not again on the embedded server.
        test: {
          name: 'faults',
          include: ['test/faults/**/*.faults.test.ts'],
          setupFiles: failOnConsole,
          pool: 'forks',
          testTimeout: 600_000,
        },
      },
    ],
  },
});
