import { describe, expect, it } from 'vitest';
import { saturationPressure, saturationTemperature, waterPT } from './index.js';
import { backwardT1PH, backwardT1PS } from './region1.js';
import { backwardT2PH, backwardT2PS, hB2bc, pB2bc } from './region2.js';
import {
  backwardT3PH,
  backwardT3PS,
  backwardV3PH,
  backwardV3PS,
  backwardV3PT,
  h3ab,
  subregion3,
  subregionName,
  t3ef,
  t3Log,
  t3Poly,
} from './region3-backward.js';
import { pB23, tB23 } from './region4.js';

/**
 * The computer-program verification values printed in IAPWS R7-97(2012) and its supplementary
 * releases SR3-03 and SR5-05. Published values carry 9 (SR: 10) significant figures; the checks
 * allow 1e-8 relative, which is wider than the rounding of the printed digits and far narrower
 * than any coefficient typo would give.
 */
const TOL = 1e-8;

function expectRel(actual: number, expected: number, tol = TOL): void {
  const rel = Math.abs(actual - expected) / Math.abs(expected);
  if (!(rel <= tol)) {
    throw new Error(`expected ${expected}, got ${actual} (relative error ${rel.toExponential(2)} > ${tol})`);
  }
  expect(rel).toBeLessThanOrEqual(tol);
}

/** One row of a forward verification table in the release's units: T [K], p [MPa], v [m3/kg], h, u [kJ/kg], s, cp [kJ/(kg K)], w [m/s]. */
type Row = [T: number, p: number, v: number, h: number, u: number, s: number, cp: number, w: number];

function checkRows(rows: readonly Row[], region: number): void {
  for (const [T, p, v, h, u, s, cp, w] of rows) {
    const st = waterPT(p * 1e6, T);
    expect(st.region).toBe(region);
    expectRel(st.v, v);
    expectRel(st.h, h * 1e3);
    expectRel(st.u, u * 1e3);
    expectRel(st.s, s * 1e3);
    expectRel(st.cp!, cp * 1e3);
    expectRel(st.w!, w);
  }
}

describe('IAPWS-IF97 forward equations', () => {
  it('region 1 matches R7-97(2012) Table 5', () => {
    // Source: IAPWS R7-97(2012) Table 5.
    checkRows(
      [
        [300, 3, 0.100215168e-2, 0.115331273e3, 0.112324818e3, 0.392294792, 0.417301218e1, 0.150773921e4],
        [300, 80, 0.971180894e-3, 0.184142828e3, 0.106448356e3, 0.368563852, 0.401008987e1, 0.163469054e4],
        [500, 3, 0.1202418e-2, 0.975542239e3, 0.971934985e3, 0.258041912e1, 0.465580682e1, 0.124071337e4],
      ],
      1,
    );
  });

  it('region 2 matches R7-97(2012) Table 15', () => {
    // Source: IAPWS R7-97(2012) Table 15.
    checkRows(
      [
        [
          300, 0.0035, 0.394913866e2, 0.254991145e4, 0.24116916e4, 0.852238967e1, 0.191300162e1,
          0.427920172e3,
        ],
        [
          700, 0.0035, 0.923015898e2, 0.333568375e4, 0.301262819e4, 0.101749996e2, 0.208141274e1,
          0.644289068e3,
        ],
        [700, 30, 0.542946619e-2, 0.263149474e4, 0.246861076e4, 0.517540298e1, 0.103505092e2, 0.480386523e3],
      ],
      2,
    );
  });

  it('region 3 matches R7-97(2012) Table 33 (input rho, T; here p from the table, rho solved)', () => {
    // Source: IAPWS R7-97(2012) Table 33, rows (rho, T) = (500, 650), (200, 650), (500, 750).
    // The table gives p for (rho, T); waterPT solves rho back from (p, T), so v = 1/rho is checked too.
    const rows: Row[] = [
      [
        650,
        0.255837018e2,
        1 / 500,
        0.186343019e4,
        0.181226279e4,
        0.405427273e1,
        0.138935717e2,
        0.502005554e3,
      ],
      [
        650,
        0.222930643e2,
        1 / 200,
        0.237512401e4,
        0.226365868e4,
        0.485438792e1,
        0.446579342e2,
        0.383444594e3,
      ],
      [
        750,
        0.783095639e2,
        1 / 500,
        0.225868845e4,
        0.210206932e4,
        0.446971906e1,
        0.634165359e1,
        0.760696041e3,
      ],
    ];
    // Looser on v and properties near the critical point: p is printed to 9 digits, and
    // d(ln v)/d(ln p) at (200 kg/m3, 650 K) is about 1/(rho dp/drho / p) ~ 20, so 9 printed
    // digits of p fix v only to ~1e-8 * 20.
    for (const [T, p, v, h, u, s, cp, w] of rows) {
      const st = waterPT(p * 1e6, T);
      expect(st.region).toBe(3);
      const tol = T === 650 && v === 1 / 200 ? 1e-7 : 2e-8;
      expectRel(st.v, v, tol);
      expectRel(st.h, h * 1e3, tol);
      expectRel(st.u, u * 1e3, tol);
      expectRel(st.s, s * 1e3, tol);
      expectRel(st.cp!, cp * 1e3, tol * 10);
      expectRel(st.w!, w, tol);
    }
  });

  it('region 5 matches R7-97(2012) Table 42', () => {
    // Source: IAPWS R7-97(2012) Table 42.
    checkRows(
      [
        [1500, 0.5, 0.13845509e1, 0.521976855e4, 0.45274931e4, 0.965408875e1, 0.261609445e1, 0.91706869e3],
        [1500, 30, 0.230761299e-1, 0.516723514e4, 0.447495124e4, 0.772970133e1, 0.272724317e1, 0.928548002e3],
        [2000, 30, 0.311385219e-1, 0.657122604e4, 0.563707038e4, 0.853640523e1, 0.288569882e1, 0.106736948e4],
      ],
      5,
    );
  });
});

describe('IAPWS-IF97 boundaries and saturation line', () => {
  it('B23 matches the R7-97(2012) check point below Eq. (6)', () => {
    // Source: IAPWS R7-97(2012) Section 4: T = 623.15 K gives p = 16.5291643 MPa.
    expectRel(pB23(623.15), 16.5291643e6);
    expectRel(tB23(16.5291643e6), 623.15);
  });

  it('saturation pressure matches R7-97(2012) Table 35', () => {
    // Source: IAPWS R7-97(2012) Table 35.
    expectRel(saturationPressure(300), 0.353658941e-2 * 1e6);
    expectRel(saturationPressure(500), 0.263889776e1 * 1e6);
    expectRel(saturationPressure(600), 0.123443146e2 * 1e6);
  });

  it('saturation temperature matches R7-97(2012) Table 36', () => {
    // Source: IAPWS R7-97(2012) Table 36.
    expectRel(saturationTemperature(0.1e6), 0.372755919e3);
    expectRel(saturationTemperature(1e6), 0.453035632e3);
    expectRel(saturationTemperature(10e6), 0.584149488e3);
  });
});

describe('IAPWS-IF97 backward equations (raw output against published digits)', () => {
  it('region 1 T(p,h) matches R7-97(2012) Table 7', () => {
    // Source: IAPWS R7-97(2012) Table 7.
    expectRel(backwardT1PH(3e6, 500e3), 0.391798509e3);
    expectRel(backwardT1PH(80e6, 500e3), 0.378108626e3);
    expectRel(backwardT1PH(80e6, 1500e3), 0.611041229e3);
  });

  it('region 1 T(p,s) matches R7-97(2012) Table 9', () => {
    // Source: IAPWS R7-97(2012) Table 9.
    expectRel(backwardT1PS(3e6, 0.5e3), 0.307842258e3);
    expectRel(backwardT1PS(80e6, 0.5e3), 0.309979785e3);
    expectRel(backwardT1PS(80e6, 3e3), 0.565899909e3);
  });

  it('B2bc matches the R7-97(2012) check point below Eq. (21)', () => {
    // Source: IAPWS R7-97(2012) Section 6.3.1: h = 0.3516004323e4 kJ/kg gives p = 100 MPa.
    expectRel(pB2bc(0.3516004323e7), 100e6);
    expectRel(hB2bc(100e6), 0.3516004323e7);
  });

  it('region 2 T(p,h) matches R7-97(2012) Table 24', () => {
    // Source: IAPWS R7-97(2012) Table 24 (subregions 2a, 2b, 2c).
    const rows: [number, number, number][] = [
      [0.001, 3000, 0.534433241e3],
      [3, 3000, 0.57537337e3],
      [3, 4000, 0.101077577e4],
      [5, 3500, 0.801299102e3],
      [5, 4000, 0.101531583e4],
      [25, 3500, 0.875279054e3],
      [40, 2700, 0.743056411e3],
      [60, 2700, 0.791137067e3],
      [60, 3200, 0.88275686e3],
    ];
    for (const [p, h, T] of rows) expectRel(backwardT2PH(p * 1e6, h * 1e3), T);
  });

  it('region 2 T(p,s) matches R7-97(2012) Table 29', () => {
    // Source: IAPWS R7-97(2012) Table 29 (subregions 2a, 2b, 2c).
    const rows: [number, number, number][] = [
      [0.1, 7.5, 0.399517097e3],
      [0.1, 8, 0.514127081e3],
      [2.5, 8, 0.103984917e4],
      [8, 6, 0.60048404e3],
      [8, 7.5, 0.106495556e4],
      [90, 6, 0.103801126e4],
      [20, 5.75, 0.697992849e3],
      [80, 5.25, 0.854011484e3],
      [80, 5.75, 0.949017998e3],
    ];
    for (const [p, s, T] of rows) expectRel(backwardT2PS(p * 1e6, s * 1e3), T);
  });
});

describe('IAPWS SR3-03 region 3 backward equations', () => {
  it('h3ab matches SR3-03 check point below Eq. (1)', () => {
    // Source: IAPWS SR3-03 Section 3.1: p = 25 MPa gives h = 2095.936454 kJ/kg.
    expectRel(h3ab(25e6), 2095.936454e3);
  });

  it('T(p,h) and v(p,h) match SR3-03 Tables 5 and 8', () => {
    // Source: IAPWS SR3-03 Table 5 (T) and Table 8 (v).
    const rows: [number, number, number, number][] = [
      [20, 1700, 629.3083892, 1.749903962e-3],
      [50, 2000, 690.5718338, 1.908139035e-3],
      [100, 2100, 733.6163014, 1.676229776e-3],
      [20, 2500, 641.8418053, 6.670547043e-3],
      [50, 2400, 735.1848618, 2.80124459e-3],
      [100, 2700, 842.0460876, 2.404234998e-3],
    ];
    for (const [p, h, T, v] of rows) {
      expectRel(backwardT3PH(p * 1e6, h * 1e3), T);
      expectRel(backwardV3PH(p * 1e6, h * 1e3), v);
    }
  });

  it('T(p,s) and v(p,s) match SR3-03 Tables 12 and 15', () => {
    // Source: IAPWS SR3-03 Table 12 (T) and Table 15 (v).
    const rows: [number, number, number, number][] = [
      [20, 3.8, 628.2959869, 1.733791463e-3],
      [50, 3.6, 629.7158726, 1.46968017e-3],
      [100, 4.0, 705.6880237, 1.555893131e-3],
      [20, 5.0, 640.1176443, 6.262101987e-3],
      [50, 4.5, 716.3687517, 2.332634294e-3],
      [100, 5.0, 847.4332825, 2.449610757e-3],
    ];
    for (const [p, s, T, v] of rows) {
      expectRel(backwardT3PS(p * 1e6, s * 1e3), T);
      expectRel(backwardV3PS(p * 1e6, s * 1e3), v);
    }
  });
});

describe('IAPWS SR5-05 region 3 backward v(p,T)', () => {
  it('subregion boundaries match SR5-05 Tables 3 and 11', () => {
    // Source: IAPWS SR5-05 Table 3 (T3ab ... T3rx) and Table 11 (T3uv, T3wx).
    expectRel(t3Log('ab', 40e6), 693.0341408);
    expectRel(t3Poly('cd', 25e6), 649.3659208);
    expectRel(t3ef(40e6), 713.9593992);
    expectRel(t3Poly('gh', 23e6), 649.8873759);
    expectRel(t3Poly('ij', 23e6), 651.5778091);
    expectRel(t3Poly('jk', 23e6), 655.8338344);
    expectRel(t3Poly('mn', 22.8e6), 649.6054133);
    expectRel(t3Log('op', 22.8e6), 650.0106943);
    expectRel(t3Poly('qu', 22e6), 645.6355027);
    expectRel(t3Poly('rx', 22e6), 648.2622754);
    expectRel(t3Poly('uv', 22.3e6), 647.7996121);
    expectRel(t3Log('wx', 22.3e6), 648.204948);
  });

  it('v(p,T) and the subregion choice match SR5-05 Tables 5 and 13', () => {
    // Source: IAPWS SR5-05 Table 5 (subregions 3a to 3t) and Table 13 (3u to 3z): [p MPa, T K, v m3/kg, subregion].
    const rows: [number, number, number, string][] = [
      [50, 630, 1.4708531e-3, '3a'],
      [80, 670, 1.503831359e-3, '3a'],
      [50, 710, 2.204728587e-3, '3b'],
      [80, 750, 1.97369294e-3, '3b'],
      [20, 630, 1.761696406e-3, '3c'],
      [30, 650, 1.819560617e-3, '3c'],
      [26, 656, 2.24558772e-3, '3d'],
      [30, 670, 2.506897702e-3, '3d'],
      [26, 661, 2.970225962e-3, '3e'],
      [30, 675, 3.004627086e-3, '3e'],
      [26, 671, 5.019029401e-3, '3f'],
      [30, 690, 4.656470142e-3, '3f'],
      [23.6, 649, 2.163198378e-3, '3g'],
      [24, 650, 2.166044161e-3, '3g'],
      [23.6, 652, 2.651081407e-3, '3h'],
      [24, 654, 2.967802335e-3, '3h'],
      [23.6, 653, 3.273916816e-3, '3i'],
      [24, 655, 3.550329864e-3, '3i'],
      [23.5, 655, 4.545001142e-3, '3j'],
      [24, 660, 5.100267704e-3, '3j'],
      [23, 660, 6.109525997e-3, '3k'],
      [24, 670, 6.427325645e-3, '3k'],
      [22.6, 646, 2.117860851e-3, '3l'],
      [23, 646, 2.062374674e-3, '3l'],
      [22.6, 648.6, 2.53306378e-3, '3m'],
      [22.8, 649.3, 2.572971781e-3, '3m'],
      [22.6, 649.0, 2.923432711e-3, '3n'],
      [22.8, 649.7, 2.913311494e-3, '3n'],
      [22.6, 649.1, 3.131208996e-3, '3o'],
      [22.8, 649.9, 3.221160278e-3, '3o'],
      [22.6, 649.4, 3.715596186e-3, '3p'],
      [22.8, 650.2, 3.66475479e-3, '3p'],
      [21.1, 640, 1.970999272e-3, '3q'],
      [21.8, 643, 2.043919161e-3, '3q'],
      [21.1, 644, 5.251009921e-3, '3r'],
      [21.8, 648, 5.256844741e-3, '3r'],
      [19.1, 635, 1.932829079e-3, '3s'],
      [20, 638, 1.985387227e-3, '3s'],
      [17, 626, 8.483262001e-3, '3t'],
      [20, 640, 6.227528101e-3, '3t'],
      [21.5, 644.6, 2.268366647e-3, '3u'],
      [22, 646.1, 2.296350553e-3, '3u'],
      [22.5, 648.6, 2.83237326e-3, '3v'],
      [22.3, 647.9, 2.811424405e-3, '3v'],
      [22.15, 647.5, 3.694032281e-3, '3w'],
      [22.3, 648.1, 3.622226305e-3, '3w'],
      [22.11, 648, 4.528072649e-3, '3x'],
      [22.3, 649, 4.556905799e-3, '3x'],
      [22, 646.84, 2.698354719e-3, '3y'],
      [22.064, 647.05, 2.717655648e-3, '3y'],
      [22, 646.89, 3.798732962e-3, '3z'],
      [22.064, 647.15, 3.701940009e-3, '3z'],
    ];
    for (const [p, T, v, name] of rows) {
      expect(subregionName(subregion3(p * 1e6, T))).toBe(name);
      expectRel(backwardV3PT(p * 1e6, T), v);
    }
  });
});
