import { evaluateCompressor } from './compressor.js';
import { evaluateFan } from './fan.js';
import { evaluatePump } from './pump.js';
import { evaluateTurbine } from './turbine.js';
import type { MachineInput, MachineResult } from './types.js';

export { DEFAULT_ENTROPY_TOLERANCE, DEFAULT_WET_MARGIN, LOW_HEAD_RATIO } from './common.js';
export { evaluateCompressor } from './compressor.js';
export { compressibilityCoefficient, evaluateFan } from './fan.js';
export { evaluatePump, STANDARD_GRAVITY } from './pump.js';
export { type PolytropicResult, polytropicEfficiencyIdealGas, schultzPolytropic } from './schultz.js';
export { evaluateTurbine } from './turbine.js';
export * from './types.js';

/** One entry point for every machine kind. */
export function evaluateMachine(input: MachineInput): MachineResult {
  switch (input.kind) {
    case 'turbine':
      return evaluateTurbine(input);
    case 'compressor':
      return evaluateCompressor(input);
    case 'pump':
      return evaluatePump(input);
    case 'fan':
      return evaluateFan(input);
  }
}
