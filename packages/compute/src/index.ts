/**
 * @isentrope/compute: the compute pipeline, pure (no I/O, no clock; times are epoch milliseconds).
 *
 *   prepareMachine (tag units -> SI maps, uncertainties, config hash)
 *   -> computeRangeInto: alignTags -> validateAligned -> detectSteadyState -> machine model with
 *      GUM uncertainty per point (linearised per operating point) -> one result row per grid point,
 *      carrying the flags of the stored instrument findings (findingFlags);
 *   instrument step: findGaugeAbsoluteSteps -> planFindings (new, reverting, seen) -> crossCheckStep.
 * services/jobs reads the samples and findings, schedules, and writes what this returns.
 */

export { alignQuality } from './chunk.js';
export * from './errors.js';
export * from './findings.js';
export * from './instrument.js';
export * from './linearise.js';
export * from './machine.js';
export * from './options.js';
export * from './pipeline.js';
