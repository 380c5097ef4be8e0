/**
 * Module-level result buffers shared by the Gibbs regions (1, 2 and 5), so the hot path
 * allocates nothing. JavaScript runs one call at a time, and each buffer is read right after
 * the call that fills it.
 */

/**
 * Full set of dimensionless Gibbs derivatives of the last evaluation:
 * [gamma, gamma_pi, gamma_pipi, gamma_tau, gamma_tautau, gamma_pitau, pi, tau]
 * (ideal-gas part included for regions 2 and 5).
 */
export const G = new Float64Array(8);

/** Temperature derivatives only of the last evaluation: [gamma, gamma_tau, gamma_tautau, tau]. */
export const GT = new Float64Array(4);
