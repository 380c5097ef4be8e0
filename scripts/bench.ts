/**
 * `npm run bench`: runs every benchmark script (packages/<name>/bench/*.bench.ts and
 * services/<name>/bench/*.bench.ts) one after another, each in its own process, and passes
 * their JSON lines through. A summary table goes to stderr; the JSON lines are also written
 * to bench-results/latest.jsonl. Speed is measured here, never asserted in tests.
 */
import { spawnSync } from 'node:child_process';
import { mkdirSync, readdirSync, writeFileSync } from 'node:fs';
import { join, relative } from 'node:path';

const root = new URL('..', import.meta.url).pathname;
const only = process.argv.slice(2);
const files: string[] = [];
for (const area of ['packages', 'services']) {
  for (const name of readdirSync(join(root, area))) {
    const dir = join(root, area, name, 'bench');
    let entries: string[] = [];
    try {
      entries = readdirSync(dir);
    } catch {
      continue;
    }
    for (const entry of entries.sort()) {
      if (entry.endsWith('.bench.ts')) files.push(join(dir, entry));
    }
  }
}
// Filters match the path inside the repository, so a checkout folder's own name selects nothing.
const selected =
  only.length === 0 ? files : files.filter((f) => only.some((o) => relative(root, f).includes(o)));
const lines: string[] = [];
let failures = 0;
for (const file of selected) {
  process.stderr.write(`\n# ${file.replace(root, '')}\n`);
  const result = spawnSync(process.execPath, ['--import', 'tsx', file], {
    cwd: root,
    encoding: 'utf8',
    stdio: ['ignore', 'pipe', 'inherit'],
    maxBuffer: 64 * 1024 * 1024,
  });
  for (const line of result.stdout.split('\n')) {
    if (line.trim() === '') continue;
    console.log(line);
    lines.push(line);
  }
  if (result.status !== 0) {
    failures++;
    process.stderr.write(`# FAILED with exit code ${result.status}\n`);
  }
}
mkdirSync(join(root, 'bench-results'), { recursive: true });
writeFileSync(join(root, 'bench-results', 'latest.jsonl'), `${lines.join('\n')}\n`);
process.stderr.write(`\n# ${selected.length} benchmark files, ${lines.length} figures, ${failures} failed\n`);
process.exitCode = failures === 0 ? 0 : 1;
