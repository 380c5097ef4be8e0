import { randomBytes } from 'node:crypto';
import pg from 'pg';
import { inject } from 'vitest';

export interface TestDatabase {
  /** Connection string of this file's own database. */
  readonly url: string;
  readonly pool: pg.Pool;
  /** Which server the db tier runs on (see test/global-setup.ts). */
  readonly source: string;
  drop(): Promise<void>;
}

/**
 * A fresh database with every migration applied, cloned from the template that the
 * global setup migrated. One per test file, so files run in parallel untouched by each
 * other. Call in beforeAll and drop in afterAll.
 */
export async function createTestDatabase(): Promise<TestDatabase> {
  const { adminUrl, templateName, source } = inject('testDatabase');
  const name = `isentrope_t_${templateName.replace('isentrope_template_', '')}_${randomBytes(5).toString('hex')}`;
  const admin = new pg.Client({ connectionString: adminUrl });
  await admin.connect();
  try {
    // Parallel clones of one template can collide on its lock: try a few times.
    for (let attempt = 1; ; attempt++) {
      try {
        await admin.query(`CREATE DATABASE ${name} TEMPLATE ${templateName}`);
        break;
      } catch (error) {
        if (attempt >= 10) throw error;
        await new Promise((resolve) => setTimeout(resolve, 100 * attempt));
      }
    }
  } finally {
    await admin.end();
  }
  const url = new URL(adminUrl);
  url.pathname = `/${name}`;
  const pool = new pg.Pool({ connectionString: url.toString(), max: 8 });
  pool.on('error', () => {});
  return {
    url: url.toString(),
    pool,
    source,
    async drop() {
      await pool.end();
      const client = new pg.Client({ connectionString: adminUrl });
      await client.connect();
      await client.query(`DROP DATABASE IF EXISTS ${name} WITH (FORCE)`);
      await client.end();
    },
  };
}
