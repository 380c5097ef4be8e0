import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { migrationLevel } from '../../packages/store/src/migrate.js';
import { createTestDatabase, type TestDatabase } from '../support/database.js';

describe('test database harness', () => {
  let db: TestDatabase;
  beforeAll(async () => {
    db = await createTestDatabase();
  });
  afterAll(async () => {
    await db.drop();
  });

  it('gives each file a database with every migration applied', async () => {
    const level = await migrationLevel(db.pool);
    const { readdirSync } = await import('node:fs');
    const files = readdirSync(new URL('../../migrations', import.meta.url)).filter((f) => f.endsWith('.sql'));
    expect(level.count).toBe(files.length);
    if (files.length > 0) expect(`${level.level}.sql`).toBe(files.sort().at(-1));
  });

  it('is a database of its own', async () => {
    const result = await db.pool.query<{ name: string }>('SELECT current_database() AS name');
    expect(result.rows[0]?.name).toMatch(/^isentrope_t_/);
  });
});
