/**
 * Constants of IAPWS-IF97 (IAPWS R7-97(2012), Section 3) and the validity limits of the
 * formulation (Section 4 and Figure 1). SI units: the release states them in kJ, MPa.
 */

/** Specific gas constant of ordinary water [J/(kg K)], R7-97(2012) Eq. (1). */
export const R = 461.526;
/** Critical temperature [K], R7-97(2012) Eq. (2). */
export const T_CRIT = 647.096;
/** Critical pressure [Pa], R7-97(2012) Eq. (3). */
export const P_CRIT = 22.064e6;
/** Critical density [kg/m3], R7-97(2012) Eq. (4). */
export const RHO_CRIT = 322;

/** Lowest temperature of the formulation [K]. */
export const T_MIN = 273.15;
/** Highest temperature of regions 1 to 3 [K]. */
export const T_MAX_2 = 1073.15;
/** Highest temperature of region 5 [K]. */
export const T_MAX_5 = 2273.15;
/** Highest pressure of regions 1 to 3 [Pa]. */
export const P_MAX = 100e6;
/** Highest pressure of region 5 [Pa]. */
export const P_MAX_5 = 50e6;
/** Temperature of the boundary between regions 1 and 3 [K]. */
export const T_13 = 623.15;
/** Temperature above which region 2 is bounded by 100 MPa instead of the B23 line [K]. */
export const T_B23_MAX = 863.15;

/** Name used in errors for the whole formulation. */
export const IF97 = 'IAPWS-IF97';
