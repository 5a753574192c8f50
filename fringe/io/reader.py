"""Reading scenario tables: :class:`Reader` checks and consumes the keys of one TOML table.

Shared by the scenario reader (:mod:`fringe.io.scenario`) and its section parsers
(:mod:`fringe.io.scenario_plan`, :mod:`fringe.io.scenario_quench`,
:mod:`fringe.io.scenario_datasheet`), which import it and nothing of each other's.
Every problem is one :class:`~fringe.model.errors.ScenarioError` naming the file and
the key path; unknown keys are errors with a "did you mean" suggestion.
"""

from __future__ import annotations

import difflib
import math
from typing import Any

from fringe.model.errors import ScenarioError, must_be

__all__ = ["Reader", "finite_number"]


def finite_number(v: int | float) -> bool:
    """True for a finite number; False for NaN, ±inf and ints too large for a float."""
    try:
        return math.isfinite(v)
    except OverflowError:
        return False


class Reader:
    """A TOML table with the key path it came from; checks and consumes keys.

    ``finish()`` reports the first key never consumed, with a "did you mean".
    """

    def __init__(self, data: Any, path: str, file: str | None) -> None:
        self.file = file
        self.path = path
        if not isinstance(data, dict):
            self.fail(path, "a table", data)
        self.data = data
        self.used: set[str] = set()

    def key(self, name: str) -> str:
        return f"{self.path}.{name}" if self.path else name

    def fail(self, key_path: str, expectation: str, got: Any) -> None:
        raise ScenarioError(must_be(key_path, expectation, got), self.file)

    def has(self, name: str) -> bool:
        return name in self.data

    def raw(self, name: str, default: Any = ...) -> Any:
        self.used.add(name)
        if name not in self.data:
            if default is ...:
                # A misspelt required key is reported as missing; name the likely typo.
                near = difflib.get_close_matches(
                    name, [k for k in self.data if k not in self.used], n=1, cutoff=0.8)
                extra = (f" (found `{self.key(near[0])}`: did you mean `{self.key(name)}`?)"
                         if near else "")
                raise ScenarioError(f"`{self.key(name)}` is missing; it is required{extra}",
                                    self.file)
            return default
        return self.data[name]

    def number(self, name: str, default: Any = ..., *, low: float | None = None,
               high: float | None = None, low_open: bool = False,
               integer: bool = False) -> float:
        v = self.raw(name, default)
        if v is default and default is not ...:
            return v
        kp = self.key(name)
        what = "a whole number" if integer else "a number"
        if isinstance(v, bool) or not isinstance(v, (int, float)):
            self.fail(kp, what, v)
        if not finite_number(v):
            self.fail(kp, "a finite number", v)
        if integer and not float(v).is_integer():
            self.fail(kp, what, v)
        if low is not None and (v <= low if low_open else v < low):
            self.fail(kp, f"{what} {'>' if low_open else '≥'} {low:g}", v)
        if high is not None and v > high:
            self.fail(kp, f"{what} ≤ {high:g}", v)
        return int(v) if integer else float(v)

    def string(self, name: str, default: Any = ..., *, choices: tuple[str, ...] | None = None,
               nonempty: bool = True) -> str:
        v = self.raw(name, default)
        if v is default and default is not ...:
            return v
        kp = self.key(name)
        if not isinstance(v, str) or (nonempty and not v.strip()):
            self.fail(kp, "a non-empty string" if nonempty else "a string", v)
        if choices is not None and v not in choices:
            hint = difflib.get_close_matches(v, choices, n=1)
            extra = f" (did you mean {hint[0]!r}?)" if hint else ""
            self.fail(kp, f"one of {', '.join(map(repr, choices))}{extra}", v)
        return v

    def boolean(self, name: str, default: Any = ...) -> bool:
        v = self.raw(name, default)
        if not isinstance(v, bool):
            self.fail(self.key(name), "true or false", v)
        return v

    def vector(self, name: str, length: int, default: Any = ...) -> tuple[float, ...]:
        v = self.raw(name, default)
        if v is default and default is not ...:
            return v
        kp = self.key(name)
        if (not isinstance(v, list) or len(v) != length
                or any(isinstance(x, bool) or not isinstance(x, (int, float)) for x in v)):
            self.fail(kp, f"an array of {length} numbers", v)
        if not all(finite_number(x) for x in v):
            self.fail(kp, f"an array of {length} finite numbers", v)
        return tuple(float(x) for x in v)

    def tables(self, name: str, *, required: bool = False) -> list[Reader]:
        v = self.raw(name, ... if required else [])
        kp = self.key(name)
        if isinstance(v, dict):
            v = [v]
        if not isinstance(v, list):
            self.fail(kp, f"an array of tables ([[{kp}]])", v)
        return [Reader(item, f"{kp}[{i}]", self.file) for i, item in enumerate(v)]

    def table(self, name: str) -> Reader | None:
        if name not in self.data:
            self.used.add(name)
            return None
        return Reader(self.raw(name), self.key(name), self.file)

    def finish(self) -> None:
        for k in self.data:
            if k not in self.used:
                hint = difflib.get_close_matches(k, [x for x in self.used if x not in self.data]
                                                 + list(self.used), n=1, cutoff=0.6)
                extra = f"; did you mean `{self.key(hint[0])}`?" if hint else ""
                raise ScenarioError(f"`{self.key(k)}` is not a known key{extra}", self.file)
