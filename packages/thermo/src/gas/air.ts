import { type GasModel, idealGasMixture, pengRobinsonMixture } from './mixture.js';
import type { SpeciesId } from './species.js';

/**
 * Dry air by mole fraction: N2 0.78084, O2 0.209476, Ar 0.00934 as in the U.S. Standard
 * Atmosphere 1976 (NOAA/NASA/USAF, Table 3), CO2 raised to 0.000400 (400 ppm, the present level
 * rather than 1976's 314 ppm); the trace gases are left out and the four normalised to 1.
 */
export const DRY_AIR: Readonly<Partial<Record<SpeciesId, number>>> = Object.freeze({
  N2: 0.78084,
  O2: 0.209476,
  Ar: 0.00934,
  CO2: 0.0004,
});

let dryAirModel: GasModel | undefined;

/** Dry air as an ideal-gas mixture (NASA polynomials). The model is built once and shared. */
export function dryAir(): GasModel {
  dryAirModel ??= idealGasMixture(DRY_AIR, 'dry air (ideal gas, NASA polynomials)');
  return dryAirModel;
}

/**
 * Natural gas (or any fuel or process gas) from a composition by mole fraction, e.g.
 * { methane: 0.9, ethane: 0.05, nC4: 0.01, N2: 0.04 }. Sums within 1 % of 1 are normalised;
 * otherwise GAS_COMPOSITION_SUM. Use 'peng-robinson' at pipeline pressures.
 */
export function naturalGas(
  composition: Readonly<Record<string, number>>,
  model: 'ideal' | 'peng-robinson',
  options?: { readonly unit?: 'fraction' | 'percent'; readonly kij?: Readonly<Record<string, number>> },
): GasModel {
  return model === 'ideal'
    ? idealGasMixture(composition, undefined, options)
    : pengRobinsonMixture(composition, options);
}
