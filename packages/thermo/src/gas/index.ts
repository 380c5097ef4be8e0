export * from './air.js';
export * from './errors.js';
export { type GasModel, idealGasMixture, type MixtureOptions, pengRobinsonMixture } from './mixture.js';
export { NASA7, type Nasa7Entry } from './nasa7.js';
export { PR_ZC } from './peng-robinson.js';
export {
  type NormaliseOptions,
  normaliseComposition,
  resolveSpecies,
  SPECIES,
  type SpeciesData,
  type SpeciesId,
  speciesList,
} from './species.js';
