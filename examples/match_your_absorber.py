"""Current matching of your own absorber: a wide-gap film of your lab over a silicon wafer.

Writes a made-up absorber description (invented numbers, for the demonstration only), matches it
to the bundled silicon under AM1.5G at 25 °C with 2 % reflectance, and prints the matched
thickness, the limiting subcell and the thickness window.
"""

import sys
import tempfile
from pathlib import Path

import tandem

FILM = """
name = "our wide-gap film (invented)"
description = "A demonstration absorber: a direct gap near 1.70 eV."

[gap]
value_eV = 1.70
temperature_coefficient_meV_per_K = 0.2

[absorption]
model = "direct"
urbach_energy_meV = 16
alpha_at_gap_per_cm = 1.2e4
strength_per_cm = 7.0e4

[optics]
refractive_index = 2.4
light_trapping = "double-pass"

[electrical]
nonradiative_voc_loss_V = 0.12

[thickness]
default_nm = 600
range_nm = [150, 1800]

[sources]
all = "invented for this example"
"""

with tempfile.TemporaryDirectory() as folder:
    path = Path(folder) / "our-film.toml"
    path.write_text(FILM)
    film = tandem.load_absorber(path)
study = tandem.match(film, "silicon", operating=tandem.OperatingPoint(reflectance=0.02),
                     sweep=tandem.Sweep(thickness_points=60))
s = study.summary()
best = s["configurations"][0]
print(f"matched front thickness: {s['matched_front_thickness_nm']} nm; best 2T "
      f"{best['efficiency_2t_pct']:.2f} % at {best['front_thickness_nm']:.0f} nm; the "
      f"{best['limiting_subcell']} subcell limits; within 1 % abs: "
      f"{s['tolerance']['front_thickness_window_nm']} nm")
print(study.to_frame()[["front_thickness_nm", "efficiency_2t_pct", "limiting_subcell"]].head(3))
if len(sys.argv) > 1:
    study.plot().savefig(sys.argv[1], dpi=150)
