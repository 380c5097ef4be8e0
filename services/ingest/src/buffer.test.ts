import { mkdtemp, readdir, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { DiskBuffer } from './buffer.js';
import type { Sample } from './types.js';

let dir: string;
beforeEach(async () => {
  dir = await mkdtemp(join(tmpdir(), 'ingest-buffer-'));
});
afterEach(async () => {
  await rm(dir, { recursive: true, force: true });
});

const batch = (from: number, n: number): Sample[] =>
  Array.from({ length: n }, (_, i) => ({
    tagId: 1,
    time: new Date(Date.UTC(2026, 0, 1) + (from + i) * 1000),
    value: from + i,
    quality: 192,
  }));

// Sample counts and orders below are by construction (common practice, no source).
describe('DiskBuffer', () => {
  it('rolls segments, drains them oldest first in order, and deletes them', async () => {
    const b = await DiskBuffer.open({ dir, segmentBytes: 300 });
    for (let k = 0; k < 10; k++) await b.append(batch(k * 5, 5));
    expect(b.depth).toBe(50);
    expect((await readdir(dir)).length).toBeGreaterThan(2);
    const seen: number[] = [];
    const n = await b.drain(async (s) => {
      seen.push(...s.map((x) => x.value));
    });
    expect(n).toBe(50);
    expect(seen).toEqual(Array.from({ length: 50 }, (_, i) => i));
    expect(b.isEmpty).toBe(true);
    expect(await readdir(dir)).toEqual([]);
  });

  it('refuses the newest batch when full and keeps the oldest', async () => {
    const b = await DiskBuffer.open({ dir, maxBytes: 400 });
    const results = [];
    for (let k = 0; k < 10; k++) results.push(await b.append(batch(k * 5, 5)));
    const refused = results.reduce((a, r) => a + r.refused, 0);
    expect(refused).toBeGreaterThan(0);
    expect(b.depth + refused).toBe(50);
    const kept = b.depth;
    const seen: number[] = [];
    await b.drain(async (s) => {
      seen.push(...s.map((x) => x.value));
    });
    // The oldest samples are the ones kept: exactly 0 .. kept-1.
    expect(seen).toEqual(Array.from({ length: kept }, (_, i) => i));
  });

  it('a failing write leaves the segment; a reopened buffer holds what was not drained', async () => {
    const b = await DiskBuffer.open({ dir, segmentBytes: 10_000 });
    await b.append(batch(0, 3));
    await b.append(batch(3, 3));
    await expect(
      b.drain(async () => {
        throw new Error('database down');
      }),
    ).rejects.toThrow('database down');
    expect(b.depth).toBe(6);
    await b.close();
    // A torn line (crash mid-append) is skipped and counted.
    const [name] = await readdir(dir);
    await writeFile(join(dir, name!), '[[1,0,1,19', { flag: 'a' });
    const again = await DiskBuffer.open({ dir });
    expect(again.depth).toBe(6);
    const seen: number[] = [];
    await again.drain(async (s) => {
      seen.push(...s.map((x) => x.value));
    });
    expect(seen).toEqual([0, 1, 2, 3, 4, 5]);
    expect(again.tornLines).toBe(1);
  });
});
