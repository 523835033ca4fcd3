"""Strict TOML input files (absorbers, stacks, scenarios): reading, and checking a parsed
file against a schema so that every failure is one line naming the file, the field and the fix.
"""

from __future__ import annotations

import difflib
import math
import tomllib
from pathlib import Path

from tandem.core.errors import TandemInputError

#: schema: section -> {key: (kind, required)}; "" holds top-level keys.
#: kinds: str, num, bool, strlist, numlist, and any other name a caller checks itself
Schema = dict[str, dict[str, tuple[str, bool]]]


class Checker:
    """Strict checks of a parsed TOML file against a schema; every failure is one line."""

    def __init__(self, path: Path, data: dict, schema: Schema, label: str = "absorber file",
                 required_sections=("gap", "absorption", "optics", "electrical", "thickness",
                                    "sources"), free_sections=("sources",)):
        self.path = path
        self.data = data
        self.schema = schema
        self.label = label
        self.required_sections = required_sections
        self.free_sections = free_sections

    def fail(self, field_name: str, problem: str, fix: str) -> None:
        raise TandemInputError(f"{self.label} '{self.path}': field '{field_name}' {problem}; {fix}")

    def check_keys(self) -> None:
        schema = self.schema
        for key, value in self.data.items():
            if key in schema and key:
                if not isinstance(value, dict):
                    self.fail(key, "must be a [section]", f"write it as [{key}] with its keys below")
                if key in self.free_sections:
                    continue
                for sub in value:
                    if sub not in schema[key]:
                        hint = difflib.get_close_matches(sub, schema[key], n=1)
                        fix = f"did you mean '{hint[0]}'?" if hint else \
                            f"allowed keys: {', '.join(schema[key])}"
                        self.fail(f"{key}.{sub}", "is not a known key", fix)
            elif key not in schema[""]:
                hint = difflib.get_close_matches(key, list(schema) + list(schema[""]), n=1)
                fix = f"did you mean '{hint[0]}'?" if hint else "remove it"
                self.fail(key, "is not a known key", fix)
        for section in self.required_sections:
            if section not in self.data:
                self.fail(section, "is missing", f"add a [{section}] section (see docs/file-formats.md)")
        for section, keys in schema.items():
            for key, (kind, required) in keys.items():
                where = self.data if not section else self.data.get(section, {})
                name = f"{section}.{key}" if section else key
                if key not in where:
                    present = not section or section in self.data
                    if required and present:
                        self.fail(name, "is missing", "add it (see docs/file-formats.md)")
                    continue
                self.check_kind(name, where[key], kind)

    def check_kind(self, name: str, value, kind: str) -> None:
        if kind == "str" and not isinstance(value, str):
            self.fail(name, f"= {value!r} must be text", "put it in quotes")
        if kind == "num":
            if isinstance(value, bool) or not isinstance(value, (int, float)) or not math.isfinite(value):
                self.fail(name, f"= {value!r} must be a finite number", "give a number")
        if kind == "bool" and not isinstance(value, bool):
            self.fail(name, f"= {value!r} must be true or false", "write true or false")
        if kind == "strlist":
            if not (isinstance(value, list) and value and all(isinstance(v, str) for v in value)):
                self.fail(name, f"= {value!r} must be a list of names", 'write e.g. ["silicon"]')
        if kind == "numlist":
            if not (isinstance(value, list) and value and all(
                    isinstance(v, (int, float)) and not isinstance(v, bool) and math.isfinite(v)
                    for v in value)):
                self.fail(name, f"= {value!r} must be a list of numbers", "write e.g. [1.0, 2.0]")

    def get(self, section: str, key: str, default=None):
        return self.data.get(section, {}).get(key, default)

    def positive(self, section: str, key: str, unit: str, default=None, low=None, high=None):
        """A positive value, inside [low, high] where the physics bounds it."""
        value = self.get(section, key, default)
        if value is not None and not value > 0:
            self.fail(f"{section}.{key}", f"= {value:g} must be positive", f"give it in {unit}")
        if value is not None and ((low is not None and value < low)
                                  or (high is not None and value > high)):
            span = f"{low:g}–{high:g}" if low is not None else f"up to {high:g}"
            self.fail(f"{section}.{key}", f"= {value:g} is outside {span}", f"give it in {unit}")
        return value


def read_toml(path: Path, label: str = "absorber file",
               hint: str = "or a bundled name (see 'tandem absorbers')") -> dict:
    if not path.is_file():
        raise TandemInputError(f"{label} '{path}' not found; give a path to a .toml file {hint}")
    try:
        # a byte-order mark (Windows editors write one) is not TOML; it is dropped
        return tomllib.loads(path.read_bytes().decode("utf-8").removeprefix("\ufeff"))
    except tomllib.TOMLDecodeError as exc:
        raise TandemInputError(f"{label} '{path}': not valid TOML ({exc}); fix the syntax") from None
    except RecursionError:
        raise TandemInputError(f"{label} '{path}': nested too deeply to be a description; "
                               "flatten it") from None
    except (OSError, UnicodeDecodeError) as exc:
        raise TandemInputError(f"{label} '{path}' cannot be read ({exc})") from None
