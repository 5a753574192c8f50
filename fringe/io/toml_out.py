"""TOML out: a magnet as a scenario ``[[magnet]]`` block, written with tomli-w.

:func:`magnet_toml` is the one writer of magnet blocks (``fringe fit`` and
``fringe place`` print it). Every value is formatted by :mod:`tomli_w` (strings escaped,
numbers as TOML literals); the layout — inline arrays, indented ``[[magnet.coil]]``
tables, ``#`` comments — is assembled here, since TOML writers do not keep comments.
The block parses back with :func:`fringe.io.scenario.parse_site`.
"""

from __future__ import annotations

from collections.abc import Sequence

import tomli_w

__all__ = ["magnet_toml", "toml_value"]


def toml_value(v) -> str:
    """One TOML value (str, bool, int, float or a flat list of them) as text.

    Lists are written inline (``[1.0, 2.0]``); a float that is a whole number stays a
    float (``2.0``).

    >>> toml_value('say "hi"'), toml_value([0.5, -1.0]), toml_value(2180)
    ('"say \\\\"hi\\\\""', '[0.5, -1.0]', '2180')
    """
    if isinstance(v, (list, tuple)):
        return "[" + ", ".join(toml_value(x) for x in v) + "]"
    return tomli_w.dumps({"v": v}).removeprefix("v = ").rstrip("\n")


def _num(v: float, digits: int | None) -> float:
    v = float(v)
    return v if digits is None else round(v, digits) + 0.0  # + 0.0: no "-0.0"


def _turns(n: float) -> int | float:
    """Winding turns: an int when whole (``2180``, not ``2180.0``)."""
    n = float(n)
    return int(n) if n.is_integer() else n


def magnet_toml(magnet, *, center_m: Sequence[float] | None = None,
                axis: Sequence[float] | None = None, description: str | None = None,
                comments: Sequence[str] = (), coil_comments: Sequence[str] = (),
                position_digits: int | None = None, coil_digits: int | None = None) -> str:
    """A :class:`fringe.model.magnet.Magnet` as a scenario ``[[magnet]]`` block.

    Parameters
    ----------
    magnet : Magnet
        Name, description, centre, axis and coils are taken from it.
    center_m, axis : sequence of 3 float, optional
        Written instead of the magnet's own (e.g. a placement found by a search).
    description : str, optional
        Written instead of ``magnet.description`` (omitted when empty).
    comments : sequence of str
        ``#`` comment lines written right after the ``[[magnet]]`` header.
    coil_comments : sequence of str
        A comment after each ``[[magnet.coil]]`` header, by coil index (missing or empty:
        none).
    position_digits, coil_digits : int, optional
        Round centre and axis, and the coil numbers, to this many decimals (default:
        every digit of the float).

    Returns
    -------
    str
        Starting with ``[[magnet]]``, ending with a newline.
    """
    desc = magnet.description if description is None else description
    centre = magnet.center_m if center_m is None else center_m
    ax = magnet.axis if axis is None else axis
    lines = ["[[magnet]]"]
    lines += [f"# {c}" for c in comments]
    lines.append(f"name = {toml_value(str(magnet.name))}")
    if desc:
        lines.append(f"description = {toml_value(str(desc))}")
    lines.append(f"center_m = {toml_value([_num(v, position_digits) for v in centre])}")
    lines.append(f"axis = {toml_value([_num(v, position_digits) for v in ax])}")
    for i, c in enumerate(magnet.coils):
        note = coil_comments[i] if i < len(coil_comments) else ""
        lines += ["", "  [[magnet.coil]]" + (f"  # {note}" if note else "")]
        lines += [f"  {key} = {toml_value(_num(getattr(c, key), coil_digits))}"
                  for key in ("r_inner_m", "r_outer_m", "z_min_m", "z_max_m")]
        lines.append(f"  turns = {toml_value(_turns(c.turns))}")
        lines.append(f"  current_A = {toml_value(_num(c.current_A, coil_digits))}")
    return "\n".join(lines) + "\n"
