#!/usr/bin/python3
"""Reference states of water and steam for the IAPWS-IF97 tests, made with python3-iapws.

Run with the Debian interpreter (the package is python3-iapws):
    /usr/bin/python3 packages/thermo/scripts/make-iapws-fixture.py
It writes packages/thermo/src/steam/fixtures/iapws97-reference.json. The seed is fixed, so
a re-run gives the same file byte for byte (a test can regenerate and diff it).

Points come from the region functions of iapws.iapws97 (IAPWS97 uses the same ones):
regions 1, 2, 5 from (p, T); region 3 from (rho, T) through the basic Helmholtz equation, so
the stored p belongs exactly to the stored state; wet states from (p, x). Two-phase states
above psat(623.15 K) need saturated densities in region 3: iapws stops at the SR5-05 backward
value there, so this script refines that density with Newton steps on iapws' own region-3
pressure until p matches, and stores properties of the refined density.

SI units in the file: Pa, K, J/kg, J/(kg K), m3/kg, m/s.
"""

import json
import math
import os
import random

import iapws
from iapws import iapws97 as if97

SEED = 97
OUT = os.path.join(os.path.dirname(os.path.abspath(__file__)), '..', 'src', 'steam', 'fixtures',
                   'iapws97-reference.json')

rng = random.Random(SEED)
P_SAT_623 = if97._PSat_T(623.15)  # MPa
PC = 22.064  # MPa


def log_uniform(lo, hi):
    return math.exp(rng.uniform(math.log(lo), math.log(hi)))


def single(region, p_mpa, T, prop):
    return [region, p_mpa * 1e6, T, prop['v'], prop['h'] * 1e3, prop['s'] * 1e3, prop['cp'] * 1e3,
            prop['cv'] * 1e3, prop['w']]


def region3_density(p_mpa, T, rho):
    """Newton on iapws' region-3 pressure: drho = (p - p(rho)) rho kt, until p matches to 1e-13."""
    for _ in range(100):
        st = if97._Region3(rho, T)
        if abs(st['P'] - p_mpa) <= 1e-13 * p_mpa:
            return rho
        rho += (p_mpa - st['P']) * rho * st['kt']
    raise RuntimeError('no convergence at p = %r MPa, T = %r K' % (p_mpa, T))


points = []

# Region 1: 273.15 K..623.15 K, psat(T) < p <= 100 MPa.
for _ in range(450):
    T = rng.uniform(273.15, 623.15)
    p = rng.uniform(max(if97._PSat_T(T), 1e-3) * 1.0001, 100.0)
    points.append(single(1, p, T, if97._Region1(T, p)))

# Region 2: below the saturation line, the B23 line, or 100 MPa above 863.15 K.
for _ in range(500):
    T = rng.uniform(273.15, 1073.15)
    if T <= 623.15:
        top = if97._PSat_T(T) * 0.9999
    elif T <= 863.15:
        top = if97._P23_T(T) * 0.9999
    else:
        top = 100.0
    p = log_uniform(1e-4, top)
    points.append(single(2, p, T, if97._Region2(T, p)))

# Close to the saturation line on both sides (0.01 % to 1 % away in pressure).
for _ in range(200):
    T = rng.uniform(273.16, 623.0)
    ps = if97._PSat_T(T)
    f = log_uniform(1e-4, 1e-2)
    if rng.random() < 0.5:
        points.append(single(1, ps * (1 + f), T, if97._Region1(T, ps * (1 + f))))
    else:
        points.append(single(2, ps * (1 - f), T, if97._Region2(T, ps * (1 - f))))

# Region 3 from (rho, T), including a near-critical band; kept when (p, T) lies in region 3
# and on the stable branch that the SR5-05 backward equation picks (within 2 % of rho).
made = 0
while made < 450:
    if made < 300:
        T = rng.uniform(623.15, 863.15)
        rho = rng.uniform(90.0, 760.0)
    else:
        T = rng.uniform(640.0, 660.0)
        rho = rng.uniform(200.0, 450.0)
    st = if97._Region3(rho, T)
    p = st['P']
    if not (if97._P23_T(T) < p <= 100.0) or st['kt'] <= 0:
        continue
    if T < 647.096 and p < P_SAT_623:
        continue
    try:
        v_back = if97._Backward3_v_PT(p, T)
    except Exception:
        continue
    if abs(1.0 / v_back - rho) > 0.02 * rho:
        continue
    points.append(single(3, p, T, st))
    made += 1

# Region 5: 1073.15 K..2273.15 K, up to 50 MPa.
for _ in range(220):
    T = rng.uniform(1073.15, 2273.15)
    p = log_uniform(1e-3, 50.0)
    points.append(single(5, p, T, if97._Region5(T, p)))

# Wet states: 611.3 Pa..22.0 MPa, quality 0..1.
wet = []
for k in range(350):
    p = log_uniform(611.3e-6, 22.0) if k < 300 else rng.uniform(P_SAT_623, 22.0)
    x = rng.random()
    T = if97._TSat_P(p)
    if p <= P_SAT_623:
        liq = if97._Region1(T, p)
        vap = if97._Region2(T, p)
    else:
        liq = if97._Region3(region3_density(p, T, 1.0 / if97._Backward3_sat_v_P(p, T, 0)), T)
        vap = if97._Region3(region3_density(p, T, 1.0 / if97._Backward3_sat_v_P(p, T, 1)), T)

    def mix(key):
        return liq[key] + x * (vap[key] - liq[key])

    wet.append([p * 1e6, x, T, mix('v'), mix('h') * 1e3, mix('s') * 1e3])

doc = {
    'source': 'python3-iapws %s, iapws.iapws97 region functions (IAPWS R7-97(2012)); made by '
              'packages/thermo/scripts/make-iapws-fixture.py, seed %d' % (iapws.__version__, SEED),
    'single_columns': ['region', 'p_Pa', 'T_K', 'v_m3_per_kg', 'h_J_per_kg', 's_J_per_kgK',
                       'cp_J_per_kgK', 'cv_J_per_kgK', 'w_m_per_s'],
    'single': points,
    'wet_columns': ['p_Pa', 'x', 'T_K', 'v_m3_per_kg', 'h_J_per_kg', 's_J_per_kgK'],
    'wet': wet,
}
os.makedirs(os.path.dirname(OUT), exist_ok=True)
with open(OUT, 'w') as f:
    json.dump(doc, f, indent=0, separators=(',', ':'))
    f.write('\n')
print('wrote %d single-phase and %d wet states to %s' % (len(points), len(wet), os.path.normpath(OUT)))


# ---------------------------------------------------------------------------------------------
# Machine cases: the steam states of the machine tests (a turbine and a feed pump whose inputs
# follow common textbook examples), so their expected figures come from the reference library
# and not from printed tables. Written to src/steam/fixtures/machine-cases.json; no random numbers.
# ---------------------------------------------------------------------------------------------

CASES_OUT = os.path.join(os.path.dirname(OUT), 'machine-cases.json')


def state(p_pa, T, prop):
    return {'p': p_pa, 'T': T, 'h': prop['h'] * 1e3, 's': prop['s'] * 1e3, 'v': prop['v']}


def saturation(p_pa):
    """Saturated liquid and vapour at p (regions 1 and 2, p below psat(623.15 K))."""
    T = if97._TSat_P(p_pa / 1e6)
    liq = if97._Region1(T, p_pa / 1e6)
    vap = if97._Region2(T, p_pa / 1e6)
    return {'p': p_pa, 'T': T, 'hf': liq['h'] * 1e3, 'hg': vap['h'] * 1e3, 'sf': liq['s'] * 1e3,
            'sg': vap['s'] * 1e3, 'vf': liq['v']}


def region1_T_ps(p_pa, s_target, T):
    """Newton on iapws' region-1 entropy: dT = (s_target - s) T / cp, until s matches to 1e-13."""
    for _ in range(50):
        st = if97._Region1(T, p_pa / 1e6)
        if abs(st['s'] * 1e3 - s_target) <= 1e-13 * abs(s_target):
            return T
        T += (s_target - st['s'] * 1e3) * T / (st['cp'] * 1e3)
    raise RuntimeError('no convergence at p = %r Pa, s = %r J/(kg K)' % (p_pa, s_target))


def region(p_pa, T):
    return iapws.IAPWS97(P=p_pa / 1e6, T=T).region


# Turbine: 3 MPa, 400 degC in; 50 kPa, 100 degC out (superheated); ideal outlet at (50 kPa, s_in).
t_in = (3e6, 673.15)
t_out = (50e3, 373.15)
assert region(*t_in) == 2 and region(*t_out) == 2
turbine_in = state(*t_in, if97._Region2(t_in[1], t_in[0] / 1e6))
turbine_out = state(*t_out, if97._Region2(t_out[1], t_out[0] / 1e6))
sat50 = saturation(50e3)
x2s = (turbine_in['s'] - sat50['sf']) / (sat50['sg'] - sat50['sf'])
assert 0 < x2s < 1
turbine_out_s = {'p': 50e3, 'T': sat50['T'], 'x': x2s, 's': turbine_in['s'],
                 'h': sat50['hf'] + x2s * (sat50['hg'] - sat50['hf'])}

# Pump: liquid 0.05 K below saturation at 75 kPa, to 3 MPa; ideal outlet at (3 MPa, s_in).
sat75 = saturation(75e3)
p_in_T = sat75['T'] - 0.05
pump_in = state(75e3, p_in_T, if97._Region1(p_in_T, 0.075))
T2s = region1_T_ps(3e6, pump_in['s'], p_in_T)
assert region(3e6, T2s) == 1
pump_out_s = state(3e6, T2s, if97._Region1(T2s, 3.0))

cases = {
    'source': 'python3-iapws %s, iapws.iapws97 region functions (IAPWS R7-97(2012)); made by '
              'packages/thermo/scripts/make-iapws-fixture.py' % iapws.__version__,
    'units': {'p': 'Pa', 'T': 'K', 'h': 'J/kg', 's': 'J/(kg K)', 'v': 'm3/kg', 'x': '1'},
    'saturation': [saturation(10e3), sat50, sat75],
    'turbine': {'inlet': turbine_in, 'outlet': turbine_out, 'outletIsentropic': turbine_out_s},
    'pump': {'inlet': pump_in, 'outletIsentropic': pump_out_s},
}
with open(CASES_OUT, 'w') as f:
    json.dump(cases, f, indent=2)
    f.write('\n')
print('wrote the machine cases to %s' % os.path.normpath(CASES_OUT))
