"""Small text helpers shared by the commands' terminal output (no heavy imports).

Units scaled to the value, plural forms and exact zeros; JSON output never uses them.
"""

from __future__ import annotations

import math

#: |value| below this fraction of a reference scale prints as 0 (rounding noise of an
#: exact zero, e.g. the interaction energy of two magnets that cancel by symmetry).
ENERGY_ZERO_REL: float = 1e-9
#: Field components below this fraction of |B| print as 0 (``fringe probe``).
FIELD_ZERO_REL: float = 1e-12


def plural(n: int, word: str, many: str | None = None) -> str:
    """``"1 winding"``, ``"2 windings"`` (``many`` for an irregular plural)."""
    return f"{n} {word if n == 1 else (many or word + 's')}"


def clean_zero(value: float, scale: float, rel: float) -> float:
    """``value``, or 0.0 when ``|value| <= rel * |scale|`` (rounding noise of a zero)."""
    if math.isfinite(value) and abs(value) <= rel * abs(scale):
        return 0.0
    return value


def format_energy_J(value_J: float, digits: int = 4) -> str:
    """An energy in J, kJ or MJ by size: ``"699 J"``, ``"12.5 kJ"``, ``"3.2 MJ"``, ``"0 J"``.

    Parameters
    ----------
    value_J : float
        Energy, J (pass it through :func:`clean_zero` first to print noise as 0).
    digits : int
        Significant digits.
    """
    if not math.isfinite(value_J):
        return f"{value_J} J"
    if value_J == 0:
        return "0 J"
    a = abs(value_J)
    for factor, unit in ((1e6, "MJ"), (1e3, "kJ")):
        if a >= factor:
            return f"{value_J / factor:.{digits}g} {unit}"
    return f"{value_J:.{digits}g} J"


def format_small_field_T(value_T: float, digits: int = 4) -> str:
    """A (small, signed) field in T, mT, µT, nT or pT by size: ``"-3.21 nT"``, ``"0 T"``."""
    if not math.isfinite(value_T):
        return f"{value_T} T"
    if value_T == 0:
        return "0 T"
    a = abs(value_T)
    for factor, unit in ((1.0, "T"), (1e-3, "mT"), (1e-6, "µT"), (1e-9, "nT")):
        if a >= factor:
            return f"{value_T / factor:.{digits}g} {unit}"
    return f"{value_T / 1e-12:.{digits}g} pT"


def aligned_table(header: list[str], rows: list[list[str]], right: tuple[bool, ...] | None = None
                  ) -> list[str]:
    """Lines of a plain text table: columns padded to their widest cell, a rule under the
    header; ``right`` says which columns align right (all by default)."""
    cols = len(header)
    right = right or (True,) * cols
    width = [max(len(str(r[i])) for r in [header, *rows]) for i in range(cols)]

    def line(cells: list[str]) -> str:
        return "  ".join(str(c).rjust(w) if rj else str(c).ljust(w)
                         for c, w, rj in zip(cells, width, right, strict=True)).rstrip()

    head = line(header)
    return [head, "-" * len(head)] + [line(r) for r in rows]


def aligned_columns(headers: list[str], rows: list[list[str]], right: set[int] | None = None
                  ) -> list[str]:
    """Lines of a plain-text table: columns padded to their widest cell, two spaces apart.

    ``right`` holds the indices of columns aligned right (numbers); the others align left.

    >>> aligned_columns(["t mm", "kg"], [["2", "471"], ["10", "2361"]], right={0, 1})
    ['t mm    kg', '   2   471', '  10  2361']
    """
    right = right or set()
    cols = list(zip(headers, *rows, strict=True)) if rows else [(h,) for h in headers]
    widths = [max(len(c) for c in col) for col in cols]
    out = []
    for row in [headers, *rows]:
        cells = [c.rjust(w) if i in right else c.ljust(w)
                 for i, (c, w) in enumerate(zip(row, widths, strict=True))]
        out.append("  ".join(cells).rstrip())
    return out
