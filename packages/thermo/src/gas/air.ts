import { BadInputError } from '../errors.js';
import { saturationPressure } from '../steam/index.js';
import { type GasModel, idealGasMixture, pengRobinsonMixture } from './mixture.js';
import { normaliseComposition, SPECIES, type SpeciesId } from './species.js';

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

/** Ratio of the molar masses of water and dry air, about 0.622 (ASHRAE Handbook Fundamentals, ch. 1). */
function waterToAirMassRatio(): number {
  return SPECIES.H2O.molarMass / dryAir().molarMass;
}

/**
 * Humid air as an ideal-gas mixture of dry air and water vapour, from either
 * - relativeHumidity (a fraction 0..1, not %) at T [K] and p [Pa]: p_w = RH p_sat(T), with p_sat
 *   from IAPWS-IF97 (R7-97(2012) Eq. 30) and the enhancement factor taken as 1 (it is about 1.004
 *   near 1 atm, ASHRAE Handbook Fundamentals ch. 1), or
 * - humidityRatio W [kg water/kg dry air]: x_w = (W/M_w)/(W/M_w + 1/M_a).
 * Water stays vapour in this model: a state below its dew point is not detected.
 */
export function humidAir(
  options:
    | { readonly relativeHumidity: number; readonly T: number; readonly p: number }
    | { readonly humidityRatio: number },
): GasModel {
  let xWater: number;
  let label: string;
  if ('humidityRatio' in options) {
    const W = options.humidityRatio;
    if (!(W >= 0 && Number.isFinite(W)))
      throw new BadInputError('humidityRatio', `must be >= 0 kg/kg, got ${W}`);
    const nw = W / waterToAirMassRatio();
    xWater = nw / (nw + 1);
    label = `humid air (W = ${W} kg/kg)`;
  } else {
    const { relativeHumidity: rh, T, p } = options;
    if (!(rh >= 0 && rh <= 1)) {
      throw new BadInputError('relativeHumidity', `is a fraction from 0 to 1 (not %), got ${rh}`);
    }
    if (!(p > 0 && Number.isFinite(p)))
      throw new BadInputError('p', `must be a positive pressure in Pa, got ${p}`);
    xWater = (rh * saturationPressure(T)) / p;
    if (!(xWater < 1)) {
      throw new BadInputError('relativeHumidity', `water partial pressure exceeds p = ${p} Pa at T = ${T} K`);
    }
    label = `humid air (RH ${(rh * 100).toPrecision(3)} % at ${T} K, ${p} Pa)`;
  }
  const dry = normaliseComposition(DRY_AIR);
  const composition: Record<string, number> = { H2O: xWater };
  for (const [id, x] of Object.entries(dry)) composition[id] = (x ?? 0) * (1 - xWater);
  return idealGasMixture(composition, label);
}

/** Humidity ratio W [kg water/kg dry air] of a humid-air model (inverse of the humidityRatio input). */
export function humidityRatio(gas: GasModel): number {
  const xw = gas.composition.H2O ?? 0;
  return (waterToAirMassRatio() * xw) / (1 - xw);
}
