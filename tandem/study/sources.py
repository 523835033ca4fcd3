"""Where a scenario comes from: a bundled name, a TOML file, or an earlier study's manifest.

A manifest's inputs are data, never paths: names are checked against a plain-name pattern and
files are written only inside a private temporary folder.
"""

from __future__ import annotations

from typing import Any

import json
import tempfile
import tomllib
from dataclasses import replace
from pathlib import Path

from tandem.core.errors import TandemInputError
from tandem.core.files import bundled_dir
from tandem.optics.absorbers import Absorber
from tandem.core.toml_files import read_toml
from tandem.optics.absorber_files import load_absorber, parse_absorber
from tandem.optics.edges import EDGE_MODELS
from tandem.study.scenario import (
    MANIFEST_FORMAT,
    REFERENCE_NAMES,
    SAFE_KEY,
    Scenario,
    canonical_json,
    manifest_checksum,
    materialise,
    plain_key,
    read_text_file,
    resolve,
    sha256_text,
)


def bundled_scenarios() -> dict[str, Path]:
    return {p.stem: p for p in sorted(bundled_dir("scenarios").glob("*.toml"))}


DEFAULT_SCENARIO = "wide-gap-partner-for-silicon"


def load_scenario(name_or_path: str | Path | None = None, accept_edited: bool = False) -> Scenario:
    """A bundled scenario by name (default: the wide-gap partner for silicon), a scenario
    TOML file, or the ``manifest.json`` of an earlier study (to run it again).

    A manifest whose checksum does not match is refused unless ``accept_edited``.
    """
    if name_or_path is None:
        name_or_path = DEFAULT_SCENARIO
    text = str(name_or_path)
    path = Path(text)
    if path.suffix == ".json" or path.is_dir():
        return scenario_from_manifest(path / "manifest.json" if path.is_dir() else path,
                                      accept_edited)
    if not (text.endswith(".toml") or path.is_file()):
        bundled = bundled_scenarios()
        if text not in bundled:
            raise TandemInputError(f"scenario '{text}' is neither a bundled name nor a file; "
                                   f"bundled: {', '.join(bundled)}")
        path = bundled[text]
    if not path.is_file():
        raise TandemInputError(f"scenario file '{path}' not found; give a .toml file or a bundled "
                               "scenario name (see 'tandem study --list')")
    scenario_text = read_text_file(path, "scenario file")
    return resolve(path, path.stem, scenario_text, _disk_absorber(path), _disk_files(path),
                   _disk_stack(path))


def _disk_absorber(scenario_path: Path):
    """Load a candidate named in a scenario file: bundled name or path beside the scenario."""
    def load(entry: str, role: str = "", index: int = 0):
        candidate = scenario_path.parent / entry
        a = load_absorber(candidate if entry.endswith(".toml") else entry)
        record: dict[str, Any] = {"entry": entry, "text": read_text_file(a.path, "absorber file"),
                                  "table": None}
        paths = [a.path]
        file_key = EDGE_MODELS[a.edge_model].data_file_key
        if file_key is not None:
            rel = str(read_toml(a.path).get("absorption", {}).get(file_key))
            record["table"] = {"name": rel,
                               "text": read_text_file(a.path.parent / rel, "absorption table")}
            paths.append(a.path.parent / rel)
        return a, record, paths
    return load


def _disk_files(scenario_path: Path):
    """Read the data files a scenario names (spectrum CSV, weather file, spectra folder)."""
    def load(data: dict):
        files: dict[str, Any] = {"spectrum": None, "weather": None, "spectra_folder": None}
        paths: list[Path] = []
        source = data.get("spectrum", {}).get("source")
        p = scenario_path.parent / str(source)
        if isinstance(source, str) and source.lower() not in REFERENCE_NAMES and (
                source.lower().endswith((".csv", ".txt", ".dat")) or p.is_file()):
            files["spectrum"] = {"name": p.name, "text": read_text_file(p, "spectrum file")}
            paths.append(p)
        weather = data.get("weather", {})
        if "file" in weather:
            p = scenario_path.parent / weather["file"]
            files["weather"] = {"name": p.name, "text": read_text_file(p, "weather file")}
            paths.append(p)
        if "spectra_folder" in weather:
            folder = scenario_path.parent / weather["spectra_folder"]
            csvs = sorted(folder.glob("*.csv"))
            files["spectra_folder"] = {f.name: read_text_file(f, "spectrum file") for f in csvs}
            paths += csvs
        return files, paths
    return load


def _disk_stack(scenario_path: Path):
    """A candidate stack: bundled name or a path beside the scenario. Its layers must use
    bundled absorbers, constants or the database, so that its text alone re-runs it."""
    def load(entry: str, index: int):
        from tandem.core.files import bundled_dir
        from tandem.design.stack_files import load_stack

        local = scenario_path.parent / entry
        stack = load_stack(local if entry.endswith(".toml") else entry)
        bundled = bundled_dir("absorbers").resolve()
        for x in stack.layers:
            if x.source.startswith("file ") or (x.absorber is not None
                                                 and x.absorber.path.resolve().parent != bundled):
                raise TandemInputError(f"its layer '{x.name}' reads a file of its own; in a study a "
                                       "stack's layers take bundled absorbers, constants or the "
                                       "database, so that the manifest re-runs it anywhere")
        return plain_key(stack.key), {"entry": entry, "text": read_text_file(stack.path, "stack file")}, \
            [stack.path]
    return load


def read_manifest(path: Path, accept_edited: bool = False) -> dict:
    """A study manifest, structurally checked and verified; one-line errors otherwise."""
    label = f"manifest '{path}'"
    if not Path(path).is_file():
        raise TandemInputError(f"{label} not found; give the manifest.json of a study folder")
    try:
        manifest = json.loads(read_text_file(Path(path), "manifest"))
    except json.JSONDecodeError as exc:
        raise TandemInputError(f"{label} is not valid JSON ({exc}); give the manifest.json "
                               "written by 'tandem study'") from None
    except RecursionError:
        raise TandemInputError(f"{label} is nested too deeply to be a study manifest") from None

    def need(cond, what):
        if not cond:
            raise TandemInputError(f"{label}: {what}; give an unedited manifest.json written by "
                                   "'tandem study'")

    need(isinstance(manifest, dict) and manifest.get("format") == MANIFEST_FORMAT,
         f"is not a '{MANIFEST_FORMAT}' file")
    integrity = manifest.get("integrity")
    need(isinstance(integrity, dict) and isinstance(integrity.get("manifest_sha256"), str)
         and isinstance(integrity.get("inputs_sha256"), str), "has no checksum")
    inputs = manifest.get("inputs")
    need(isinstance(inputs, dict), "has no 'inputs'")
    scen = inputs.get("scenario")
    need(isinstance(scen, dict) and isinstance(scen.get("text"), str)
         and isinstance(scen.get("name"), str) and SAFE_KEY.fullmatch(scen["name"]),
         "inputs.scenario must hold a plain 'name' and its 'text'")
    absorbers = inputs.get("absorbers")
    need(isinstance(absorbers, dict) and absorbers, "inputs.absorbers must map names to files")
    for k, rec in absorbers.items():
        need(SAFE_KEY.fullmatch(k) is not None, f"absorber name {k[:60]!r} is not a plain name")
        need(isinstance(rec, dict) and isinstance(rec.get("text"), str)
             and isinstance(rec.get("entry"), str), f"inputs.absorbers.{k} must hold 'entry' and 'text'")
        table = rec.get("table")
        need(table is None or (isinstance(table, dict) and isinstance(table.get("name"), str)
                               and isinstance(table.get("text"), str)),
             f"inputs.absorbers.{k}.table must be null or hold 'name' and 'text'")
    cands = inputs.get("candidates")
    need(isinstance(cands, dict) and all(isinstance(cands.get(r), list) and cands[r]
                                         and all(isinstance(x, str) and x in absorbers for x in cands[r])
                                         for r in ("front", "back")),
         "inputs.candidates must list front and back absorber names found in inputs.absorbers")
    stacks = inputs.get("stacks", {})
    need(isinstance(stacks, dict) and all(
        SAFE_KEY.fullmatch(k) and isinstance(r, dict) and isinstance(r.get("text"), str)
        and isinstance(r.get("entry"), str) for k, r in stacks.items())
        and list(stacks) == list(cands.get("stacks", [])),
        "inputs.stacks must map plain names to 'entry' and 'text', as inputs.candidates.stacks lists")
    files = inputs.get("files")
    need(isinstance(files, dict), "inputs.files is missing")
    for k in ("spectrum", "weather"):
        f = files.get(k)
        need(f is None or (isinstance(f, dict) and isinstance(f.get("name"), str)
                           and isinstance(f.get("text"), str)), f"inputs.files.{k} is malformed")
    folder = files.get("spectra_folder")
    need(folder is None or (isinstance(folder, dict) and all(
        isinstance(k, str) and isinstance(v, str) for k, v in folder.items())),
        "inputs.files.spectra_folder is malformed")
    edited = (manifest_checksum(manifest) != integrity["manifest_sha256"]
              or sha256_text(canonical_json(inputs)) != integrity["inputs_sha256"])
    if edited and not accept_edited:
        raise TandemInputError(f"{label} was changed after 'tandem study' wrote it (checksum "
                               "mismatch); run the original, or pass --accept-edited to run the "
                               "edited inputs (the new manifest records that)")
    manifest["_edited"] = edited
    return manifest


def scenario_from_manifest(path: Path, accept_edited: bool = False) -> Scenario:
    """Rebuild a scenario from a study's manifest: its own text, absorber and data files.

    Nothing in a manifest is used as a path: names are checked to be plain, and embedded
    files are written under them inside a private temporary folder, which is removed once
    they are parsed.
    """
    manifest = read_manifest(Path(path), accept_edited)
    inputs = manifest["inputs"]
    name = inputs["scenario"]["name"]
    records = inputs["absorbers"]
    with tempfile.TemporaryDirectory(prefix="tandem-manifest-") as tmp:
        parsed: dict[str, Absorber] = {}
        for i, (key, rec) in enumerate(records.items()):
            folder = Path(tmp) / f"absorber-{i}"
            folder.mkdir()
            toml_path = materialise(folder, f"{key}.toml", rec["text"])
            if rec.get("table"):
                materialise(folder, rec["table"]["name"], rec["table"]["text"])
            a = parse_absorber(toml_path)
            parsed[key] = replace(a, key=key, path=Path(f"{Path(path).name}:{rec['entry']}"))
        data_files = inputs["files"]
        scenario_text = inputs["scenario"]["text"]
        entries = tomllib.loads(scenario_text).get("candidates", {}) if scenario_text else {}
        for role in ("front", "back", "stacks"):
            listed = entries.get(role, []) if isinstance(entries, dict) else []
            if len(listed) != len(inputs["candidates"].get(role, [])):
                raise TandemInputError(f"manifest '{path}': inputs.candidates.{role} does not match "
                                       "the scenario's candidates; the manifest was edited")

        def absorber_source(entry, role, index):
            key = inputs["candidates"][role][index]
            return parsed[key], records[key], []

        def file_source(data):
            return dict(data_files), []

        def stack_source(entry, index):
            key = inputs["candidates"]["stacks"][index]
            return key, inputs["stacks"][key], []

        edited_from = manifest["integrity"]["manifest_sha256"] if manifest["_edited"] else None
        return resolve(Path(path), name, scenario_text, absorber_source, file_source,
                       stack_source, inputs["candidates"], edited_from)


