import type { FluidSpec } from '@isentrope/plant';
import {
  dryAir,
  type Fluid,
  incompressibleLiquid,
  naturalGas,
  type SaturationLine,
  saturatedLiquid,
  saturatedVapour,
  water,
} from '@isentrope/thermo';
import { ApiError } from '../errors.js';

/**
 * The property model of a machine's fluid spec (packages/plant fluidSchema): the same thermo models
 * the compute job uses, so the stored h and s lie on the chart's isobars (same reference states).
 */
export function fluidFor(spec: unknown): { fluid: Fluid; saturation: SaturationLine | undefined } {
  const s = spec as FluidSpec;
  if (s === 'water')
    return {
      fluid: water,
      saturation: (p: number) => ({ liquid: saturatedLiquid(p), vapour: saturatedVapour(p) }),
    };
  if (s === 'air') return { fluid: dryAir(), saturation: undefined };
  if (typeof s === 'object' && s !== null) {
    if ('liquid' in s)
      return { fluid: incompressibleLiquid(s.liquid.density, s.liquid.cp), saturation: undefined };
    if ('composition' in s) return { fluid: naturalGas(s.composition, s.model), saturation: undefined };
  }
  throw new ApiError('API_UNPROCESSABLE', { reason: `unknown fluid spec ${JSON.stringify(spec)}` });
}
