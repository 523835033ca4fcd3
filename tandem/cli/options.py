"""The command line's shared options, declared once, and the helpers that map them to inputs.

Every computing command takes the same light and operating options (:func:`shared` adds them);
the builders turn them into :class:`~tandem.jobs.inputs.Light` and
:class:`~tandem.jobs.inputs.OperatingPoint`, where they are validated.
"""

from __future__ import annotations

import functools
import json
import math
import os
import re
import sys
from typing import Annotated, Optional

import typer
from rich.console import Console
from rich.markup import escape as _markup_escape
from rich.table import Table

import tandem
from tandem.core.errors import TandemInputError, os_error_line

#: control characters (ESC, BEL, ...) in names and file content: shown as \xNN, never sent
_CONTROL = re.compile(r"[\x00-\x08\x0b-\x1f\x7f-\x9f]")


def escape(text) -> str:
    """Text from files and users, printed as text: rich markup escaped and control characters
    shown as ``\x1b`` (a name holding ESC or BEL cannot drive the terminal)."""
    return _markup_escape(_CONTROL.sub(lambda m: f"\\x{ord(m.group()):02x}", str(text)))


def _is_terminal(stream) -> bool:
    """Whether ``stream`` is a terminal; False for a closed or missing one (no traceback)."""
    try:
        return bool(stream is not None and stream.isatty())
    except (AttributeError, ValueError, OSError):
        return False


# A terminal gets tables that fit its width; piped output is never cut (no width limit).
# emoji off: ':x:' in a file name or message stays ':x:'
out = Console(width=None if _is_terminal(sys.stdout) else 100_000, emoji=False)
err = Console(stderr=True, width=None if _is_terminal(sys.stderr) else 100_000, emoji=False)


def _plain_encoding() -> None:
    """An output that cannot encode µ, ² or – (an ASCII or Latin-1 terminal or pipe) gets a
    replacement character for them instead of a UnicodeEncodeError half-way through a table."""
    for stream in (sys.stdout, sys.stderr):
        encoding = (getattr(stream, "encoding", None) or "").lower().replace("-", "")
        if stream is not None and "utf" not in encoding and hasattr(stream, "reconfigure"):
            try:
                stream.reconfigure(errors="replace")
            except (ValueError, OSError):
                pass

# --------------------------------------------------------------------------------------
# Options declared once
# --------------------------------------------------------------------------------------

def plain_option(*names, **kw):
    """An option whose metavar is a plain word (never '<str>' or 'list[float]')."""
    kw.setdefault("metavar", "VALUE")
    return typer.Option(*names, **kw)


def flag_option(*names, **kw):
    """An on/off flag: no value placeholder in the help (``--json``, not ``--json VALUE``)."""
    kw.setdefault("metavar", "")
    return typer.Option(*names, **kw)


Spectrum = Annotated[str, plain_option("--spectrum", "-s", help="am1.5g, am1.5d, am0, blackbody, or a CSV "
                               "file (wavelength nm, W m^-2 nm^-1).")]
Concentration = Annotated[float, plain_option(help="Suns of concentration (blackbody: up to about 46,200).")]
SunTemperature = Annotated[float, plain_option(help="Blackbody sun temperature in K.")]
Irradiance = Annotated[Optional[float], plain_option(help="Rescale the spectrum to this many W/m^2 "
                                             "(reported).")]
Temperature = Annotated[Optional[str], plain_option(help="Cell temperature with its unit, e.g. 298.15K or "
                                            "25C (default 25C; yield: the SAPM model per step).",
                                            metavar="TEMP")]
OutsideRange = Annotated[bool, flag_option("--outside-range", help="Accept gaps and thicknesses outside the "
                                    "absorbers' declared ranges (reported).")]
Terminals = Annotated[str, plain_option("--terminals", "-t", help="2 (series, one current), 3 (a "
                                "middle contact, two loads) or 4 (independent); ranks designs. "
                                "yield and region take a list (2,3,4): the connections to compare.")]
MiddleContact = Annotated[str, plain_option("--middle-contact", help="Three terminals: s (series type, "
                                   "the middle contact carries the subcells' current difference) or "
                                   "r (reverse type: their sum).")]
MiddleResistance = Annotated[float, plain_option("--middle-resistance", help="Three terminals: the "
                                      "middle contact's resistance in ohm cm^2 (0: 3T reaches 4T).")]
StringRatio = Annotated[Optional[str], plain_option("--string-ratio", help="Also report voltage-matched "
                                        "strings: M:N front:back cells in series per string, e.g. 1:2; "
                                        "several as 1:2,2:3, or best (seven simple ratios).",
                                        metavar="M:N")]
Ere = Annotated[Optional[str], plain_option(help="External radiative efficiency in (0, 1]: one value or "
                                    "front,back; overrides the absorbers' own.")]
Ideality = Annotated[float, plain_option(help="Ideality of the non-radiative diode (radiative is n = 1).")]
Coupling = Annotated[float, plain_option(help="Luminescent coupling: share of the front's emission towards "
                                 "the back that the back collects (implies --rear-emission).")]
RearEmission = Annotated[bool, flag_option("--rear-emission", help="Count the front's emission towards "
                                    "the back (n^2 x front face) as a loss.")]
FrontIndex = Annotated[float, plain_option(help="Refractive index of a step-absorber front (rear emission).")]
Series = Annotated[float, plain_option(help="Series resistance in ohm cm^2.")]
Shunt = Annotated[float, plain_option(help="Shunt resistance in ohm cm^2 (inf: none).")]
Reflectance = Annotated[str, plain_option(help="Front reflectance: a fraction, or a CSV of wavelength nm, "
                                  "fraction.")]
FrontParasitic = Annotated[str, plain_option(help="Absorbed in the front contact: fraction or CSV.")]
InterParasitic = Annotated[str, plain_option(help="Absorbed between the subcells: fraction or CSV.")]
Json = Annotated[bool, flag_option("--json", help="Print one JSON object on stdout only.")]
Quiet = Annotated[bool, flag_option("--quiet", "-q", help="No progress bar.")]
Losses = Annotated[Optional[str], plain_option(help="Write the loss-breakdown waterfall to FILE (PNG or "
                                       "SVG) and print its table.", metavar="FILE")]
Overwrite = Annotated[bool, flag_option(help="Replace outputs this command wrote before.")]
Wide = Annotated[bool, flag_option("--wide", help="Show every column, however wide the table.")]
Large = Annotated[bool, flag_option("--large", help="Run even if the estimate is over 10 minutes or 2 GiB.")]
Plot = Annotated[Optional[str], plain_option(help="Write the figure to this PNG or SVG file.")]

#: the shared option names (a test checks every computing command takes all of them)
SHARED = ("spectrum", "concentration", "sun_temperature", "irradiance", "temperature",
          "terminals", "ere", "ideality", "coupling", "rear_emission", "front_index",
          "series_resistance", "shunt_resistance", "reflectance", "front_parasitic",
          "interlayer_parasitic", "outside_range", "middle_contact", "middle_resistance",
          "string_ratio")


def argument(text: str):
    """A positional argument with its help and no shown default."""
    return typer.Argument(help=text, show_default=False)


def build_light(o: dict) -> tandem.Light:
    return tandem.Light(source=o["spectrum"], concentration=o["concentration"],
                        sun_temperature_K=o["sun_temperature"], irradiance_W_m2=o["irradiance"])


def build_operating(o: dict, temperature_default: float = 298.15) -> tandem.OperatingPoint:
    from tandem.physics.stack import Electrical

    from tandem.jobs.inputs import parse_temperature

    t = temperature_default if o["temperature"] is None else parse_temperature(o["temperature"])
    return tandem.OperatingPoint(
        temperature_K=t, terminals=o["terminals"], ideality=o["ideality"],
        ere=None if o["ere"] is None else parse_floats(o["ere"], "--ere"),
        electrical=Electrical(o["coupling"], o["series_resistance"], o["shunt_resistance"],
                              o["rear_emission"], o["middle_contact"], o["middle_resistance"],
                              parse_string_ratios(o["string_ratio"])),
        front_index=o["front_index"], reflectance=o["reflectance"],
        front_parasitic=o["front_parasitic"], interlayer_parasitic=o["interlayer_parasitic"],
        allow_outside_range=o["outside_range"])


def _click():
    """The click that typer runs on: typer ≥ 0.24 carries its own copy (whether or not click
    is installed, and installing distributed brings a separate one); older typer uses click."""
    try:
        from typer import _click as click
    except ImportError:
        import click  # type: ignore[no-redef]
    return click


def given(name: str) -> bool:
    """Whether the user typed option ``name`` (a parameter name), not left its default."""
    ctx = _click().globals.get_current_context(silent=True)
    source = ctx.get_parameter_source(name) if ctx is not None else None
    return source is not None and source.name in ("COMMANDLINE", "ENVIRONMENT")


#: shared option -> the OperatingPoint field it sets ("electrical." for Electrical's fields)
OPERATING_FIELDS = {
    "temperature": "temperature_K", "terminals": "terminals", "ere": "ere",
    "ideality": "ideality", "front_index": "front_index", "reflectance": "reflectance",
    "front_parasitic": "front_parasitic", "interlayer_parasitic": "interlayer_parasitic",
    "outside_range": "allow_outside_range", "coupling": "electrical.coupling",
    "rear_emission": "electrical.rear_emission",
    "series_resistance": "electrical.series_resistance_ohm_cm2",
    "shunt_resistance": "electrical.shunt_resistance_ohm_cm2",
    "middle_contact": "electrical.middle_contact",
    "middle_resistance": "electrical.middle_resistance_ohm_cm2",
    "string_ratio": "electrical.string_ratios"}
#: shared option -> the Light field it sets
LIGHT_FIELDS = {"spectrum": "source", "concentration": "concentration",
                "sun_temperature": "sun_temperature_K", "irradiance": "irradiance_W_m2"}


def refuse_cover_with_stack(stack) -> None:
    """A stack's own layers take the light at its angles: ``--cover-index`` would be unused."""
    if stack is not None and given("cover_index"):
        raise TandemInputError("--cover-index with --stack: the stack's own layers take the "
                               "light at its angles; put a cover glass in the stack file")


def over_scenario(o: dict, light: tandem.Light, operating: tandem.OperatingPoint,
                  skip: tuple[str, ...] = ()) -> tuple[tandem.Light, tandem.OperatingPoint, list[str]]:
    """The scenario's light and operating point with every option the user typed applied on
    top (never a default), and a note for each value that replaces the scenario's."""
    import dataclasses

    cli_light, cli_operating = build_light(o), build_operating(o)
    notes, light_changes, op_changes, el_changes = [], {}, {}, {}
    for option, name in LIGHT_FIELDS.items():
        if option not in skip and given(option):
            light_changes[name] = getattr(cli_light, name)
    for option, name in OPERATING_FIELDS.items():
        if option in skip or not given(option):
            continue
        if name.startswith("electrical."):
            el_changes[name[11:]] = getattr(cli_operating.electrical, name[11:])
        else:
            op_changes[name] = getattr(cli_operating, name)
    for (obj, changes) in ((light, light_changes), (operating, op_changes),
                           (operating.electrical, el_changes)):
        for name, value in changes.items():
            if getattr(obj, name) != value:
                notes.append(f"--{_flag(name)} {value} replaces the scenario's {name} "
                             f"{getattr(obj, name)}")
    if el_changes:
        op_changes["electrical"] = dataclasses.replace(operating.electrical, **el_changes)
    return (dataclasses.replace(light, **light_changes),
            dataclasses.replace(operating, **op_changes), notes)


def _flag(field: str) -> str:
    for option, name in {**LIGHT_FIELDS, **OPERATING_FIELDS}.items():
        if name.split(".")[-1] == field:
            return option.replace("_", "-")
    return field.replace("_", "-")


def shared(command):
    """Give ``command`` the shared light and operating options (declared once, above)."""
    import inspect

    defaults = {"spectrum": (Spectrum, "am1.5g"), "concentration": (Concentration, 1.0),
                "sun_temperature": (SunTemperature, 6000.0), "irradiance": (Irradiance, None),
                "temperature": (Temperature, None), "terminals": (Terminals, "2"),
                "ere": (Ere, None), "ideality": (Ideality, 1.0), "coupling": (Coupling, 0.0),
                "rear_emission": (RearEmission, False), "front_index": (FrontIndex, 3.5),
                "series_resistance": (Series, 0.0), "shunt_resistance": (Shunt, math.inf),
                "reflectance": (Reflectance, "0"), "front_parasitic": (FrontParasitic, "0"),
                "interlayer_parasitic": (InterParasitic, "0"),
                "outside_range": (OutsideRange, False), "middle_contact": (MiddleContact, "s"),
                "middle_resistance": (MiddleResistance, 0.0), "string_ratio": (StringRatio, None)}
    sig = inspect.signature(command, eval_str=True)  # typer reads __signature__ as it stands
    own = [p for p in sig.parameters.values() if p.name != "o"]
    extra = [inspect.Parameter(k, inspect.Parameter.KEYWORD_ONLY, annotation=a, default=d)
             for k, (a, d) in defaults.items()]

    @functools.wraps(command)
    def wrapper(*args, **kwargs):
        o = {k: kwargs.pop(k) for k in SHARED}
        o["terminals"] = parse_terminals(o["terminals"], command.__name__ in COMPARING)
        return command(*args, o=o, **kwargs)

    setattr(wrapper, "__signature__", sig.replace(parameters=[
        p.replace(kind=inspect.Parameter.KEYWORD_ONLY) for p in own] + extra))
    return wrapper


#: ``--string-ratio best``: the simple ratios of front to back cells a wide-gap front over a
#: narrow-gap back can use (front voltages about 1 to 3 times the back's)
BEST_RATIOS = ((1, 1), (3, 4), (2, 3), (3, 5), (1, 2), (2, 5), (1, 3))


#: commands whose --terminals may list the connections to compare (2 and 4 are always shown)
COMPARING = ("energy_yield", "region")


def parse_terminals(text, listing: bool = False) -> int:
    """'2', '3' or '4' → that connection; a list such as '2,3,4' (``listing`` commands only)
    → 3 if it holds 3 (the connection those commands add to 2 and 4), else 2."""
    items = [t.strip() for t in str(text).split(",") if t.strip()]
    if not items or any(t not in ("2", "3", "4") for t in items):
        raise TandemInputError(f"--terminals '{text}': choose 2 (series), 3 (middle contact) or "
                               "4 (independent)")
    if len(items) > 1 and not listing:
        raise TandemInputError(f"--terminals '{text}': give one connection (a list such as "
                               "2,3,4 is for yield and region)")
    return 3 if "3" in items else int(items[0]) if len(items) == 1 else 2


def parse_string_ratios(text: str | None) -> tuple[tuple[int, int], ...]:
    """'1:2' → ((1, 2),), '1:2,2:3' → both, 'best' → :data:`BEST_RATIOS`: front and back
    cells in series per voltage-matched string."""
    if text is None:
        return ()
    if str(text).strip().lower() == "best":
        return BEST_RATIOS
    ratios = []
    for item in str(text).replace(" ", "").split(","):
        parts = item.split(":")
        if len(parts) != 2 or not all(p.isdigit() for p in parts):
            raise TandemInputError(f"--string-ratio '{text}': give front:back cells per string as "
                                   "two whole numbers, e.g. 1:2 (several: 1:2,2:3; or best)")
        ratios.append((int(parts[0]), int(parts[1])))
    return tuple(ratios)


def parse_floats(text: str, option: str) -> tuple[float, ...]:
    try:
        return tuple(float(x) for x in str(text).split(",") if x.strip())
    except ValueError:
        raise TandemInputError(f"{option} '{text}': give numbers separated by commas, e.g. "
                               "0.01,0.001") from None


def parse_thickness(text: str, option: str) -> float:
    """'500', '500nm', '160um' or '160µm' → nm."""
    t, scale = text.strip().lower().replace("µ", "u"), 1.0
    if t.endswith("um"):
        t, scale = t[:-2], 1000.0
    elif t.endswith("nm"):
        t = t[:-2]
    try:
        value = float(t) * scale
    except ValueError:
        raise TandemInputError(f"{option} '{text}': give a thickness such as 500nm or 160um") from None
    if not math.isfinite(value):  # 1e308um is 1e311 nm: once told it "must be positive"
        raise TandemInputError(f"{option} '{text}': not a finite thickness; give e.g. 500nm or 160um")
    if not value > 0:
        raise TandemInputError(f"{option} '{text}': a thickness must be positive")
    return value


def parse_range(text: str, option: str, parse=float) -> tuple:
    parts = text.split(":")
    if len(parts) not in (2, 3):
        raise TandemInputError(f"{option} '{text}': give low:high or low:high:step")
    try:
        return tuple(parse(p) for p in parts)
    except ValueError:
        raise TandemInputError(f"{option} '{text}': give numbers as low:high or low:high:step") from None


def parse_gap(text: str, option: str) -> float:
    """'1.7', '1.7eV' or '1700meV' → eV; a wavelength ('700nm') is refused with its energy."""
    t = str(text).strip()
    m = re.fullmatch(r"([-+0-9.eE]+?)\s*(ev|mev|nm)?", t, flags=re.IGNORECASE)
    try:
        value = float(m.group(1)) if m else float("nan")
    except ValueError:
        value = float("nan")
    unit = (m.group(2) or "ev").lower() if m else "ev"
    if not math.isfinite(value):
        raise TandemInputError(f"{option} '{text}': give a band gap in eV, e.g. 1.7 or 1.7eV")
    if unit == "nm":
        hint = f"; {value:g} nm is {1239.84198 / value:.3f} eV" if value > 0 else ""
        raise TandemInputError(f"{option} '{text}': a band gap is an energy in eV, not a "
                               f"wavelength{hint} — give that")
    return value / 1000.0 if unit == "mev" else value


def parse_gap_option(text, option, default_step=0.02):
    """'1.7' (one gap), '1.6,1.7' (gaps) or 'LO:HI[:STEP]' (a range) → gaps [eV], or None."""
    from tandem.jobs.inputs import gap_range, gap_values

    if text is None:
        return None
    if ":" not in text:
        if re.fullmatch(r"\s*[0-9.]+\s*(ev)?\s*-\s*[0-9.]+\s*(ev)?\s*", text, re.IGNORECASE):
            lo, hi = (x.strip() for x in text.split("-"))
            raise TandemInputError(f"{option} '{text}': a range is LO:HI:STEP, e.g. {lo}:{hi}:0.02 "
                                   "(or list gaps with commas)")
        return gap_values(tuple(parse_gap(x, option) for x in text.split(",") if x.strip()),
                          option)
    lo, hi, *step = parse_range(text, option)
    return gap_range(lo, hi, step[0] if step else default_step, option)



def progress_bar(quiet: bool, label: str):
    """A transient progress bar on stderr, drawn only on a real terminal: FORCE_COLOR (common
    in CI logs) makes rich take any stream for one, and a log would keep every frame."""
    from contextlib import nullcontext

    if quiet or not _is_terminal(sys.stderr):
        return nullcontext(None)
    from rich.progress import BarColumn, Progress, TextColumn, TimeRemainingColumn

    return Progress(TextColumn(label), BarColumn(), TextColumn("{task.completed}/{task.total}"),
                    TimeRemainingColumn(), console=err, transient=True)


def progress_callback(bar):
    if bar is None:
        return None
    task = bar.add_task("sweep", total=None)
    return lambda done, total: bar.update(task, completed=done, total=total)


def render_table(title, columns, rows, caption=None, wide: bool = False, key_columns: int = 1):
    """A rich table from (heading, function of a row[, optional]) columns; text is never markup.

    Optional columns are dropped, last first, and headings broken onto two lines, until the
    table fits the terminal, unless ``wide`` or the output is not a terminal (piped output
    keeps every column); a column whose values tell two rows apart (a swept back thickness)
    is never dropped. If it still does not fit, it is printed as several tables, one under
    the other, each repeating the first ``key_columns`` (the row's name): a number or a name
    is never cut or folded onto a second line.
    """
    from rich.console import Group

    cells = [[escape(str(c[1](row))) for c in columns] for row in rows]
    headings = [c[0] for c in columns]
    keep = list(range(len(columns)))

    def need(i, heads):
        return max([max(len(x) for x in heads[i].split("\n"))] + [len(r[i]) for r in cells])

    def width(idx, heads):
        return sum(need(i, heads) + 3 for i in idx) + 1

    split = False
    if not (wide or not out.is_terminal):
        optional = [i for i, c in enumerate(columns) if len(c) > 2 and c[2]]

        def distinct(idx):
            return len({tuple(r[i] for i in idx) for r in cells})

        rows_apart = distinct(keep)
        for i in reversed(optional):  # last first; never one that tells two rows apart
            if width(keep, headings) <= out.width:
                break
            trial = [k for k in keep if k != i]
            if distinct(trial) == rows_apart:
                keep = trial
        if width(keep, headings) > out.width:
            headings = [h.replace(" ", "\n", 1) for h in headings]
        split = width(keep, headings) > out.width
    parts = [keep]
    if split:  # side by side it cannot fit: one table under another
        keys = keep[:key_columns]
        parts = [list(keys)]
        for i in keep[key_columns:]:
            if len(parts[-1]) > len(keys) and width(parts[-1] + [i], headings) > out.width:
                parts.append(list(keys))
            parts[-1].append(i)
    dropped = len(columns) - len(keep)
    note = f"{dropped} more column{'s' if dropped > 1 else ''} with --wide" if dropped else None
    tables = []
    for n, idx in enumerate(parts):
        fits = width(idx, headings) <= out.width or not out.is_terminal or wide
        table = Table(title=escape(title) + (" (continued)" if n else ""), title_justify="left",
                      caption=("; ".join(x for x in (caption, note) if x) or None)
                      if n == len(parts) - 1 else None)
        for i in idx:  # a column wider than the terminal alone folds (text at words)
            table.add_column(headings[i], justify="right", overflow="fold",
                             min_width=need(i, headings) if fits else None)
        for r in cells:
            table.add_row(*[r[i] for i in idx])
        tables.append(table)
    return tables[0] if len(tables) == 1 else Group(*tables)


def field_text(key, fmt="{:.2f}", none="—"):
    return lambda r: none if r.get(key) is None else fmt.format(r[key])


def emit_json(payload: dict) -> None:
    try:
        text = json.dumps(payload, indent=2, allow_nan=False, ensure_ascii=False)
    except ValueError:
        raise TandemInputError("the result holds a number that is not finite; please report "
                               "the command that produced it") from None
    sys.stdout.write(text + "\n")


def say(*lines) -> None:
    for line in lines:  # a terminal wraps at words; piped output keeps each line whole
        out.print(escape(line), highlight=False, soft_wrap=not out.is_terminal)


def write_plot(result, path, overwrite):
    from tandem.output.plots import save_figure

    err.print(f"wrote {escape(str(save_figure(result.plot(), path, overwrite)))}")


PLOT_SUFFIXES = (".png", ".svg", ".pdf")


def check_outputs(paths, overwrite: bool, plot: bool = False) -> None:
    """Every output checked before any computation: its folder exists and takes files, it
    does not exist yet (or --overwrite), its name is not too long, a figure has a known type."""
    from pathlib import Path

    from tandem.core.files import check_new_output, check_output_folder

    given = [p for p in paths if p is not None]
    seen: dict[str, str] = {}
    for p in given:  # two outputs of one command never share a file (one would overwrite the other)
        key = os.path.normcase(os.path.abspath(p))
        if key in seen:
            raise TandemInputError(f"outputs '{seen[key]}' and '{p}' are the same file; give each "
                                   "its own name")
        seen[key] = str(p)
    for p in given:
        path = Path(p)
        if not path.name or path.name in (".", ".."):
            raise TandemInputError(f"output '{p}': give a file name")
        if plot and path.suffix.lower() not in PLOT_SUFFIXES:
            raise TandemInputError(f"figure '{p}': give a .png, .svg or .pdf file name")
        check_output_folder(path)
        check_new_output(path, overwrite)


def energy_text(kwh: float) -> str:
    """An energy in kWh/m² (one unit in every output), with digits enough for the period:
    three decimals below 10 kWh/m² (a day), one above (a year)."""
    return f"{kwh:.3f} kWh/m²" if abs(kwh) < 10 else f"{kwh:.1f} kWh/m²"


def friendly(command):
    """Library input errors and file-system faults: one line on stderr, exit code 2."""

    @functools.wraps(command)
    def wrapper(*args, **kwargs):
        try:
            return command(*args, **kwargs)
        except TandemInputError as exc:
            err.print(f"[bold red]error:[/] {escape(str(exc))}", highlight=False, soft_wrap=True)
        except OSError as exc:  # a full disk, a read-only place, a name too long to look up
            try:
                err.print(f"[bold red]error:[/] {escape(os_error_line(exc))}", highlight=False,
                          soft_wrap=True)
            except OSError:
                pass
        raise typer.Exit(2)

    return wrapper


def command_asked(app, argv: list[str]):
    """The app with only the command named first on the command line: typer builds the options
    of every command it holds at each start (50 ms for nine, 4 ms for one, on the 2-core
    development machine). Help, the version and an unknown name get the whole app, so its
    listing and its suggestions stay as they are."""
    import copy

    chosen = [c for c in app.registered_commands
              if argv and (c.name or c.callback.__name__.replace("_", "-")) == argv[0]]
    if len(chosen) != 1:
        return app
    only = copy.copy(app)
    only.registered_commands = chosen
    return only


def run_app(app) -> None:
    """Run the typer app so that usage errors are one line (exit 2) and Ctrl-C is exit 130."""
    click = _click()
    _plain_encoding()
    try:
        code = typer.main.get_command(command_asked(app, sys.argv[1:])).main(
            prog_name="tandem", standalone_mode=False)
    except click.exceptions.UsageError as exc:
        hint = f" (see 'tandem {exc.ctx.info_name} --help')" if exc.ctx and exc.ctx.parent else ""
        err.print(f"[bold red]error:[/] {escape(exc.format_message())}{hint}", highlight=False,
                  soft_wrap=True)
        sys.exit(2)
    except (KeyboardInterrupt, getattr(click.exceptions, "Abort", KeyboardInterrupt)):
        code = 130
    if code == 130:  # Ctrl-C: click itself may catch it and hand back 130, silently
        err.print("interrupted")
    sys.exit(code if isinstance(code, int) else 0)


#: inputs a design table may sweep: shown in any terminal whenever the rows differ in them
SWEPT_INPUTS = ("back_thickness_um",)


def design_columns(columns=None, rows=()):
    """Terminal (heading, cell, optional) triples of the design-table columns shown; a swept
    input (several back thicknesses among ``rows``) is never optional."""
    if columns is None:
        from tandem.output.report import DESIGN_COLUMNS as columns
    swept = {k for k in SWEPT_INPUTS if len({r.get(k) for r in rows}) > 1}
    return [(c.short, field_text(c.key, c.fmt, "none" if c.key.startswith("matched") else "—"),
             not c.compact and c.key not in swept) for c in columns
            if c.terminal and (not c.three or any(c.key in r for r in rows))]


def stack_over_scenario(stack: str, operating):
    """A scenario's operating point for a layer stack given beside it, and the note saying
    so: the stack replaces the scenario's absorbers and its flat optical losses (the stack's
    layers are its losses)."""
    import dataclasses

    flat = {k: 0.0 for k in operating.optical_losses_given()}
    note = (f"--stack {stack} replaces the scenario's absorbers"
            + (f" and its flat {', '.join(k.replace('_', ' ') for k in flat)}" if flat else ""))
    return dataclasses.replace(operating, **flat), note
