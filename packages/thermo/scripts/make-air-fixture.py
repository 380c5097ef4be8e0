#!/usr/bin/python3
"""Reference values for dry air from the Lemmon et al. (2000) equation of state
(Lemmon, Jacobsen, Penoncello and Friend, J. Phys. Chem. Ref. Data 29(3), 2000),
as implemented by python3-iapws (Debian package, module iapws.humidAir, class Air).

Writes src/gas/fixtures/air-lemmon2000.json: h [J/kg], s [J/(kg K)], cp [J/(kg K)] and Z
at 100 kPa from 250 K to 1000 K. Regenerate with:
    /usr/bin/python3 packages/thermo/scripts/make-air-fixture.py
then `git diff --quiet` must hold (the file is deterministic).
"""

import json
import os

import iapws
from iapws.humidAir import Air

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
