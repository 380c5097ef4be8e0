/**
 * The project's one error registry: every area's catalog, gathered. Each code lives in exactly one
 * catalog and starts with one of its area's prefixes, so a code can never mean two things; ERRORS.md
 * is rendered from here (`npm run errors:doc`), and test/unit/error-registry.test.ts fails when the
 * committed file and this registry disagree, or when source code raises a code no catalog holds.
 */
import { CODEC_ERRORS } from '@isentrope/codec';
import { COMPUTE_ERRORS } from '@isentrope/compute';
import type { ErrorCatalog } from '@isentrope/errors';
import { MONITOR_ERRORS } from '@isentrope/monitor';
import { PLANT_ERRORS } from '@isentrope/plant';
import { STORE_ERRORS } from '@isentrope/store';
import { THERMO_ERRORS } from '@isentrope/thermo';
import { API_ERRORS } from '../services/api/src/errors.js';
import { CLI_ERRORS } from '../services/cli/src/errors.js';
import { INGEST_ERRORS } from '../services/ingest/src/errors.js';
import { JOBS_ERRORS } from '../services/jobs/src/errors.js';

export interface ErrorArea {
  /** The folder whose code raises these errors. */
  readonly folder: string;
  /** Every code of the area starts with one of these. */
  readonly prefixes: readonly string[];
  readonly catalog: ErrorCatalog;
}

export const ERROR_AREAS: readonly ErrorArea[] = [
  { folder: 'packages/thermo', prefixes: ['THERMO_', 'UNIT_', 'GAS_'], catalog: THERMO_ERRORS },
  { folder: 'packages/plant', prefixes: ['PLANT_'], catalog: PLANT_ERRORS },
  { folder: 'packages/monitor', prefixes: ['MONITOR_'], catalog: MONITOR_ERRORS },
  { folder: 'packages/compute', prefixes: ['COMPUTE_'], catalog: COMPUTE_ERRORS },
  { folder: 'packages/codec', prefixes: ['CODEC_'], catalog: CODEC_ERRORS },
  { folder: 'packages/store', prefixes: ['STORE_'], catalog: STORE_ERRORS },
  { folder: 'services/ingest', prefixes: ['INGEST_'], catalog: INGEST_ERRORS },
  { folder: 'services/jobs', prefixes: ['JOBS_'], catalog: JOBS_ERRORS },
  { folder: 'services/api', prefixes: ['API_'], catalog: API_ERRORS },
  { folder: 'services/cli', prefixes: ['CONFIG_', 'CLI_'], catalog: CLI_ERRORS },
];

export interface RegisteredError {
  readonly code: string;
  readonly folder: string;
  readonly meaning: string;
  readonly template: string | undefined;
  readonly status: number | undefined;
  readonly retired: boolean;
}

export function registeredErrors(areas: readonly ErrorArea[] = ERROR_AREAS): RegisteredError[] {
  return areas.flatMap((area) =>
    Object.entries(area.catalog).map(([code, spec]) => ({
      code,
      folder: area.folder,
      meaning: spec.meaning,
      template: spec.template,
      status: spec.status,
      retired: spec.retired === true,
    })),
  );
}

function cell(text: string): string {
  return text.replace(/\|/g, '\\|').replace(/\n/g, ' ⏎ ');
}

/** ERRORS.md as it must be committed. */
export function renderErrorsDoc(areas: readonly ErrorArea[] = ERROR_AREAS): string {
  const lines = [
    '# Error codes',
    '',
    'Every error Isentrope raises carries a stable code: clients, scripts and people branch on the code,',
    'never on the text. Codes are never reused or renamed; a retired code stays listed. Errors that reach',
    'HTTP leave as `application/problem+json` (RFC 9457) with `type`, `title`, `status`, `detail`, `code`',
    'and `instance`; errors of the pure packages (thermo, monitor) answer 422 with their own code in the',
    'detail. Each area declares its codes once, in its own catalog (`*_ERRORS` in its `errors.ts`);',
    '`scripts/error-registry.ts` gathers them and renders this file (`npm run errors:doc`); a test fails',
    'when this file and the catalogs disagree, a code is declared twice, or code raises an undeclared one.',
    'In a template, `{name}` stands for a value the error carries; areas whose messages are written where',
    'the error is raised give no template.',
    '',
  ];
  for (const area of areas) {
    lines.push(
      `## ${area.folder}`,
      '',
      '| code | status | meaning | message template |',
      '| --- | --- | --- | --- |',
    );
    for (const e of registeredErrors([area])) {
      const meaning = e.retired ? `(retired) ${e.meaning}` : e.meaning;
      const template = e.template === undefined ? '' : `\`${cell(e.template)}\``;
      lines.push(`| ${e.code} | ${e.status ?? ''} | ${cell(meaning)} | ${template} |`);
    }
    lines.push('');
  }
  return lines.join('\n');
}
