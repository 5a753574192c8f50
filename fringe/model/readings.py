"""Survey readings: gaussmeter readings at points of a site, as a frozen noun.

Read from a CSV file by :func:`fringe.io.readings.load_readings`; compared with the
model and used to calibrate it by :mod:`fringe.analysis.survey` (docs/survey.md).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

__all__ = ["Readings"]


@dataclass(frozen=True)
class Readings:
    """Gaussmeter readings, SI units, one entry per row of the file.

    Attributes
    ----------
    points_m : ndarray, shape (N, 3)
        Probe positions in the site frame, m.
    field_T : ndarray, shape (N,)
        The magnitudes read, T (> 0).
    components_T : ndarray, shape (N, 3)
        Three-axis components in the site frame, T; NaN where not given.
    uncertainty_T : ndarray, shape (N,)
        The meter's standard uncertainty, T; NaN where not given.
    labels, notes : tuple of str
    lines : tuple of int
        The line of the file each reading was read from (1 = the first line).
    source_file : str
        The file read ("" for readings built in code).
    """

    points_m: np.ndarray
    field_T: np.ndarray
    components_T: np.ndarray
    uncertainty_T: np.ndarray
    labels: tuple[str, ...]
    notes: tuple[str, ...]
    lines: tuple[int, ...]
    source_file: str = ""

    def __len__(self) -> int:
        return len(self.field_T)

    def where(self, i: int) -> str:
        """``"line L (label)"`` of reading ``i``, for messages."""
        return f"line {self.lines[i]} ({self.labels[i]})"

    @classmethod
    def of(cls, points_m, field_T, uncertainty_T=None, labels=None) -> Readings:
        """Readings built in code: positions (N, 3) in m, magnitudes (N,) in T, optional
        standard uncertainties (N,) in T and labels (default ``R1``, ``R2``, …)."""
        p = np.asarray(points_m, dtype=float).reshape(-1, 3)
        b = np.asarray(field_T, dtype=float).reshape(-1)
        n = len(b)
        u = (np.full(n, np.nan) if uncertainty_T is None
             else np.broadcast_to(np.asarray(uncertainty_T, dtype=float), (n,)).copy())
        names = tuple(labels) if labels is not None else tuple(f"R{k}" for k in range(1, n + 1))
        return cls(p, b, np.full((n, 3), np.nan), u, names, ("",) * n,
                   tuple(range(1, n + 1)))
