import type { Fluid } from '../fluid.js';
import type { MachineResult } from '../machines/types.js';
import { saturatedLiquid, saturatedVapour } from '../steam/index.js';
import { type HsChart, type HsChartOptions, hsChartGeometry, type SaturationLine } from './chart.js';

export * from './chart.js';

/** IF97 saturation line (R7-97(2012) region 4) for the dome. */
export const waterSaturation: SaturationLine = (p) => ({
  liquid: saturatedLiquid(p),
  vapour: saturatedVapour(p),
});

/**
 * The h-s chart of a machine's process: hsChartGeometry, with the IF97 saturation dome drawn
 * when the fluid is water (unless options.saturation says otherwise).
 */
export function hsChart(result: MachineResult, fluid: Fluid, options: HsChartOptions = {}): HsChart {
  const saturation = options.saturation ?? (fluid.kind === 'water' ? waterSaturation : undefined);
  return hsChartGeometry(result, fluid, { ...options, saturation });
}
