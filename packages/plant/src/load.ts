/** Reading a plant file (YAML or JSON) into a validated PlantFile. */
import { readFile } from 'node:fs/promises';
import { parseDocument } from 'yaml';
import type { z } from 'zod';
import { PlantFileError, type PlantFileIssue } from './errors.js';
import { type Machine, type PlantFile, plantFileInputSchema, type Tag } from './schema.js';
import { unitDimension } from './units.js';

type Issue = z.core.$ZodIssue;

/** ['machines', 2, 'tags', 0, 'unit'] -> "machines[2].tags[0].unit" */
export function formatPath(path: readonly PropertyKey[]): string {
  let out = '';
  for (const key of path) {
    if (typeof key === 'number') out += `[${key}]`;
    else {
      const name = String(key);
      out += /^[A-Za-z_$][\w$]*$/.test(name) ? (out === '' ? name : `.${name}`) : `[${JSON.stringify(name)}]`;
    }
  }
  return out;
}

/**
 * Zod issues as readable lines. A union that failed in every branch is reported through the
 * branch that got furthest (its issues lie below the union's own path), so a typo inside a
 * fluid object says which field, not only "invalid input".
 */
function flatten(issues: readonly Issue[], prefix: readonly PropertyKey[]): PlantFileIssue[] {
  const out: PlantFileIssue[] = [];
  for (const issue of issues) {
    const path = [...prefix, ...issue.path];
    if (issue.code === 'invalid_union' && issue.errors.length > 0) {
      const deep = issue.errors
        .filter((branch) => branch.length > 0 && branch.every((i) => i.path.length > 0))
        .sort((a, b) => a.length - b.length)[0];
      if (deep !== undefined) {
        out.push(...flatten(deep, path));
        continue;
      }
    }
    out.push({ path: formatPath(path), message: issue.message });
  }
  return out;
}

/** Parses and validates a plant file's text; throws PlantFileError listing every problem. */
export function parsePlantFile(text: string, fileName: string): PlantFile {
  const doc = parseDocument(text);
  if (doc.errors.length > 0) {
    throw new PlantFileError(
      fileName,
      doc.errors.map((e) => ({
        path: e.linePos?.[0] ? `line ${e.linePos[0].line}, column ${e.linePos[0].col}` : '',
        // prettyErrors appends " at line L, column C:" and a source excerpt; keep the reason only.
        message: (e.message.split('\n')[0] ?? e.message).replace(/ at line \d+, column \d+:?$/, ''),
      })),
    );
  }
  const result = plantFileInputSchema.safeParse(doc.toJS());
  if (!result.success) throw new PlantFileError(fileName, flatten(result.error.issues, []));
  const input = result.data;

  const issues: PlantFileIssue[] = [];
  const machines: Machine[] = [];
  const tags: Tag[] = [];
  const tagPaths = new Map<string, string>();
  const addTag = (tag: Tag, path: string): void => {
    const earlier = tagPaths.get(tag.name);
    if (earlier !== undefined)
      issues.push({ path: `${path}.name`, message: `tag "${tag.name}" is already defined at ${earlier}` });
    else tagPaths.set(tag.name, path);
    tags.push(tag);
  };

  const machineIds = new Set<string>();
  input.machines.forEach((m, i) => {
    if (machineIds.has(m.id))
      issues.push({ path: `machines[${i}].id`, message: `machine id "${m.id}" is used twice` });
    machineIds.add(m.id);
    const { tags: nested, ...machine } = m;
    machines.push(machine);
    nested.forEach((t, j) => {
      addTag({ ...t, machine: m.id }, `machines[${i}].tags[${j}]`);
    });
  });
  input.tags.forEach((t, j) => {
    if (t.machine !== undefined && !machineIds.has(t.machine)) {
      issues.push({ path: `tags[${j}].machine`, message: `no machine with id "${t.machine}"` });
    }
    addTag(t, `tags[${j}]`);
  });

  input.machines.forEach((m, i) => {
    const own = tags.filter((t) => t.machine === m.id);
    m.keyTags.forEach((name, k) => {
      if (!own.some((t) => t.name === name)) {
        issues.push({
          path: `machines[${i}].keyTags[${k}]`,
          message: `"${name}" is not a tag of machine "${m.id}"`,
        });
      }
    });
    const op = m.baseline?.operatingPoint;
    const needs: Record<string, readonly string[]> = {
      load: ['shaftPower', 'electricalPower'],
      massFlow: ['massFlow', 'volumeFlow'],
      pressureRatio: ['inletPressure'],
    };
    if (op !== undefined && !own.some((t) => needs[op]?.includes(t.role))) {
      issues.push({
        path: `machines[${i}].baseline.operatingPoint`,
        message: `operating point "${op}" needs a tag with role ${needs[op]?.join(' or ')} on machine "${m.id}"`,
      });
    }
  });

  const site = input.site;
  if (site.barometerTag !== undefined) {
    const baro = tags.find((t) => t.name === site.barometerTag);
    if (baro === undefined)
      issues.push({ path: 'site.barometerTag', message: `no tag named "${site.barometerTag}"` });
    else if (baro.role !== 'ambientPressure') {
      issues.push({
        path: 'site.barometerTag',
        message: `tag "${baro.name}" has role ${baro.role}, expected ambientPressure`,
      });
    }
  }
  if (site.ambientPressure === undefined && site.barometerTag === undefined) {
    const gauge = tags.find((t) => unitDimension(t.unit) === 'gaugePressure');
    if (gauge !== undefined) {
      issues.push({
        path: 'site',
        message: `tag "${gauge.name}" is in gauge unit ${gauge.unit}: give site.ambientPressure or site.barometerTag`,
      });
    }
  }
  const sourceIds = new Set<string>();
  input.sources.forEach((s, i) => {
    if (sourceIds.has(s.id))
      issues.push({ path: `sources[${i}].id`, message: `source id "${s.id}" is used twice` });
    sourceIds.add(s.id);
  });

  if (issues.length > 0) throw new PlantFileError(fileName, issues);
  return { version: input.version, site, machines, tags, sources: input.sources };
}

/** Reads and validates a plant file from disk (YAML or JSON). */
export async function loadPlantFile(path: string): Promise<PlantFile> {
  let text: string;
  try {
    text = await readFile(path, 'utf8');
  } catch (err) {
    const reason = err instanceof Error ? err.message : String(err);
    throw new PlantFileError(
      path,
      [{ path: '', message: `cannot read the file: ${reason}` }],
      'PLANT_FILE_UNREADABLE',
    );
  }
  return parsePlantFile(text, path);
}
