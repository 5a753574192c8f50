"""Scenario files (TOML) → validated, frozen :class:`Site`.

Every problem is reported as one :class:`~fringe.model.errors.ScenarioError` naming the file,
the key path (``magnet[1].coil[0].r_outer_m``), what was expected and what was found.
Unknown keys are errors with a "did you mean" suggestion.

Sections are parsed by functions registered in ``_SECTIONS``; each feature adds its
own section parser there, so the list of accepted top-level keys is one list.
"""

from __future__ import annotations

import difflib
import math
import tomllib
import warnings
from collections.abc import Callable
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from fringe.model.constants import MAX_COORDINATE_M
from fringe.model.errors import FringeWarning, ScenarioError, must_be
from fringe.model.magnet import Coil, Magnet

__all__ = ["Site", "load_site", "parse_site", "Reader"]


@dataclass(frozen=True)
class Site:
    """Everything a scenario describes, validated and frozen.

    Attributes
    ----------
    name : str
        Site name printed on every output.
    magnets : tuple of Magnet
    source_file : str
        The scenario file it was loaded from ("" when built in code).
    sections : dict
        Further parsed sections keyed by top-level scenario key (floors, rooms, …),
        each owned by the feature module that parses it.
    """

    name: str
    magnets: tuple[Magnet, ...]
    source_file: str = ""
    sections: dict[str, Any] = field(default_factory=dict, compare=False)

    def magnet(self, name: str) -> Magnet:
        """The magnet called ``name``; :class:`ScenarioError` listing the names otherwise."""
        for m in self.magnets:
            if m.name == name:
                return m
        names = ", ".join(repr(m.name) for m in self.magnets) or "none"
        raise ScenarioError(must_be("--magnet", f"one of the site's magnets ({names})", name),
                            self.source_file or None)

    def section(self, key: str, default: Any = None) -> Any:
        """A further parsed section (e.g. ``"floor"``), or ``default``."""
        return self.sections.get(key, default)


def finite_number(v: int | float) -> bool:
    """True for a finite number; False for NaN, ±inf and ints too large for a float."""
    try:
        return math.isfinite(v)
    except OverflowError:
        return False


_TYPE_WORDS = {bool: "true or false", int: "a whole number", float: "a number",
               str: "a string", list: "an array", dict: "a table"}


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


# -- magnets -------------------------------------------------------------------------

def parse_coil(r: Reader) -> Coil:
    """Parse one ``[[magnet.coil]]`` table."""
    ri = r.number("r_inner_m", low=0.0)
    ro = r.number("r_outer_m", low=0.0, low_open=True)
    if ro <= ri:
        r.fail(r.key("r_outer_m"), f"greater than r_inner_m ({ri:g})", ro)
    z0 = r.number("z_min_m")
    z1 = r.number("z_max_m")
    if z1 <= z0:
        r.fail(r.key("z_max_m"), f"greater than z_min_m ({z0:g})", z1)
    turns = r.number("turns", low=0.0, low_open=True)
    cur = r.number("current_A")
    r.finish()
    return Coil(ri, ro, z0, z1, turns, cur)


#: Parsers for alternative magnet descriptions (e.g. data-sheet numbers), keyed by the
#: sub-table name that selects them. Each takes the magnet Reader and returns coils,
#: a description and an origin tag.
MAGNET_BUILDERS: dict[str, Callable[[Reader, str], tuple[tuple[Coil, ...], str, str]]] = {}


def parse_magnet(r: Reader) -> Magnet:
    """Parse one ``[[magnet]]`` table."""
    name = r.string("name")
    center = r.vector("center_m", 3)
    if max(abs(x) for x in center) > MAX_COORDINATE_M:
        r.fail(r.key("center_m"), f"site coordinates within ±{MAX_COORDINATE_M:g} m", list(center))
    axis = r.vector("axis", 3, (0.0, 0.0, 1.0))
    if math.hypot(*axis) == 0.0:
        r.fail(r.key("axis"), "a non-zero vector", list(axis))
    big = max(abs(x) for x in axis)  # pre-scale: huge or subnormal axes normalise cleanly
    axis = tuple(x / big for x in axis)
    description = r.string("description", "", nonempty=False)
    builders = [k for k in MAGNET_BUILDERS if r.has(k)]
    if r.has("coil") and builders:
        r.fail(r.key("coil"), f"absent when `{r.key(builders[0])}` is given", "both")
    if builders:
        coils, desc, origin = MAGNET_BUILDERS[builders[0]](r, name)
        description = description or desc
    else:
        crs = r.tables("coil")
        if not crs:
            alt = "".join(f" or a [{r.key(k)}] table" for k in MAGNET_BUILDERS)
            raise ScenarioError(
                f"`{r.key('coil')}` is missing; a magnet needs at least one "
                f"[[magnet.coil]]{alt}", r.file)
        coils = tuple(parse_coil(c) for c in crs)
        origin = "coils"
    r.finish()
    _check_centre_field(r, name, coils)
    return Magnet(name, center, axis, coils, description, origin)


#: Centre fields above this (T) draw a warning: the strongest superconducting magnets
#: reach about 28 T (1.2 GHz NMR, from memory), whole-body MR magnets 11.7 T. A larger
#: value is almost always a unit slip in ``current_A`` or ``turns``.
PLAUSIBLE_CENTRE_FIELD_T: float = 30.0


def _check_centre_field(r: Reader, name: str, coils: tuple[Coil, ...]) -> None:
    """Refuse a magnet whose field overflows; warn when its centre field is implausible."""
    from fringe.physics.energy import (
        center_field_T,  # closed form (Jackson Sec. 5.5); imported lazily
    )

    try:
        b = center_field_T(Magnet(name, (0.0, 0.0, 0.0), (0.0, 0.0, 1.0), coils))
    except (OverflowError, ZeroDivisionError, ValueError):
        b = math.nan
    if not math.isfinite(b):
        raise ScenarioError(f"`{r.key('coil')}` must give a finite field (check `current_A`, "
                            f"`turns` and the coil sizes); got a centre field of {b} T", r.file)
    if abs(b) > PLAUSIBLE_CENTRE_FIELD_T:
        where = f"{r.file}: " if r.file else ""
        warnings.warn(f"{where}magnet {name!r} (`{r.path}`) has a centre field of {abs(b):.4g} T, "
                      f"above the {PLAUSIBLE_CENTRE_FIELD_T:g} T that any built magnet reaches; "
                      "check `current_A` (amperes per turn) and `turns`",
                      FringeWarning, stacklevel=2)


def _parse_site_table(r: Reader | None) -> dict[str, Any]:
    if r is None:
        return {}
    out = {"name": r.string("name", "unnamed site"),
           "description": r.string("description", "", nonempty=False)}
    r.finish()
    return out


#: Top-level sections other than ``site`` and ``magnet``: key → parser(root Reader, file
#: Path, magnets) returning the parsed section stored in ``Site.sections[key]``.
#: Registered by feature modules at import of :mod:`fringe.io.sections`.
SECTION_PARSERS: dict[str, Callable[[Reader, Path, tuple[Magnet, ...], dict], Any]] = {}


#: Top-level keys read by a section parser besides its own key (e.g. ``room_file``,
#: read by the ``room`` parser); parsers add theirs here.
EXTRA_TOP_LEVEL_KEYS: set[str] = set()


def _check_top_level_spelling(root: Reader) -> None:
    """Refuse a misspelt section name before any section is parsed.

    Sections are parsed in turn and only then are unknown keys reported; a misspelt
    ``[[floors]]`` would first make ``[[room]]`` fail on its unknown floor, hiding the
    real fault. A key that is not known but close to a known one is reported at once.
    """
    known = {"site", "magnet", *SECTION_PARSERS, *EXTRA_TOP_LEVEL_KEYS}
    for k in root.data:
        if k in known:
            continue
        hint = difflib.get_close_matches(k, sorted(known), n=1, cutoff=0.6)
        if hint:
            raise ScenarioError(f"`{k}` is not a known key; did you mean `{hint[0]}`?",
                                root.file)


def parse_site(data: dict, file: str | Path = "<scenario>") -> Site:
    """Validate an already-decoded TOML mapping into a :class:`Site`."""
    from fringe.io import sections  # noqa: F401  (registers section parsers)

    file = str(file)
    root = Reader(data, "", file)
    _check_top_level_spelling(root)
    site_info = _parse_site_table(root.table("site"))
    mags = tuple(parse_magnet(m) for m in root.tables("magnet"))
    seen: set[str] = set()
    for i, m in enumerate(mags):
        if m.name in seen:
            root.fail(f"magnet[{i}].name", "unique among magnets", m.name)
        seen.add(m.name)
    parsed: dict[str, Any] = {}
    for key, parser in SECTION_PARSERS.items():
        parsed[key] = parser(root, Path(file), mags, parsed)
    root.finish()
    return Site(site_info.get("name", "unnamed site"), mags, file, parsed)


def load_site(path: str | Path) -> Site:
    """Load and validate a scenario file.

    Parameters
    ----------
    path : str or Path
        A TOML scenario file (UTF-8).

    Returns
    -------
    Site

    Raises
    ------
    ScenarioError
        For a missing, unreadable, non-UTF-8 or malformed file, or any invalid value;
        the message names the file and the key path.
    """
    p = Path(path)
    try:
        raw = p.read_bytes()
    except OSError as e:
        raise ScenarioError(f"cannot read the scenario file: {e.strerror or e}", str(p)) from None
    try:
        text = raw.decode("utf-8")
    except UnicodeDecodeError as e:
        raise ScenarioError(f"the file must be UTF-8 text; byte {e.start} is not", str(p)) from None
    text = text.removeprefix("\ufeff")  # a UTF-8 byte-order mark (some Windows editors)
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as e:
        raise ScenarioError(f"not valid TOML: {e}", str(p)) from None
    except RecursionError:
        raise ScenarioError("not valid TOML: arrays or tables are nested too deeply",
                            str(p)) from None
    return parse_site(data, p)
