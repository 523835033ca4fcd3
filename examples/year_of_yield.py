"""A year of energy at an invented site: which front gap and thickness give the most kWh?

Clear skies (ASTM G173-03 shaped by SPECTRL2's changes) every two hours over 2026 at an invented
site, perovskite on silicon, cell temperature from the SAPM model.
"""

import sys

import numpy as np

import tandem
from tandem import site_series

site = tandem.Site("Invented Plateau (example)", latitude=38.5, longitude=-3.0, altitude_m=700,
                   tilt_deg=30, timezone="Etc/GMT-1")
series = site_series(site, period="year:2026", step_minutes=120)
result = tandem.energy_yield("perovskite-wide", "silicon", series,
                             front_gaps_eV=np.linspace(1.64, 1.84, 6),
                             front_thicknesses_nm=np.geomspace(300, 1500, 6))
s = result.summary()
eo = s["energy_optimum"]
print(f"{s['steps']} daylight steps, {s['insolation_kWh_m2']:.0f} kWh/m² on the plane; best: "
      f"{eo['front_gap_eV']:.3f} eV, {eo['front_thickness_nm']:.0f} nm, 2T "
      f"{eo['energy_2t_kWh_m2']:.1f} kWh/m² (4T {eo['energy_4t_kWh_m2']:.1f})")
print(result.to_dataset()["energy_2t"].max().item())
if len(sys.argv) > 1:
    result.plot().savefig(sys.argv[1], dpi=150)
