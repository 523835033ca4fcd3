"""What every result's xarray Dataset carries, so that datasets from several runs combine: the
CF conventions it follows, the tool's version, a ``long_name`` on every variable, and the
conditions of the run (spectrum, cell temperature, terminals) as scalar coordinates, so that
``xr.concat([a, b], dim="temperature")`` stacks two runs along what differs between them
(as attributes, a concatenation kept the first run's conditions and lost the other's)."""

from __future__ import annotations

#: Long names of the quantities the results share (one name per quantity across jobs).
LONG_NAMES = {
    "efficiency_2t": "two-terminal (series) efficiency",
    "efficiency_3t": "three-terminal efficiency",
    "efficiency_4t": "four-terminal efficiency (each subcell at its own maximum-power point)",
    "jsc_front": "front subcell photocurrent density",
    "jsc_back": "back subcell photocurrent density",
    "voc_2t": "open-circuit voltage of the series stack",
    "front_gap": "front subcell band gap",
    "back_gap": "back subcell band gap",
    "front_thickness": "front absorber thickness",
    "back_thickness": "back absorber thickness",
    "energy_2t": "two-terminal energy over the period",
    "energy_3t": "three-terminal energy over the period",
    "energy_4t": "four-terminal energy over the period",
    "efficiency_am15g_2t": "two-terminal efficiency under AM1.5G at 298.15 K",
    "design": "combination of the stack's other swept layers",
}

#: The conditions a run is made under, as scalar coordinates.
CONDITIONS = {
    "spectrum": {"long_name": "incident spectrum"},
    "temperature": {"units": "K", "long_name": "cell temperature"},
    "terminals": {"long_name": "terminals the efficiency is ranked by"},
    "period": {"long_name": "period the energies are summed over"},
    "absorbers": {"long_name": "front absorber over back absorber, or the layer stack"},
}


def described(ds, **conditions):
    """``ds`` with CF-1.8 global attributes and the tool's version, a ``long_name`` on every
    variable and coordinate (from :data:`LONG_NAMES`, else its name in words), and
    ``conditions`` (keys of :data:`CONDITIONS`) as scalar coordinates."""
    import xarray as xr

    from tandem import __version__

    ds = ds.assign_coords({k: xr.DataArray(v, attrs=dict(CONDITIONS[k]))
                           for k, v in conditions.items()})
    for name, variable in ds.variables.items():
        variable.attrs.setdefault("long_name", LONG_NAMES.get(str(name), str(name).replace("_", " ")))
    ds.attrs.update(Conventions="CF-1.8", tandem_version=__version__)
    return ds
