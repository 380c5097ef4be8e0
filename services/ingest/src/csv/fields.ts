/** Decoding the cells of a CSV record: values, quality codes and units. */
import { canonicalUnit } from '@isentrope/thermo';
import { QUALITY } from '../types.js';
import { isStorableValue, tooLargeReason } from '../values.js';

const NUMBER = /^[+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?$/;
const NON_FINITE = /^[+-]?(?:nan|inf|infinity|1\.#inf|1\.#ind|1\.#qnan|#n\/a|#num!|#div\/0!|#value!)$/i;

export type ValueResult =
  | { ok: true; value: number }
  | { ok: false; code: 'bad-value' | 'non-finite-value' | 'value-too-large'; reason: string };

export function parseValue(cell: string, decimalComma: boolean): ValueResult {
  let text = cell;
  if (decimalComma) {
    if (text.includes('.'))
      return {
        ok: false,
        code: 'bad-value',
        reason: `"${cell}" has a point, but this source writes a decimal comma`,
      };
    text = text.replace(',', '.');
  }
  if (NUMBER.test(text)) {
    const value = Number(text);
    if (isStorableValue(value)) return { ok: true, value };
    if (Number.isFinite(value))
      return { ok: false, code: 'value-too-large', reason: tooLargeReason(`"${cell}"`) };
    return { ok: false, code: 'non-finite-value', reason: `"${cell}" overflows a double` };
  }
  if (NON_FINITE.test(text))
    return { ok: false, code: 'non-finite-value', reason: `"${cell}" is not a finite number` };
  return { ok: false, code: 'bad-value', reason: `"${cell}" is not a number` };
}

/** Quality cell of a long file: a code 0..255 (OPC DA) or good / uncertain / bad; empty = good. */
export function parseQuality(cell: string): number | undefined {
  if (cell === '') return QUALITY.good;
  const word = cell.toLowerCase();
  if (word === 'good') return QUALITY.good;
  if (word === 'uncertain') return QUALITY.uncertain;
  if (word === 'bad') return QUALITY.bad;
  if (/^\d{1,3}$/.test(cell)) {
    const q = Number(cell);
    return q <= 255 ? q : undefined;
  }
  return undefined;
}

/** Same unit by canonical spelling; a unit the registry does not know matches nothing. */
export function sameUnit(a: string, b: string): boolean {
  try {
    return canonicalUnit(a) === canonicalUnit(b);
  } catch {
    return false;
  }
}
