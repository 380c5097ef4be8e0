import { fileURLToPath } from 'node:url';
import { loadPlantFile } from '@isentrope/plant';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createTestDatabase, type TestDatabase } from '../../../test/support/database.js';
import { readAudit } from './audit.js';
import { getMachines, getTags, getTagsForMachine } from './catalog.js';
import { beginIngestedFile, readQuarantine, writeQuarantine } from './ingest-records.js';
import { applyPlant } from './plant-config.js';
import { readResults, writeResults } from './results.js';
import { readTrend } from './trends.js';
import { getWatermark, setWatermark } from './watermarks.js';

let db: TestDatabase;
beforeAll(async () => {
  db = await createTestDatabase();
});
afterAll(async () => {
  await db.drop();
});

const demo = fileURLToPath(new URL('../../plant/examples/demo-plant.yaml', import.meta.url));

describe('applyPlant', () => {
  it('upserts the invented demo plant, is repeatable, retires what leaves the file, audits', async () => {
    const plant = await loadPlantFile(demo);
    const first = await applyPlant(db.pool, plant, 'alice');
    const second = await applyPlant(db.pool, plant, 'alice');
    expect(second.machines).toEqual(first.machines);
    expect(second.tags).toEqual(first.tags);
    expect(Object.keys(first.tags)).toHaveLength(13);
    const machines = await getMachines(db.pool);
    expect(machines.map((m) => m.slug)).toEqual(['st-1', 'ac-1']);
    const st = machines[0]!;
    expect(st.fluid).toBe('water');
    expect(st.bands?.onDelay).toBe(1800);
    const stTags = await getTagsForMachine(db.pool, st.id);
    expect(stTags.map((t) => t.name)).toContain('ST1.FI-100');
    expect(stTags.find((t) => t.name === 'ST1.FI-100')?.compression).toEqual({
      method: 'deadband',
      deviation: 0.1,
    });

    const smaller = {
      ...plant,
      machines: plant.machines.slice(0, 1),
      tags: plant.tags.filter((t) => t.machine !== 'ac-1'),
    };
    const third = await applyPlant(db.pool, smaller, 'bob');
    expect(third.retiredMachines).toEqual(['ac-1']);
    expect(third.retiredTags).toHaveLength(6);
    expect((await getMachines(db.pool)).map((m) => m.slug)).toEqual(['st-1']);
    expect((await getTags(db.pool, { includeRetired: true })).length).toBe(13);
    const audit = await readAudit(db.pool, { entity: 'site', entityId: 'demo-works' });
    expect(audit.map((a) => a.actor)).toEqual(['bob', 'alice', 'alice']);
    expect(audit[2]?.before).toBeNull();
    expect(audit[0]?.before).not.toBeNull();
  });
});

describe('results', () => {
  it('upserts on (machine, time) and reads back, trend over valid results only', async () => {
    const t0 = Date.UTC(2026, 5, 1);
    const rows = Array.from({ length: 10 }, (_, i) => ({
      machineId: 7,
      time: new Date(t0 + i * 60_000),
      efficiency: 0.8 + i / 1000,
      uEfficiency: 0.01,
      power: 1e6,
      steady: true,
      flags: i === 3 ? ['not-steady'] : [],
      valid: i !== 3,
    }));
    await writeResults(db.pool, rows);
    await writeResults(db.pool, [{ ...rows[0]!, efficiency: 0.5 }]);
    const back = await readResults(db.pool, 7, new Date(t0), new Date(t0 + 3_600_000));
    expect(back).toHaveLength(10);
    expect(back[0]?.efficiency).toBe(0.5);
    expect(back[3]?.flags).toEqual(['not-steady']);
    expect(back[1]?.hIn).toBeNull();
    const trend = await readTrend(db.pool, {
      series: { kind: 'result', machineId: 7, field: 'efficiency' },
      from: new Date(t0),
      to: new Date(t0 + 600_000),
      buckets: 1,
    });
    expect(trend.buckets[0]?.count).toBe(9);
    expect(trend.buckets[0]?.min).toBe(0.5);
  });
});

describe('ingest records, quarantine, watermarks', () => {
  it('records a file once by checksum and keeps quarantined rows with their place and reason', async () => {
    const f = { source: 'dcs-drop', path: '/drop/a.csv', checksum: 'ab'.repeat(32), sizeBytes: 1234 };
    const a = await beginIngestedFile(db.pool, f);
    const b = await beginIngestedFile(db.pool, { ...f, path: '/drop/copy-of-a.csv' });
    expect(a.alreadyIngested).toBe(false);
    expect(b).toMatchObject({ id: a.id, alreadyIngested: true });
    await writeQuarantine(db.pool, [
      {
        fileId: a.id,
        source: 'dcs-drop',
        line: 17,
        column: 'ST1.PI-100',
        reason: 'not a number',
        raw: '2026-01-01;x',
      },
    ]);
    const q = await readQuarantine(db.pool, { fileId: a.id });
    expect(q).toMatchObject([
      { line: 17, column: 'ST1.PI-100', reason: 'not a number', raw: '2026-01-01;x' },
    ]);
  });

  it('sets and gets a watermark', async () => {
    expect(await getWatermark(db.pool, 'compute', '7')).toBeUndefined();
    await setWatermark(db.pool, 'compute', '7', new Date(Date.UTC(2026, 0, 1)));
    await setWatermark(db.pool, 'compute', '7', new Date(Date.UTC(2026, 0, 2)));
    expect((await getWatermark(db.pool, 'compute', '7'))?.toISOString()).toBe('2026-01-02T00:00:00.000Z');
  });
});
