"""Every refusal of a malformed input file, one case each: the file is a bundled one with one
edit, and loading it must end in one line that names the field (and, where the rule gives
one, the fix). Each case's expected words come from the rule it checks: the field, and what
is wrong with it."""

from pathlib import Path

import pytest

import tandem
import tandem.core.files
from tandem.core.errors import TandemInputError

ABSORBERS = tandem.core.files.bundled_dir("absorbers")


def _edited(tmp_path: Path, source: Path, edits, name: str | None = None) -> Path:
    """``source``'s text with each (old, new) replaced once; old must be there."""
    text = source.read_text(encoding="utf-8")
    for old, new in edits:
        assert old in text, f"{old!r} is not in {source.name}"
        text = text.replace(old, new, 1)
    out = tmp_path / (name or source.name)
    out.write_text(text, encoding="utf-8")
    return out


def _refused(load, path, field: str, words: str) -> str:
    with pytest.raises(TandemInputError) as err:
        load(path)
    message = str(err.value)
    assert "\n" not in message, message
    assert field in message and words in message, message
    return message


PEROVSKITE, ORGANIC, SILICON, DYE = "perovskite-wide", "organic-wide", "silicon", "dye-sensitized"
SOURCES_TAIL = ()  # no edit: the file is cut at [sources]

ABSORBER_CASES = [
    # a gap is either fixed or a relation
    (PEROVSKITE, [("[gap]\n", "[gap]\nvalue_eV = 1.7\n")], "gap.value_eV", "both given"),
    (PEROVSKITE, [('relation = "polynomial"', 'relation = "spline"')], "gap.relation",
     "is not known"),
    (PEROVSKITE, [('composition = "bromide fraction x"\n', "")], "gap.composition", "is missing"),
    (PEROVSKITE, [("composition_range = [0.0, 0.6]", "composition_range = [0.6, 0.0]")],
     "gap.composition_range", "low < high"),
    (PEROVSKITE, [("composition_default = 0.25", "composition_default = 0.9")],
     "gap.composition_default", "outside composition_range"),
    (PEROVSKITE, [("coefficients_eV = [1.57, 0.39, 0.33]", "coefficients_eV = [0.5, -2.0]")],
     "gap.coefficients_eV", "≤ 0 eV"),
    (ORGANIC, [("[gap]\n", "[gap]\nvalue_eV = 0.0\n#")], "gap.value_eV", "must be positive"),
    # the absorption edge
    (PEROVSKITE, [("urbach_energy_meV = 15\n", "")], "absorption.urbach_energy_meV",
     "is missing"),
    (PEROVSKITE, [("[absorption]\n", "[absorption]\ntail_cutoff_below_gap_eV = 2.5\n")],
     "absorption.tail_cutoff_below_gap_eV", "below 0 eV"),
    (PEROVSKITE, [("[absorption]\n", "[absorption]\ndefect_floor_per_cm = 1.0\n")],
     "absorption.defect_floor_per_cm", "needs tail_cutoff_below_gap_eV"),
    (DYE, [("bands = [\n  {centre_eV = 2.32", "# {centre_eV = 2.32"),
           ("  {centre_eV = 3.18", "# {centre_eV = 3.18"), ("]\n\n[optics]", "\n[optics]")],
     "absorption.bands", "is missing"),
    (DYE, [("[absorption]\n", "[absorption]\nstrength_per_cm = 1e4\n")],
     "absorption.strength_per_cm", "is not read by model 'bands'"),
    (DYE, [("{centre_eV = 2.32, width_eV = 0.25, peak_per_cm = 3.0e3}", "{centre_eV = 2.32}")],
     "absorption.bands[1]", "must have centre_eV, width_eV and peak_per_cm"),
    (DYE, [("peak_per_cm = 3.5e3", "peak_per_cm = -1.0")], "absorption.bands[2].peak_per_cm",
     "is outside"),
    (SILICON, [('database = "main/Si/Green-2008"\n', "")], "absorption.database", "is missing"),
    (SILICON, [('database = "main/Si/Green-2008"', 'database = "main/Si/Nobody-1900"')],
     "absorption.database", "Nobody-1900"),
    # optics, electrical, thickness, sources
    (ORGANIC, [("refractive_index = 1.9", "refractive_index = 0.5")],
     "optics.refractive_index", "below 1"),
    (ORGANIC, [('light_trapping = "double-pass"', 'light_trapping = "triple-pass"')],
     "optics.light_trapping", "is not known"),
    (PEROVSKITE, [("nonradiative_voc_loss_V = 0.15", "gap_voltage_offset_V = 5.0")],
     "electrical.gap_voltage_offset_V", "is outside 0 to"),
    (SILICON, [("ere = 0.006 ", "gap_voltage_offset_V = 0.4 ")],
     "electrical.gap_voltage_offset_V", "[recombination] section"),
    (PEROVSKITE, [("default_nm = 500\n", "")], "thickness.default_nm", "is missing"),
    (PEROVSKITE, [("range_nm = [100, 1500]", "range_nm = [100, 500, 1500]")],
     "thickness.range_nm", "two values"),
    (PEROVSKITE, [("range_nm = [100, 1500]", "range_nm = [0, 1500]")], "thickness.range_nm",
     "starts at 0"),
    (PEROVSKITE, [("default_nm = 500", "default_nm = 2000")], "thickness.default_nm",
     "outside the range"),
    (PEROVSKITE, SOURCES_TAIL, "sources", "is empty"),
    # bulk recombination
    (SILICON, [("intrinsic_density_per_cm3 = 9.65e9\n", "")],
     "recombination.intrinsic_density_per_cm3", "is missing"),
    (SILICON, [("intrinsic_density_temperature_K = 300\n",
                "intrinsic_density_temperature_K = 300\ndoping_per_cm3 = 1e25\n")],
     "recombination.doping_per_cm3", "outside 0–1e21"),
    (SILICON, [("intrinsic_density_temperature_K = 300\n",
                'intrinsic_density_temperature_K = 300\ndoping_type = "n"\n')],
     "recombination.doping_type", "undoped"),
]


@pytest.mark.parametrize("base, edits, field, words", ABSORBER_CASES,
                         ids=[f"{c[0]}:{c[2]}:{c[3]}" for c in ABSORBER_CASES])
def test_a_malformed_absorber_file_is_one_line(tmp_path, base, edits, field, words):
    source = ABSORBERS / f"{base}.toml"
    if edits is SOURCES_TAIL:
        path = tmp_path / source.name
        path.write_text(source.read_text(encoding="utf-8").split("[sources]")[0] + "[sources]\n",
                        encoding="utf-8")
    else:
        path = _edited(tmp_path, source, edits)
    _refused(tandem.load_absorber, path, field, words)


def _table_absorber(tmp_path: Path, model_lines: str, csv: str | None = None,
                    csv_name: str = "alpha.csv") -> Path:
    """The organic-wide file with its parametric edge replaced by ``model_lines``, and a
    data file beside it."""
    if csv is not None:
        (tmp_path / csv_name).write_text(csv, encoding="utf-8")
    return _edited(tmp_path, ABSORBERS / f"{ORGANIC}.toml", [(
        'model = "direct"\nurbach_energy_meV = 22\nalpha_at_gap_per_cm = 2.0e4\n'
        "strength_per_cm = 1.2e5\n", f"urbach_energy_meV = 22\n{model_lines}\n")],
        name="film.toml")


ALPHA_TABLE = "wavelength_nm,alpha_per_cm\n500,1e5\n600,5e4\n700,1e4\n"

TABLE_CASES = [
    ('model = "table"', ALPHA_TABLE, "absorption.table", "is missing"),
    ('model = "table"\ntable = "alpha.csv"\ntable_axis = "frequency_Hz"', ALPHA_TABLE,
     "absorption.table_axis", "is not known"),
    ('model = "table"\ntable = "elsewhere.csv"', ALPHA_TABLE, "absorption.table",
     "not found next to the absorber file"),
    ('model = "table"\ntable = "alpha.csv"', "energy_eV,alpha_per_cm\n1.8,1e4\n2.0,5e4\n",
     "absorption.table", "table_axis = \"energy_eV\""),
    ('model = "table"\ntable = "alpha.csv"\ntable_axis = "energy_eV"',
     "energy_eV,alpha_per_cm\n1.8,1e4\n2.0,5e4\n2.0,6e4\n", "absorption.table",
     "repeats a point"),
    ('model = "nk"', "500,2.0,0.1\n600,2.0,0.05\n", "absorption.nk_table", "is missing"),
]


@pytest.mark.parametrize("model_lines, csv, field, words", TABLE_CASES,
                         ids=[f"{c[2]}:{c[3]}" for c in TABLE_CASES])
def test_a_malformed_absorption_table_is_one_line(tmp_path, model_lines, csv, field, words):
    _refused(tandem.load_absorber, _table_absorber(tmp_path, model_lines, csv), field, words)


def test_a_good_table_absorber_loads(tmp_path):
    # the cases above are refused for their one edit, not because the template is broken
    a = tandem.load_absorber(_table_absorber(tmp_path, 'model = "table"\ntable = "alpha.csv"',
                                             ALPHA_TABLE))
    assert a.edge_model == "table"


STACKS = tandem.core.files.bundled_dir("stacks")
FRONT = 'absorber = "organic-wide"\nthickness_nm = [40, 300]\nrole = "front"'
BACK = 'absorber = "organic-narrow"\nthickness_nm = 120\nrole = "back"'
RECOMBINATION = 'name = "recombination layer"\nthickness_nm = 5\nnk = [1.9, 0.05]'

STACK_CASES = [
    ([('title = "Organic pair, inverted, on silver"\n', "")], "title", "is missing"),
    ([('title = "Organic pair, inverted, on silver"', "title = 5")], "title", "must be text"),
    ([('name = "MoO3 (front)"', 'name = "ZnO (front)"')], "layer.name", "repeats a name"),
    ([(FRONT, FRONT.replace('"front"', '"back"')), (BACK, BACK.replace('"back"', '"front"'))],
     "layer.role", "back absorber before the front one"),
    ([(BACK, BACK + "\ncoherent = false")], "layer 'narrow-gap blend'.coherent",
     "not the last layer"),
    ([(FRONT, FRONT + "\ncoherent = false")], "layer 'wide-gap blend'.coherent",
     "is false for the front absorber"),
    ([("thickness_nm = 110\n", "thickness_nm = [80, 140]\n"),
      ("thickness_nm = 10\n", "thickness_nm = [5, 15]\n")], "layer.thickness_nm",
     "sweeps 3 layers"),  # with the ZnO (front) range already in the file
    ([('name = "glass"\n', "")], "layer[1].name", "is missing"),
    ([(RECOMBINATION, RECOMBINATION + '\nrole = "middle"')], "layer 'recombination layer'.role",
     "is unknown"),
    ([(RECOMBINATION, RECOMBINATION + '\nrole = "front"')], "layer 'recombination layer'.role",
     "needs an absorber"),
    ([(RECOMBINATION, RECOMBINATION.replace("thickness_nm = 5\n", ""))],
     "layer 'recombination layer'.thickness_nm", "is missing"),
    ([(RECOMBINATION, RECOMBINATION.replace("thickness_nm = 5", "thickness_nm = [1, 2, 3]"))],
     "layer 'recombination layer'.thickness_nm", "[thin, thick]"),
    ([(RECOMBINATION, RECOMBINATION + '\ncoherent = "yes"')],
     "layer 'recombination layer'.coherent", "true or false"),
    ([(BACK, BACK + '\nlight_trapping = "sideways"')],
     "layer 'narrow-gap blend'.light_trapping", "is unknown"),
    ([('absorber = "organic-wide"', "absorber = 5")], "layer 'wide-gap blend'.absorber",
     "name or path"),
    ([(RECOMBINATION, RECOMBINATION + "\ngap_eV = 1.5")], "layer 'recombination layer'.gap_eV",
     "only for absorber layers"),
    ([("[sources]\n", "sources = 5\n[notes]\n")], "notes", "is not a known key"),
]


@pytest.mark.parametrize("edits, field, words", STACK_CASES,
                         ids=[f"{c[1]}:{c[2]}" for c in STACK_CASES])
def test_a_malformed_stack_file_is_one_line(tmp_path, edits, field, words):
    path = _edited(tmp_path, STACKS / "organic-pair.toml", edits, name="pair.toml")
    _refused(tandem.load_stack, path, field, words)


@pytest.mark.parametrize("text, field, words", [
    ('title = "x"\nlayer = 5\n', "layer", "list of [[layer]] tables"),
    ('title = "x"\nsources = "everywhere"\n[[layer]]\n' + FRONT.replace("absorber", 'name = "a"\nabsorber')
     + '\n[[layer]]\nname = "b"\n' + BACK, "sources", "[sources] table"),
])
def test_a_stack_file_of_the_wrong_shape_is_one_line(tmp_path, text, field, words):
    (tmp_path / "s.toml").write_text(text, encoding="utf-8")
    _refused(tandem.load_stack, tmp_path / "s.toml", field, words)
