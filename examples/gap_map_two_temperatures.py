"""A gap map at two cell temperatures: how far does the best front gap over silicon move?

Step absorbers under AM1.5G, back gap fixed at silicon's 1.12 eV, at 25 °C and 65 °C; the
result as an xarray Dataset with the temperature as a new dimension.
"""

import sys

import xarray as xr

import tandem

maps = {}
for t in (298.15, 338.15):
    result = tandem.gap_map(operating=tandem.OperatingPoint(temperature_K=t),
                            front_gaps_eV=tandem.gap_range(1.55, 1.95, 0.005), back_gaps_eV=1.12)
    maps[t] = result.to_dataset()
    o = result.summary()["optimum"]
    print(f"{t:.2f} K: best 2T {o['efficiency_pct']:.2f} % at front {o['front_gap_eV']:.3f} eV")
both = xr.concat(list(maps.values()), dim=xr.DataArray(list(maps), dims="cell_temperature",
                                                        attrs={"units": "K"}))
print(both["efficiency_2t"].max(dim=("front_gap", "back_gap")).values)
if len(sys.argv) > 1:
    result.plot().savefig(sys.argv[1], dpi=150)
