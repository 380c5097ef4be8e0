#!/usr/bin/python3
"""Reference values for dry air from the Lemmon et al. (2000) equation of state
(Lemmon, Jacobsen, Penoncello and Friend, J. Phys. Chem. Ref. Data 29(3), 2000),
as implemented by python3-iapws (Debian package, module iapws.humidAir, class Air).

Writes src/gas/fixtures/air-lemmon2000.json and src/gas/fixtures/gas-cases.json (see below):
air-lemmon2000.json holds h [J/kg], s [J/(kg K)], cp [J/(kg K)] and Z
at 100 kPa from 250 K to 1000 K. Regenerate with:
    /usr/bin/python3 packages/thermo/scripts/make-air-fixture.py
then `git diff --quiet` must hold (the file is deterministic).
"""

import json
import math
import os

import iapws
from iapws import IAPWS95
from iapws.humidAir import Air, HumidAir, Ma, Mw
from scipy.optimize import fsolve

P_PA = 100_000.0
TEMPERATURES = [250.0 + 50.0 * i for i in range(16)]  # 250 .. 1000 K

points = []
for T in TEMPERATURES:
    a = Air(T=T, P=P_PA / 1e6)
    points.append(
        {
            "T": T,
            "p": P_PA,
            "h": round(a.h * 1e3, 6),
            "s": round(a.s * 1e3, 8),
            "cp": round(a.cp * 1e3, 6),
            "Z": round(a.Z, 10),
        }
    )

out = {
    "source": "Lemmon et al. (2000) dry-air equation of state via python3-iapws iapws.humidAir.Air",
    "iapwsVersion": iapws.__version__,
    "molarMass_g_per_mol": Air.M,
    "units": {"T": "K", "p": "Pa", "h": "J/kg", "s": "J/(kg K)", "cp": "J/(kg K)", "Z": "1"},
    "points": points,
}

path = os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "src", "gas", "fixtures", "air-lemmon2000.json")
with open(path, "w", encoding="utf-8") as f:
    json.dump(out, f, indent=2)
    f.write("\n")


# ---------------------------------------------------------------------------------------------
# Gas cases, written to src/gas/fixtures/gas-cases.json:
# 1. An air compressor whose inputs follow a common textbook example (100 kPa, 285 K to 800 kPa,
#    569.5 K, 0.2 kg/s), on the ideal-gas part of the Lemmon et al. (2000) equation (Air._prop0),
#    so the expected figures are those of ideal-gas air without any printed air table.
# 2. Saturated humid air at 20 degC, 101.325 kPa from iapws.humidAir.HumidAir (the IAPWS Guideline on
#    an Equation of State for Humid Air in Contact with Seawater and Ice, 2010; liquid water by
#    IAPWS-95 at equal chemical potential). HumidAir._eq
#    starts its solver from A = 0.95 and there wanders to A > 1 (a complex logarithm) at this state,
#    so the same two equations (equal chemical potential of water, p(rho, A) = p) are solved here
#    from the ideal-mixture estimate, and their residuals are checked.
# 3. Water vapour as an ideal gas at 298.15 K: cp0/R from the ideal-gas part of IAPWS-95
#    (IAPWS95._phi0), dimensionless so that it does not depend on the value of R.
# ---------------------------------------------------------------------------------------------

CASES = os.path.join(os.path.dirname(path), "gas-cases.json")
air = Air()


def ideal(T, p_pa):
    """Ideal-gas h [J/kg] and s [J/(kg K)] of Lemmon's air at T [K], p [Pa]."""
    rho = p_pa / 1e3 / (air.R * T)  # ideal-gas density [kg/m3], R in kJ/(kg K)
    st = air._prop0(rho, T)
    return st.h * 1e3, st.s * 1e3


def ideal_T_ps(p_pa, s_target, T):
    """Newton on the ideal-gas entropy: dT = (s_target - s) T / cp0, until s matches to 1e-12."""
    for _ in range(50):
        _, s = ideal(T, p_pa)
        if abs(s - s_target) <= 1e-12 * abs(s_target):
            return T
        rho = p_pa / 1e3 / (air.R * T)
        T += (s_target - s) * T / (air._prop0(rho, T).cp * 1e3)
    raise RuntimeError("no convergence at p = %r Pa, s = %r J/(kg K)" % (p_pa, s_target))


P1, T1, P2, T2, MDOT = 100e3, 285.0, 800e3, 569.5, 0.2
h1, s1 = ideal(T1, P1)
T2s = ideal_T_ps(P2, s1, T1 * (P2 / P1) ** (0.4 / 1.4))
h2s, _ = ideal(T2s, P2)
h2, _ = ideal(T2, P2)
compressor = {
    "p1": P1, "T1": T1, "p2": P2, "T2": T2, "massFlow": MDOT,
    "h1": h1, "h2": h2, "T2s": T2s, "h2s": h2s,
    "isentropicSpecificWork": h2s - h1, "specificWork": h2 - h1,
    "isentropicEfficiency": (h2s - h1) / (h2 - h1), "power": MDOT * (h2 - h1),
}

T_HA, P_HA = 293.15, 101325.0
ha = HumidAir()
gw = IAPWS95(T=T_HA, P=P_HA / 1e6).g  # liquid water [kJ/kg]


def residuals(x):
    rho, a = x
    fa = ha._fav(T_HA, rho, a)
    muw = fa["fir"] + rho * fa["fird"] - a * fa["fira"]
    return [gw - muw, rho ** 2 * fa["fird"] / 1000 - P_HA / 1e6]


xw0 = IAPWS95(T=T_HA, x=0).P * 1e6 / P_HA  # ideal mole fraction of water at saturation
a0 = (1 - xw0) * Ma / ((1 - xw0) * Ma + xw0 * Mw)
rho0 = P_HA / (8.314462618 / ((1 - xw0) * Ma + xw0 * Mw) * 1e3 * T_HA)
rho_sat, a_sat = fsolve(residuals, [rho0, a0], xtol=1e-14)
r_mu, r_p = residuals([rho_sat, a_sat])
assert 0 < a_sat < 1 and abs(r_mu) < 1e-9 and abs(r_p) < 1e-12 * P_HA / 1e6, (a_sat, r_mu, r_p)
saturated = {
    "T": T_HA, "p": P_HA, "massFractionDryAir": a_sat, "humidityRatio": (1 - a_sat) / a_sat,
    "density": rho_sat,
}
assert math.isfinite(saturated["humidityRatio"])

water = IAPWS95()
tau = water.Tc / 298.15
water_vapour = {"T": 298.15, "cpOverR": 1 - tau ** 2 * water._phi0(tau, 1.0)["fiott"]}

cases = {
    "source": "python3-iapws %s: iapws.humidAir.Air (Lemmon et al. (2000), ideal-gas part), "
              "iapws.humidAir.HumidAir (IAPWS humid-air guideline, 2010) and iapws.IAPWS95 (ideal-gas "
              "part); made by packages/thermo/scripts/make-air-fixture.py" % iapws.__version__,
    "units": {"p": "Pa", "T": "K", "h": "J/kg", "power": "W", "massFlow": "kg/s", "density": "kg/m3",
              "humidityRatio": "kg water / kg dry air"},
    "compressorIdealGas": compressor,
    "saturatedHumidAir": saturated,
    "waterVapourIdealGas": water_vapour,
}
with open(CASES, "w", encoding="utf-8") as f:
    json.dump(cases, f, indent=2)
    f.write("\n")
