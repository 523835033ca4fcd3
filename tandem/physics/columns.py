"""Two-column data files (spectra, α tables, EQE, losses): read strictly, every problem one
line naming the file, the row and the fix."""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np

from tandem.core.errors import TandemInputError


def read_two_columns(path, label: str, x_name: str, y_name: str, **checks) -> np.ndarray:
    """Read a two-column file with :func:`parse_two_columns`; a missing or non-UTF-8 file is
    one line naming ``label``."""
    path, text = read_data_text(path, label, f"{x_name}, {y_name}")
    return parse_two_columns(text, f"{label} '{path}'", x_name, y_name, **checks)


def read_data_text(path, label: str, columns: str) -> tuple[Path, str]:
    """The text of a data file; a missing or non-UTF-8 file is one line naming ``label``."""
    path = Path(path)
    if not path.is_file():
        raise TandemInputError(f"{label} '{path}' not found; give a CSV file of {columns}")
    try:
        return path, path.read_text(encoding="utf-8-sig")
    except (OSError, UnicodeDecodeError) as exc:
        raise TandemInputError(f"{label} '{path}' cannot be read as text ({exc}); save it as a "
                               "UTF-8 CSV file") from None


MAX_ROWS = 1_000_000  #: rows a two-column data file may have


def parse_two_columns(text: str, where: str, x_name: str, y_name: str, rising: bool = True,
                      y_min: float | None = None, y_below: float | None = None,
                      positive: bool = False) -> np.ndarray:
    """The one reader of two-column data files (spectra, loss fractions, absorption tables).

    Columns are separated by a comma, semicolon, tab or spaces; one header line is allowed;
    lines starting with ``#`` are comments. Every value must be finite; the first column
    positive (and strictly rising with ``rising``); the second at least ``y_min``, below
    ``y_below``, or positive. Any bad row raises :class:`TandemInputError` naming it.
    Returns an (n, 2) array.
    """
    def named(column: str, value: float) -> str:  # "wavelength [nm]", 450 -> "wavelength 450 nm"
        word, _, unit = column.partition(" [")
        unit = unit.rstrip("]")
        return f"{word} {value:g}" + (f" {unit}" if unit and "^" not in unit else "")

    rows: list[tuple[float, float]] = []
    header_seen = False
    lines = text.lstrip("\ufeff").splitlines()
    if len(lines) > MAX_ROWS:
        raise TandemInputError(f"{where}: {len(lines):,} lines; give at most {MAX_ROWS:,} rows "
                               "(resample it: the model needs no finer grid than about 1 nm)")
    for number, raw in enumerate(lines, start=1):
        line = raw.strip()
        if not line or line.startswith("#"):
            continue
        cells = [c for c in line.replace(";", ",").replace("\t", ",").replace(" ", ",").split(",") if c]
        at = f"{where}, row {number}"
        try:
            values = [float(c) for c in cells]
        except ValueError:
            if not rows and not header_seen:
                header_seen = True
                continue
            raise TandemInputError(f"{at}: '{line[:60]}' is not two numbers; give {x_name} and "
                                   f"{y_name}") from None
        if len(values) != 2:
            raise TandemInputError(f"{at}: has {len(values)} columns; give exactly two, {x_name} "
                                   f"and {y_name}")
        x, y = values
        if not (math.isfinite(x) and math.isfinite(y)):
            raise TandemInputError(f"{at}: value is not finite; replace it with a number")
        if x <= 0:
            raise TandemInputError(f"{at}: {named(x_name, x)} must be positive")
        if y_min is not None and y < y_min:
            raise TandemInputError(f"{at}: {named(y_name, y)} is "
                                   + ("negative" if y_min == 0 else f"below {y_min:g}"))
        if y_below is not None and not y < y_below:
            raise TandemInputError(f"{at}: {named(y_name, y)} must be below {y_below:g}")
        if positive and not y > 0:
            raise TandemInputError(f"{at}: {named(y_name, y)} must be positive")
        if rising and rows and x <= rows[-1][0]:
            raise TandemInputError(f"{at}: {named(x_name, x)} does not rise above the previous "
                                   f"row's {rows[-1][0]:g}; sort the rows and remove duplicates")
        rows.append((x, y))
    if len(rows) < 2:
        raise TandemInputError(f"{where}: needs at least two data rows of {x_name} and {y_name}")
    table = np.array(rows)
    xs = np.sort(table[:, 0])
    twice = xs[1:][xs[1:] == xs[:-1]]
    if twice.size:  # an unsorted table may be sorted; one with a point twice cannot be read
        raise TandemInputError(f"{where}: {named(x_name, float(twice[0]))} appears in more than "
                               "one row; keep one row for each")
    return table


def header_cells(text: str) -> list[str] | None:
    """The cells of a data file's header line (its first line that is not blank, a comment or
    numbers), or None without one. Cells split at commas, semicolons or tabs; a header split by
    spaces only keeps a bracketed unit with its name ('wavelength (nm)')."""
    import re

    for raw in text.lstrip("\ufeff").splitlines():
        line = raw.strip()
        if not line or line.startswith("#"):
            continue
        cells = [x for x in re.split(r"[,;\t]+", line) if x.strip()]
        if len(cells) == 1:
            cells = []
            for token in line.split():
                if cells and token[0] in "([":
                    cells[-1] += " " + token
                else:
                    cells.append(token)
        try:
            [float(x) for x in cells]
        except ValueError:
            return cells
        return None
    return None


#: wavelength units a header may state, as the factor to nm
WAVELENGTH_UNITS = {"nm": 1.0, "um": 1e3, "µm": 1e3, "micron": 1e3, "microns": 1e3}


def wavelength_factor(cell: str) -> float:
    """The factor to nm of a header cell naming a wavelength unit ('wavelength_um',
    'wavelength [µm]', 'lambda (nm)'); 1 when it names none."""
    import re

    words = re.split(r"[^a-zµ]+", cell.strip().lower())
    return next((WAVELENGTH_UNITS[w] for w in words if w in WAVELENGTH_UNITS), 1.0)


def spectrum_units(text: str) -> tuple[float, float]:
    """Factors taking a spectrum file's columns to nm and W m⁻² nm⁻¹, from its header
    (``wavelength_um``, ``irradiance [W/m2/um]``, ``W m-2 µm-1`` ...); without one, nm and
    W m⁻² nm⁻¹, as the format says. The wavelengths' range must agree with their unit."""
    import re

    header = header_cells(text)
    x_scale = y_scale = 1.0
    if header is not None and len(header) >= 2:
        first, second = (h.strip().lower().replace("µ", "u") for h in header[:2])
        x_scale = wavelength_factor(first)
        # per µm: '/um', 'um-1', 'um^-1', 'um⁻¹', '_um' at the end of a unit run
        if re.search(r"(/\s*um\b|\bum\s*(\^?-1|⁻¹)|_um\b)", second):
            y_scale = 1e-3
    return x_scale, y_scale
