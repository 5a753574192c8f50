"""A scenario file with some magnets' centres and currents changed (``calibrated.toml``).

The original text is kept, comments and layout included: only the ``center_m`` line of
each changed ``[[magnet]]``, the ``current_A`` line of each of its ``[[magnet.coil]]``
tables and the ``path`` of a ``[[room_file]]`` given relative to the scenario's folder are
rewritten, each with a comment saying what it was. The edited text is parsed back and
compared with the intended values; where that cannot be done line by line (a magnet
given by data-sheet numbers, coils written as inline tables, values split oddly) the
whole scenario is written from its parsed values with tomli-w instead, and the comments
of the original are then lost (the header says so).
"""

from __future__ import annotations

import copy
import os
import re
import tomllib
from collections.abc import Mapping, Sequence
from pathlib import Path

import tomli_w

from fringe.io.scenario_datasheet import DATASHEET_KEY
from fringe.io.toml_out import toml_value
from fringe.model.errors import ScenarioError

__all__ = ["edited_scenario_toml", "MagnetChange"]

#: name → (new centre (3,) m, new coils as ``[{r_inner_m, …, current_A}, …]``)
MagnetChange = tuple[Sequence[float], Sequence[Mapping[str, float]]]

_HEADER = re.compile(r"^\s*(\[\[?)\s*([A-Za-z0-9_.\-]+)\s*\]\]?\s*(#.*)?$")
_KEY = re.compile(r"^(\s*)([A-Za-z0-9_\-]+)(\s*=\s*)(.*)$")


def _expected(data: dict, changes: Mapping[str, MagnetChange], out_dir: Path,
              base: Path) -> dict:
    want = copy.deepcopy(data)
    for mag in want.get("magnet", []):
        if mag.get("name") not in changes:
            continue
        centre, coils = changes[mag["name"]]
        mag["center_m"] = [float(v) for v in centre]
        if "coil" in mag and len(mag["coil"]) == len(coils):
            for c, new in zip(mag["coil"], coils, strict=True):
                c["current_A"] = float(new["current_A"])
        else:  # a data-sheet magnet: its equivalent coils, calibrated
            mag.pop(DATASHEET_KEY, None)
            mag["coil"] = [dict(c) for c in coils]
    for rf in want.get("room_file", []):
        p = rf.get("path")
        if isinstance(p, str) and not Path(p).is_absolute():
            rf["path"] = _moved_path(base / p, out_dir)
    return want


def _moved_path(target: Path, out_dir: Path) -> str:
    """``target`` as seen from ``out_dir``: relative where possible, else absolute."""
    try:
        return Path(os.path.relpath(target.resolve(), out_dir.resolve())).as_posix()
    except ValueError:  # another drive (Windows)
        return str(target.resolve())


def _value_end(lines: list[str], i: int) -> int:
    """Index of the last line of the value starting on line ``i`` (arrays may span lines)."""
    depth = 0
    for j in range(i, len(lines)):
        text = re.sub(r'"[^"]*"', "", lines[j].split("#", 1)[0])
        depth += text.count("[") - text.count("]")
        if depth <= 0:
            return j
    return len(lines) - 1


def _edit_lines(text: str, want: dict) -> str:
    """The original text with the changed values put in line by line."""
    lines = text.splitlines()
    out: list[str] = []
    table, m_idx, c_idx, rf_idx = "", -1, -1, -1
    mags = want.get("magnet", [])
    rfs = want.get("room_file", [])
    i = 0
    while i < len(lines):
        line = lines[i]
        h = _HEADER.match(line)
        if h:
            table = h.group(2)
            if table == "magnet":
                m_idx, c_idx = m_idx + 1, -1
            elif table == "magnet.coil":
                c_idx += 1
            elif table == "room_file":
                rf_idx += 1
            out.append(line)
            i += 1
            continue
        k = _KEY.match(line)
        new = None
        if k and table == "magnet" and k.group(2) == "center_m":
            new = mags[m_idx]["center_m"]
        elif k and table == "magnet.coil" and k.group(2) == "current_A":
            new = mags[m_idx]["coil"][c_idx]["current_A"]
        elif k and table == "room_file" and k.group(2) == "path":
            new = rfs[rf_idx]["path"]
        if new is None:
            out.append(line)
            i += 1
            continue
        end = _value_end(lines, i)
        old = " ".join(s.strip() for s in lines[i:end + 1])
        old_value = k.group(4) if end == i else old.split("=", 1)[1]
        old_value = old_value.split("#", 1)[0].strip()
        new_text = toml_value(new)
        if new_text != old_value:
            out.append(f"{k.group(1)}{k.group(2)}{k.group(3)}{new_text}  # was {old_value}")
        else:
            out.extend(lines[i:end + 1])
        i = end + 1
    return "\n".join(out) + "\n"


def edited_scenario_toml(scenario_file: str | Path, changes: Mapping[str, MagnetChange], *,
                         out_dir: str | Path, header: Sequence[str] = ()) -> str:
    """The text of ``scenario_file`` with the magnets of ``changes`` given new centres and
    coil currents, to be written into ``out_dir``.

    Parameters
    ----------
    scenario_file : str or Path
        The original scenario (TOML).
    changes : mapping
        Magnet name → (centre (3,) in m, coils as dicts of the scenario's coil keys). A
        magnet given by coils keeps its coils and takes the new ``current_A`` of each; a
        magnet given by data-sheet numbers is written as the coils given.
    out_dir : str or Path
        The folder the text will be written into: ``[[room_file]]`` paths relative to the
        original's folder are rewritten relative to it.
    header : sequence of str
        Comment lines put first (without the ``#``).

    Returns
    -------
    str
        The scenario text; it parses to the original values with the changes made.
    """
    src = Path(scenario_file)
    try:
        text = src.read_text(encoding="utf-8").removeprefix("\ufeff")
        data = tomllib.loads(text)
    except (OSError, UnicodeDecodeError, tomllib.TOMLDecodeError) as e:
        raise ScenarioError(f"cannot read the scenario again: {e}", str(src)) from None
    want = _expected(data, changes, Path(out_dir), src.parent)
    lines = [f"# {h}" if h else "#" for h in header]
    try:
        edited = _edit_lines(text, want)
        same = tomllib.loads(edited) == want
    except (tomllib.TOMLDecodeError, IndexError, KeyError, TypeError):
        same = False
    if same:
        return "\n".join(lines + [edited])
    lines.append("# (written from the scenario's values: the comments of the original "
                 "are not kept)")
    return "\n".join(lines) + "\n" + tomli_w.dumps(want)
