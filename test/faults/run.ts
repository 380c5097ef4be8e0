/**
 * `npm run faults`: the fault-injection, bad-input, access and several-process suite of
 * issue 17 against a real Isentrope process on its own PostgreSQL cluster.
 *   --short        the short run (npm test): 10 faults, 500 files, durations scaled down
 *   --seed N       repeat a run (the seed is printed)
 *   --parts a,b    any of faults, bad, access, multi (default all)
 *   --json FILE    write the verdicts and figures as JSON too
 * Exit 0 when every target is met, 1 when one is not, 2 when the suite itself failed.
 */
import { writeFile } from 'node:fs/promises';
import { parseArgs } from 'node:util';
import { runSuite, type SuiteResult } from './lib/suite.js';

const { values } = parseArgs({
  options: {
    short: { type: 'boolean', default: false },
    seed: { type: 'string' },
    parts: { type: 'string', default: 'faults,bad,access,multi' },
    json: { type: 'string' },
  },
});
// node-opcua prints session warnings to stdout unless told otherwise (ECOSYSTEM.md).
process.env.NODEOPCUA_LOG_LEVEL = '1';
const seed = values.seed === undefined ? Math.floor(Math.random() * 2 ** 31) : Number(values.seed);
const say = (line: string) => process.stdout.write(`${line}\n`);
let result: SuiteResult | undefined;
try {
  result = await runSuite({ seed, short: values.short, parts: new Set(values.parts.split(',')), say });
} catch (error) {
  say(`the suite itself failed: ${error instanceof Error ? (error.stack ?? error.message) : String(error)}`);
  say(`seed ${seed}`);
  process.exit(2);
}
if (values.json !== undefined) await writeFile(values.json, JSON.stringify(result, null, 2));
process.exit(result.verdicts.every((v) => v.ok) ? 0 : 1);
