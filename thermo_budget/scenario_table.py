"""Reading one TOML table of a scenario: typed getters that convert quantities to SI, check
ranges and remember which keys were used, so that a leftover (unknown) key is reported.

Every problem raises ScenarioError naming the key path, the value and what was expected.
"""
from __future__ import annotations

import copy
import tomllib

import numpy as np

from .errors import ScenarioError
from .units import SI_UNIT, convert, parse_quantity

MAX_FILE_BYTES = 1_000_000

_MISSING = object()


class _Table:
    """Reads one TOML table, remembering which keys were used so leftovers are reported."""

    def __init__(self, raw, path: str, required: bool = True):
        if raw is _MISSING or raw is None:
            if required:
                raise ScenarioError(path, None, f"a [{path}] table")
            raw = {}
        if not isinstance(raw, dict):
            raise ScenarioError(path, raw, "a table")
        self.raw, self.path, self.used = raw, path, set()

    def key(self, name: str) -> str:
        return f"{self.path}.{name}" if self.path else name

    def get(self, name, default=_MISSING):
        self.used.add(name)
        if name in self.raw:
            return self.raw[name]
        if default is _MISSING:
            raise ScenarioError(self.key(name), None, "a value (the key is missing)")
        return default

    def quantity(self, name, kind, bare_unit, default=_MISSING, minimum=None, above=None, maximum=None):
        """The value in SI; minimum, above and maximum are in SI too (maximum is quoted back in
        bare_unit when it is exceeded)."""
        value = self.get(name, default)
        if value is None:
            return None
        si = parse_quantity(value, self.key(name), kind, bare_unit)
        _check_range(self.key(name), value, si, minimum, above, kind)
        if maximum is not None and si > maximum:
            raise ScenarioError(self.key(name), value, f"at most {convert(maximum, SI_UNIT[kind], bare_unit):g} {bare_unit}")
        return si

    def number(self, name, default=_MISSING, minimum=None, maximum=None, above=None, integer=False):
        value = self.get(name, default)
        if value is None:
            return None
        if isinstance(value, bool) or not isinstance(value, (int, float)) or (integer and not isinstance(value, int)):
            raise ScenarioError(self.key(name), value, "a whole number" if integer else "a number")
        if not np.isfinite(value):
            raise ScenarioError(self.key(name), value, "a finite number")
        if minimum is not None and value < minimum:
            raise ScenarioError(self.key(name), value, f"a number of at least {minimum:g}")
        if maximum is not None and value > maximum:
            raise ScenarioError(self.key(name), value, f"a number of at most {maximum:g}")
        if above is not None and value <= above:
            raise ScenarioError(self.key(name), value, f"a number greater than {above:g}")
        return value

    def choice(self, name, options, default=_MISSING):
        value = self.get(name, default)
        if value not in options:
            raise ScenarioError(self.key(name), value, "one of " + ", ".join(f'"{o}"' for o in options))
        return value

    def finish(self):
        unknown = [k for k in self.raw if k not in self.used]
        if unknown:
            raise ScenarioError(self.key(unknown[0]), self.raw[unknown[0]],
                                "no such key here; known keys: " + ", ".join(sorted(self.used)))


def _check_range(key, value, si, minimum, above, kind):
    if kind == "temperature":
        if si <= 0.0:
            raise ScenarioError(key, value, "a temperature above absolute zero")
        if not -60.0 <= si - 273.15 <= 250.0:
            raise ScenarioError(key, value, "a temperature between -60 and 250 degC (the range of a mineral-oil rig)")
        return
    if above is not None and si <= above:
        raise ScenarioError(key, value, f"a value greater than {above:g} (SI)" if above else "a positive value")
    if minimum is not None and si < minimum:
        raise ScenarioError(key, value, "a value of zero or more" if minimum == 0 else f"at least {minimum:g} (SI)")


def with_path(raw: dict, path: str, value) -> dict:
    """A copy of the document raw with the key path "a.b" set to value (None removes the key)."""
    new = copy.deepcopy(raw)
    parts = path.split(".")
    table = new
    for part in parts[:-1]:
        table = table.setdefault(part, {})
    if value is None:
        table.pop(parts[-1], None)
    else:
        table[parts[-1]] = value
    return new


def read_toml_text(text: str, source: str = "scenario") -> dict:
    if len(text.encode("utf-8")) > MAX_FILE_BYTES:
        raise ScenarioError(source, f"{len(text.encode('utf-8'))} bytes", f"a file of at most {MAX_FILE_BYTES} bytes")
    try:
        return tomllib.loads(text)
    except tomllib.TOMLDecodeError as error:
        raise ScenarioError(source, "malformed TOML", f"valid TOML ({error})") from None
