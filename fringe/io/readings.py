"""Survey readings (CSV) → a frozen :class:`Readings` of arrays.

One reading a row; the header row names the columns (our own names, docs/survey.md):

=================  ======================================================  ========
column             meaning                                                 required
=================  ======================================================  ========
``x_m, y_m, z_m``  the probe position in the site frame, m                 yes
``B_mT``           the field magnitude the gaussmeter shows, mT (> 0)      yes
``Bx_mT, By_mT,``  the components of a three-axis probe, site frame, mT    no (all
``Bz_mT``                                                                  or none)
``uncertainty_mT`` the meter's standard uncertainty of ``B_mT``, mT (> 0)  no
``label``          a short name of the reading (default ``R<row>``)        no
``note``           free text                                               no
=================  ======================================================  ========

Lines starting with ``#`` (after optional blanks) are comments; blank lines are skipped.
An empty optional cell means "not given". Every bad row is refused with the file, the
line and the column; positions repeated within 1 mm are accepted with a warning. This
module reads the file only: whether a position lies inside a winding or a cryostat
is a question of the magnets (:func:`fringe.analysis.survey.check_positions`), which
names the line through :attr:`Readings.lines`.
"""

from __future__ import annotations

import csv
import difflib
import io
import math
import warnings
from pathlib import Path

import numpy as np

from fringe.model.constants import MAX_COORDINATE_M
from fringe.model.errors import FringeWarning, ScenarioError, must_be
from fringe.model.readings import Readings

__all__ = ["Readings", "load_readings", "parse_readings", "REQUIRED_COLUMNS",
           "OPTIONAL_COLUMNS", "DUPLICATE_TOLERANCE_M"]

#: Columns every readings file has.
REQUIRED_COLUMNS: tuple[str, ...] = ("x_m", "y_m", "z_m", "B_mT")
#: Columns a readings file may have.
OPTIONAL_COLUMNS: tuple[str, ...] = ("Bx_mT", "By_mT", "Bz_mT", "uncertainty_mT", "label",
                                     "note")
#: Two readings closer than this (m) are at the same position (a warning names both lines).
DUPLICATE_TOLERANCE_M: float = 1e-3
_COMPONENTS = ("Bx_mT", "By_mT", "Bz_mT")


def _data_rows(text: str) -> list[tuple[int, list[str]]]:
    """(line number, cells) of every non-blank, non-comment line."""
    rows = []
    for n, line in enumerate(text.splitlines(), 1):
        s = line.strip()
        if not s or s.startswith("#"):
            continue
        cells = next(csv.reader(io.StringIO(line), skipinitialspace=True))
        rows.append((n, [c.strip() for c in cells]))
    return rows


def _check_header(cells: list[str], line: int, file: str) -> list[str]:
    known = REQUIRED_COLUMNS + OPTIONAL_COLUMNS
    seen: set[str] = set()
    for j, name in enumerate(cells, 1):
        if name not in known:
            hint = difflib.get_close_matches(name, known, n=1, cutoff=0.6)
            tip = f"; did you mean `{hint[0]}`?" if hint else ""
            raise ScenarioError(f"line {line}, column {j}: "
                                + must_be("header", "one of " + ", ".join(known), name) + tip,
                                file)
        if name in seen:
            raise ScenarioError(f"line {line}, column {j}: the column `{name}` appears twice",
                                file)
        seen.add(name)
    missing = [c for c in REQUIRED_COLUMNS if c not in seen]
    if missing:
        raise ScenarioError(f"line {line}: the header must name the columns "
                            f"{', '.join(REQUIRED_COLUMNS)}; missing {', '.join(missing)}",
                            file)
    comp = [c for c in _COMPONENTS if c in seen]
    if comp and len(comp) != 3:
        raise ScenarioError(f"line {line}: the columns {', '.join(_COMPONENTS)} come together "
                            f"(a three-axis probe); got only {', '.join(comp)}", file)
    return cells


class _Row:
    """One data row: typed cells, errors naming line and column."""

    def __init__(self, cells: list[str], header: list[str], line: int, file: str) -> None:
        self.cells = dict(zip(header, cells, strict=False))
        self.header = header
        self.line = line
        self.file = file

    def fail(self, col: str, expectation: str, got: object) -> None:
        j = self.header.index(col) + 1
        raise ScenarioError(f"line {self.line}, column {j}: " + must_be(col, expectation, got),
                            self.file)

    def number(self, col: str, expectation: str, *, positive: bool = False,
               limit: float | None = None) -> float:
        """The cell as a float (NaN when the optional cell is empty)."""
        text = self.cells.get(col, "")
        if text == "":
            if col in REQUIRED_COLUMNS:
                self.fail(col, expectation, text)
            return math.nan
        try:
            v = float(text)
        except ValueError:
            self.fail(col, expectation, text)
        if not math.isfinite(v) or (positive and v <= 0.0):
            self.fail(col, expectation, text)
        if limit is not None and abs(v) > limit:
            self.fail(col, f"{expectation} within ±{limit:g}", text)
        return v


def parse_readings(text: str, file: str = "<readings>") -> Readings:
    """Parse the text of a readings file (see the module notes for the columns).

    Raises
    ------
    ScenarioError
        A header or a row that cannot be used; the message names ``file``, the line and
        the column.
    """
    rows = _data_rows(text.removeprefix("\ufeff"))
    if not rows:
        raise ScenarioError("the readings file must have a header row and at least one "
                            "reading; got none", file)
    header = _check_header(rows[0][1], rows[0][0], file)
    pts, field, comp, unc, labels, notes, lines = [], [], [], [], [], [], []
    for k, (n, cells) in enumerate(rows[1:], 1):
        if len(cells) != len(header):
            raise ScenarioError(f"line {n}: a row must have {len(header)} cells like the "
                                f"header; got {len(cells)}", file)
        r = _Row(cells, header, n, file)
        pts.append([r.number(c, "a number of metres", limit=MAX_COORDINATE_M)
                    for c in ("x_m", "y_m", "z_m")])
        field.append(r.number("B_mT", "a positive number of mT (the magnitude read)",
                              positive=True))
        c3 = [r.number(c, "a number of mT") for c in _COMPONENTS] if "Bx_mT" in header \
            else [math.nan] * 3
        if any(math.isnan(v) for v in c3) and not all(math.isnan(v) for v in c3):
            r.fail(next(c for c, v in zip(_COMPONENTS, c3, strict=True) if math.isnan(v)),
                   "given when the other components of the row are", "")
        comp.append(c3)
        unc.append(r.number("uncertainty_mT", "a positive number of mT", positive=True))
        labels.append(r.cells.get("label", "") or f"R{k}")
        notes.append(r.cells.get("note", ""))
        lines.append(n)
    if not lines:
        raise ScenarioError("the readings file must have at least one reading after its "
                            "header; got none", file)
    out = Readings(np.asarray(pts, float), np.asarray(field, float) * 1e-3,
                   np.asarray(comp, float) * 1e-3, np.asarray(unc, float) * 1e-3,
                   tuple(labels), tuple(notes), tuple(lines), file)
    _warn_duplicates(out)
    _warn_components(out)
    return out


def _warn_duplicates(r: Readings) -> None:
    """A warning for each group of readings at one position (within 1 mm)."""
    p = r.points_m
    order = np.lexsort(p.T[::-1])
    for a, b in zip(order[:-1], order[1:], strict=True):
        if np.max(np.abs(p[a] - p[b])) <= DUPLICATE_TOLERANCE_M:
            i, j = sorted((int(a), int(b)))
            warnings.warn(f"{r.source_file}: {r.where(i)} and {r.where(j)} are at the same "
                          "position; both are used (a repeated reading)",
                          FringeWarning, stacklevel=3)


#: A three-axis reading whose components' magnitude differs from ``B_mT`` by more than
#: this fraction is warned about (common practice, no source: probe axes misread).
_COMPONENT_MISMATCH = 0.05


def _warn_components(r: Readings) -> None:
    has = ~np.isnan(r.components_T[:, 0])
    if not has.any():
        return
    mag = np.linalg.norm(r.components_T, axis=1)
    bad = has & (np.abs(mag - r.field_T) > _COMPONENT_MISMATCH * r.field_T)
    for i in np.flatnonzero(bad):
        warnings.warn(f"{r.source_file}: {r.where(int(i))}: the components give "
                      f"{mag[i] * 1e3:.4g} mT but B_mT is {r.field_T[i] * 1e3:.4g} mT "
                      f"(more than {_COMPONENT_MISMATCH:.0%} apart); the fit uses B_mT",
                      FringeWarning, stacklevel=3)


def load_readings(path: str | Path) -> Readings:
    """Read a readings file (UTF-8 CSV; see the module notes).

    Raises
    ------
    ScenarioError
        An unreadable or non-UTF-8 file, or a bad header or row (file, line, column).
    """
    p = Path(path)
    try:
        raw = p.read_bytes()
    except OSError as e:
        raise ScenarioError(f"cannot read the readings file: {e.strerror or e}",
                            str(p)) from None
    try:
        text = raw.decode("utf-8")
    except UnicodeDecodeError as e:
        raise ScenarioError(f"the file must be UTF-8 text; byte {e.start} is not",
                            str(p)) from None
    return parse_readings(text, str(p))
