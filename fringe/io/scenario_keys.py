"""The light part of the scenario reader: reading the file, its TOML and its top-level keys.

:func:`read_scenario_toml` and :func:`check_top_level_spelling` are the first two steps
of :func:`fringe.io.scenario.load_site`; :func:`precheck_scenario` runs both, so the
command line can report a missing, unreadable, non-UTF-8 or malformed scenario file, or
a misspelt section name, before it imports numpy, scipy or matplotlib (issue 20). The
messages are the loader's own: the loader calls these functions. This module imports
only the standard library and :mod:`fringe.model.errors`.
"""

from __future__ import annotations

import difflib
import tomllib
from pathlib import Path
from typing import Any

from fringe.model.errors import ScenarioError

__all__ = ["TOP_LEVEL_KEYS", "read_scenario_toml", "check_top_level_spelling",
           "precheck_scenario"]

#: Every top-level key of a scenario, in the order its section is parsed (``room_file``
#: is read together with ``room``). Any other key is refused with a "did you mean".
#: The last four are the ``SECTION_KEY`` of :mod:`fringe.io.scenario_quench`,
#: :mod:`~fringe.io.scenario_implants`, :mod:`~fringe.io.scenario_moving` and
#: :mod:`~fringe.io.scenario_drawing` (a test keeps them in step).
TOP_LEVEL_KEYS: tuple[str, ...] = ("site", "magnet", "plan", "floor", "room", "room_file",
                                   "equipment", "quench", "implant_condition", "steel",
                                   "moving_steel", "drawing")


def read_scenario_toml(path: str | Path) -> dict[str, Any]:
    """Read a scenario file and decode its TOML (UTF-8, a byte-order mark allowed).

    Raises
    ------
    ScenarioError
        For a missing, unreadable, non-UTF-8 or malformed file; the message names the file
        (and, for TOML syntax, the line and column).
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
        return tomllib.loads(text)
    except tomllib.TOMLDecodeError as e:
        raise ScenarioError(f"not valid TOML: {e}", str(p)) from None
    except RecursionError:
        raise ScenarioError("not valid TOML: arrays or tables are nested too deeply",
                            str(p)) from None


def check_top_level_spelling(data: dict[str, Any], file: str | None) -> None:
    """Refuse a misspelt section name before any section is parsed.

    Sections are parsed in turn and only then are unknown keys reported; a misspelt
    ``[[floors]]`` would first make ``[[room]]`` fail on its unknown floor, hiding the
    real fault. A key that is not known but close to a known one is reported at once.
    (An unknown key close to none is reported after the sections, by the loader.)
    """
    known = set(TOP_LEVEL_KEYS)
    for k in data:
        if k in known:
            continue
        hint = difflib.get_close_matches(k, sorted(known), n=1, cutoff=0.6)
        if hint:
            raise ScenarioError(f"`{k}` is not a known key; did you mean `{hint[0]}`?", file)


def precheck_scenario(path: str | Path) -> dict[str, Any]:
    """The checks :func:`fringe.io.scenario.load_site` makes first, with no heavy import.

    Returns the decoded TOML; raises the :class:`ScenarioError` the loader would raise for
    an unreadable file, bad UTF-8, bad TOML or a misspelt top-level key.
    """
    data = read_scenario_toml(path)
    check_top_level_spelling(data, str(Path(path)))
    return data
