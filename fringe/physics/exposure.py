"""Static-field exposure limits for people: one registry, read by drawings, reports and docs.

The lines drawn on section sheets are the |B| contours at these values. The registry is
the only place the numbers and their source live; every consumer (drawing legend, report
table, ``docs/hazards.md``) reads :data:`EXPOSURE_LIMITS`.

References
----------
.. [1] International Commission on Non-Ionizing Radiation Protection (ICNIRP),
   "Guidelines on limits of exposure to static magnetic fields",
   *Health Physics* 96(4):504–514 (2009), doi:10.1097/01.HP.0000343164.27920.4a, Table 1.
"""

from __future__ import annotations

import math
from collections.abc import Iterable
from dataclasses import dataclass

from fringe.model.errors import FringeInputError

__all__ = ["ExposureLimit", "EXPOSURE_LIMITS", "ICNIRP_2009_SOURCE", "exposure_limit",
           "exposure_limits", "exposure_label"]

#: Short citation printed on sheets beside the exposure lines.
ICNIRP_2009_SOURCE: str = (
    "ICNIRP (2009) Guidelines on limits of exposure to static magnetic fields. "
    "Health Phys. 96(4):504-514, Table 1")


@dataclass(frozen=True)
class ExposureLimit:
    """One static-field exposure limit.

    Parameters
    ----------
    name : str
        Registry key (plain descriptive name of our own).
    field_T : float
        Limit on the static flux density |B|, T.
    applies_to : str
        Who and which part of the body, in words, as printed on sheets.
    source : str
        Published source (with table).
    short : str
        Few-word form of ``applies_to`` for line labels.
    cite : str
        Short citation for labels, e.g. ``"ICNIRP 2009"``.
    """

    name: str
    field_T: float
    applies_to: str
    source: str
    short: str = ""
    cite: str = "ICNIRP 2009"

    @property
    def value_text(self) -> str:
        """The value as printed: ``"400 mT"``, ``"2 T"``."""
        return f"{self.field_T:g} T" if self.field_T >= 1 else f"{self.field_mT:g} mT"

    @property
    def line_label(self) -> str:
        """Label printed on the line, e.g. ``"400 mT: general public (ICNIRP 2009)"``."""
        return f"{self.value_text}: {self.short or self.applies_to} ({self.cite})"

    @property
    def field_mT(self) -> float:
        """The limit in mT."""
        return self.field_T * 1e3


#: The registry: name → limit. ICNIRP 2009 [1] Table 1: occupational exposure of the head
#: and trunk 2 T, of the limbs 8 T; general public 400 mT (any part of the body).
EXPOSURE_LIMITS: dict[str, ExposureLimit] = {
    lim.name: lim for lim in (
        ExposureLimit("icnirp-2009-public", 0.4, "general public, any part of the body",
                      ICNIRP_2009_SOURCE, "general public"),
        ExposureLimit("icnirp-2009-occupational-head-trunk", 2.0,
                      "occupational, head and trunk", ICNIRP_2009_SOURCE,
                      "occupational, head and trunk"),
        ExposureLimit("icnirp-2009-occupational-limbs", 8.0, "occupational, limbs",
                      ICNIRP_2009_SOURCE, "occupational, limbs"),
    )
}


def exposure_limit(name: str) -> ExposureLimit:
    """The registered limit called ``name``; :class:`FringeInputError` naming the choices."""
    try:
        return EXPOSURE_LIMITS[name]
    except KeyError:
        raise FringeInputError(
            f"`exposure limit` must be one of {', '.join(map(repr, EXPOSURE_LIMITS))}; "
            f"got {name!r}") from None


def exposure_limits(names: Iterable[str] | None = None,
                    max_field_T: float | None = None) -> tuple[ExposureLimit, ...]:
    """Limits to draw, lowest field first.

    Parameters
    ----------
    names : iterable of str, optional
        Registry keys; all registered limits by default.
    max_field_T : float, optional
        Keep only limits at or below this field (e.g. the largest |B| on a sheet, so a
        contour that cannot appear is not listed in the legend).
    """
    lims = [exposure_limit(n) for n in (EXPOSURE_LIMITS if names is None else names)]
    if max_field_T is not None and math.isfinite(max_field_T):
        lims = [lim for lim in lims if lim.field_T <= max_field_T]
    return tuple(sorted(lims, key=lambda lim: lim.field_T))


def exposure_label(limit: ExposureLimit) -> str:
    """Legend text of one exposure line, e.g. ``"400 mT: general public … (ICNIRP 2009)"``.

    >>> exposure_label(EXPOSURE_LIMITS["icnirp-2009-occupational-limbs"])
    '8 T exposure limit: occupational, limbs (ICNIRP 2009)'
    """
    return f"{limit.value_text} exposure limit: {limit.applies_to} ({limit.cite})"
