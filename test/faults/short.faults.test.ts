import { spawn } from 'node:child_process';
import { mkdtemp, readFile, rm } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import type { SuiteResult } from './lib/suite.js';

const RUN = new URL('./run.ts', import.meta.url).pathname;
const TSX = new URL('../../node_modules/.bin/tsx', import.meta.url).pathname;

/** The short run of `npm run faults` (10 faults, 500 files, the access sweep, 2 processes) as a child process. */
function shortRun(json: string): Promise<{ code: number | null; output: string }> {
  return new Promise((resolve) => {
    const child = spawn(TSX, [RUN, '--short', '--seed', '1717', '--json', json], {
      stdio: ['ignore', 'pipe', 'pipe'],
    });
    let output = '';
    child.stdout.on('data', (c: Buffer) => (output += c.toString()));
    child.stderr.on('data', (c: Buffer) => (output += c.toString()));
    child.on('exit', (code) => resolve({ code, output }));
  });
}

describe('the fault suite, short run (issue 17)', () => {
  it('meets every target of issue 17 but a defect labelled known (only truncated CSV files, issue 18 #13, remain)', async () => {
    const dir = await mkdtemp(join(tmpdir(), 'isentrope-faults-short-'));
    try {
      const json = join(dir, 'result.json');
      const { code, output } = await shortRun(json);
      // Exit 2: the suite itself failed (not a target missed); its output says why.
      expect(code, output).not.toBe(2);
      const result = JSON.parse(await readFile(json, 'utf8')) as SuiteResult;
      expect(Object.keys(result.figures).sort()).toEqual(['access', 'bad', 'faults', 'multi']);
      // Targets of issue 17: 10 faults in the short run, 0 lost, 0 doubled; 500 files; no crash.
      expect(result.figures.faults?.faults ?? 0).toBeGreaterThanOrEqual(10);
      expect(result.figures.faults?.missing).toBe(0);
      expect(result.figures.faults?.doubled).toBe(0);
      expect(result.figures.bad?.files).toBeGreaterThanOrEqual(500);
      expect(result.figures.bad?.crashes).toBe(0);
      const unexpected = result.verdicts.filter((v) => !v.ok && v.known === undefined);
      expect(unexpected, output).toEqual([]);
    } finally {
      await rm(dir, { recursive: true, force: true });
    }
  }, 400_000);
});
