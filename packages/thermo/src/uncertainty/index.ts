export { type GumResult, type ModelOutput, propagateGum } from './gum.js';
export * from './machine.js';
export {
  gaussian,
  type MonteCarloOptions,
  type MonteCarloSummary,
  mulberry32,
  propagateMonteCarlo,
} from './monte-carlo.js';
