/**
 * Bad input through the real process: mutated CSV files dropped in chunks into the running
 * Isentrope's bad-drop folder, then each file's truth checked against ingested_files,
 * quarantine and samples.
 */
import { readdir, rename, writeFile } from 'node:fs/promises';
import { basename, join } from 'node:path';
import { storedSamples } from './compare.js';
import { type MutantFile, type MutationKind, mutant } from './csv-mutants.js';
import { BAD_TAGS } from './plant.js';
import { type Random, sleep } from './random.js';
import { type World, waitingFiles } from './world.js';

export interface KindCount {
  files: number;
  goodCells: number;
  missing: number;
  altered: number;
  badLines: number;
  unreported: number;
  storedFromBad: number;
  refusedUnreported: number;
  hangs: number;
}

export interface BadCsvResult {
  readonly files: number;
  readonly seconds: number;
  readonly byKind: Map<MutationKind, KindCount>;
  readonly crashes: number;
  readonly leftInFolder: number;
  readonly slowest: number;
}

const zero = (): KindCount => ({
  files: 0,
  goodCells: 0,
  missing: 0,
  altered: 0,
  badLines: 0,
  unreported: 0,
  storedFromBad: 0,
  refusedUnreported: 0,
  hangs: 0,
});

async function drop(folder: string, files: readonly MutantFile[]): Promise<void> {
  for (const f of files) {
    // Truncated files arrive as a writer cut off would leave them (no *.part rename); the rest are renamed into place.
    if (f.kind === 'truncated') await writeFile(join(folder, f.name), f.bytes);
    else {
      await writeFile(join(folder, `${f.name}.part`), f.bytes);
      await rename(join(folder, `${f.name}.part`), join(folder, f.name));
    }
  }
}

/** Drops `count` files in chunks, each chunk waited for (bounded: 30 s a file, at least 60 s a chunk). */
export async function feedCsv(
  world: World,
  random: Random,
  count: number,
  say: (l: string) => void,
): Promise<{ files: MutantFile[]; seconds: number; leftInFolder: number; crashes: number }> {
  const started = Date.now();
  const files: MutantFile[] = [];
  const chunk = count <= 500 ? 500 : 250;
  let crashes = 0;
  for (let i = 0; i < count; i += chunk) {
    const batch = Array.from({ length: Math.min(chunk, count - i) }, (_, k) => mutant(random, i + k));
    files.push(...batch);
    await drop(world.badFolder, batch);
    const deadline = Date.now() + Math.max(60_000, batch.length * 30_000);
    while ((await waitingFiles(world.badFolder)) > 0 && Date.now() < deadline) {
      if (!world.app.alive) {
        crashes++;
        say('  Isentrope exited during the bad-input feed; starting it again');
        await world.app.startUntilHealthy();
      }
      await sleep(500);
    }
    if ((i / chunk) % 8 === 0)
      say(`  ${files.length} CSV files fed, ${Math.round((Date.now() - started) / 1000)} s`);
  }
  const leftInFolder = await waitingFiles(world.badFolder);
  return { files, seconds: (Date.now() - started) / 1000, leftInFolder, crashes };
}

interface FileRecord {
  id: number;
  status: string;
  seconds: number | null;
}

async function records(
  world: World,
): Promise<{ byName: Map<string, FileRecord>; lines: Map<number, Set<number>>; mentioned: Set<string> }> {
  const files = await world.pool.query<{ id: number; path: string; status: string; seconds: number | null }>(
    `SELECT id::int, path, status, extract(epoch FROM finished_at - received_at)::float8 AS seconds FROM ingested_files WHERE source = 'bad-drop'`,
  );
  const byName = new Map(
    files.rows.map((r) => [basename(r.path), { id: r.id, status: r.status, seconds: r.seconds }]),
  );
  const q = await world.pool.query<{ file_id: number | null; line: number | null; reason: string }>(
    `SELECT file_id::int, line, reason FROM quarantine WHERE source = 'bad-drop'`,
  );
  const lines = new Map<number, Set<number>>();
  const mentioned = new Set<string>();
  const idToName = new Map(files.rows.map((r) => [r.id, basename(r.path)]));
  for (const row of q.rows) {
    if (row.file_id !== null) {
      const set = lines.get(row.file_id) ?? new Set<number>();
      if (row.line !== null) set.add(row.line);
      lines.set(row.file_id, set);
      const name = idToName.get(row.file_id);
      if (name !== undefined) mentioned.add(name);
    }
    for (const m of row.reason.matchAll(/bad-\d{5}\.csv/g)) mentioned.add(m[0]);
  }
  return { byName, lines, mentioned };
}

/** Each file's truth against what the process stored and reported. */
export async function checkCsv(
  world: World,
  files: readonly MutantFile[],
): Promise<Map<MutationKind, KindCount>> {
  const { rows } = await storedSamples(world.pool, [...BAD_TAGS]);
  const stored = new Map(rows.map((r) => [`${r.tag}|${r.time}`, r.value]));
  const { byName, lines, mentioned } = await records(world);
  const goodKeys = new Set<string>();
  const byKind = new Map<MutationKind, KindCount>();
  const contents = new Map<string, number>();
  for (const f of files)
    contents.set(f.bytes.toString('base64'), (contents.get(f.bytes.toString('base64')) ?? 0) + 1);
  for (const f of files) {
    const k = byKind.get(f.kind) ?? zero();
    byKind.set(f.kind, k);
    k.files++;
    for (const c of f.good) {
      const key = `${c.tag}|${c.time}`;
      goodKeys.add(key);
      k.goodCells++;
      const v = stored.get(key);
      if (v === undefined) k.missing++;
      else if (v !== c.value) k.altered++;
    }
    const rec = byName.get(f.name);
    // A file whose content another file repeats shares its record (received once, finished at the last drop): no time of its own.
    const shared = (contents.get(f.bytes.toString('base64')) ?? 0) > 1;
    if (!shared && rec?.seconds !== null && rec?.seconds !== undefined && rec.seconds > 30) k.hangs++;
    if (f.refusedWhole && !mentioned.has(f.name)) k.refusedUnreported++;
    const reported = rec === undefined ? new Set<number>() : (lines.get(rec.id) ?? new Set<number>());
    for (const l of f.badLines) {
      k.badLines++;
      if (!reported.has(l)) k.unreported++;
    }
  }
  // A stored cell no file's truth allows: taken from a bad row (the file is found by its time range).
  for (const r of rows) {
    // August and September 2025 belong to the push part.
    if (r.time >= Date.UTC(2025, 7, 1) && r.time < Date.UTC(2025, 9, 1)) continue;
    if (goodKeys.has(`${r.tag}|${r.time}`)) continue;
    const index = Math.floor((r.time - Date.UTC(2025, 0, 1)) / 1_000_000);
    const f = files.find((x) => x.name === `bad-${String(index).padStart(5, '0')}.csv`);
    // Beyond the last file's range: the repeated-hour files (October 2025).
    const k =
      byKind.get(f?.kind ?? (index >= files.length || index < 0 ? 'repeated DST hour' : 'clean')) ?? zero();
    k.storedFromBad++;
  }
  return byKind;
}

export async function slowestFile(world: World): Promise<number> {
  const r = await world.pool.query<{ s: number | null }>(
    `SELECT max(extract(epoch FROM finished_at - received_at))::float8 AS s FROM ingested_files WHERE source = 'bad-drop'`,
  );
  return r.rows[0]?.s ?? 0;
}

export async function folderNames(folder: string): Promise<string[]> {
  return readdir(folder).catch(() => []);
}
