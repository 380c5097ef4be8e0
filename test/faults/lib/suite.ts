/** The whole suite: one world (cluster, process, OPC UA server), the parts in turn, one cleanup. */

import { join } from 'node:path';
import { accessPart } from './access-part.js';
import { badPart } from './bad-part.js';
import { faultPart } from './fault-part.js';
import { multiPart } from './multi-part.js';
import { Random } from './random.js';
import { type Verdict, verdictTable } from './report.js';
import { createWorld } from './world.js';

export interface SuiteOptions {
  readonly seed: number;
  readonly short: boolean;
  readonly parts: ReadonlySet<string>;
  readonly say: (line: string) => void;
}

export interface SuiteResult {
  readonly seed: number;
  readonly verdicts: Verdict[];
  readonly figures: Record<string, Record<string, number>>;
  readonly seconds: number;
}

export async function runSuite(o: SuiteOptions): Promise<SuiteResult> {
  const started = Date.now();
  o.say(`isentrope faults suite, seed ${o.seed}${o.short ? ' (short run)' : ''}`);
  const random = new Random(o.seed);
  const verdicts: Verdict[] = [];
  const figures: Record<string, Record<string, number>> = {};
  const world = await createWorld(random, 1000);
  o.say(
    `work folder ${world.dir}; PostgreSQL on 127.0.0.1:${world.cluster.port}; Isentrope on ${world.app.baseUrl}`,
  );
  try {
    if (o.parts.has('faults')) {
      const r = await faultPart(world, random, o.short, o.say);
      verdicts.push(...r.verdicts);
      figures.faults = r.figures;
    }
    if (o.parts.has('bad')) {
      const r = await badPart(world, random, o.short, o.say);
      verdicts.push(...r.verdicts);
      figures.bad = r.figures;
    }
    if (o.parts.has('access')) {
      const r = await accessPart(world, o.short, o.say);
      verdicts.push(...r.verdicts);
      figures.access = r.figures;
    }
    if (o.parts.has('multi')) {
      const r = await multiPart(world, join(world.dir, 'plant.json'), o.short, o.say);
      verdicts.push(...r.verdicts);
      figures.multi = r.figures;
    }
  } finally {
    await world.cleanup();
  }
  const seconds = Math.round((Date.now() - started) / 1000);
  o.say(`\nVerdicts (seed ${o.seed}, ${seconds} s)`);
  o.say(verdictTable(verdicts));
  return { seed: o.seed, verdicts, figures, seconds };
}
