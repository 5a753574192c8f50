"""The one palette of fringe's drawings: sheets (matplotlib) and DXF zone layers alike.

A threshold line (and the band of "at least this field" it bounds) has one colour,
a function of its value only: the position of log10(threshold / mT) on the fixed range
:data:`THRESHOLD_LOG10_RANGE_MT` (0.1 mT to 10 T) picks a colour along the perceptually
uniform colormap viridis, reversed so that low fields are light (van der Walt & Smith,
matplotlib 1.5 default colormap). So 0.5 mT has the same colour on every plan, every
section and in every floor's DXF drawing, whatever other thresholds a scenario lists.

The colormap is written out here as fixed sRGB samples (:data:`THRESHOLD_SAMPLES`,
matplotlib's ``viridis_r`` at 41 evenly spaced points of its first 90 %, leaving out
the darkest end where black lines would vanish) and interpolated linearly between
neighbouring samples, so DXF writing needs no matplotlib.
"""

from __future__ import annotations

import math

__all__ = ["THRESHOLD_LOG10_RANGE_MT", "THRESHOLD_SAMPLES", "HAZARD_COLOR", "INK_COLOR",
           "STEEL_COLOR",
           "threshold_rgb", "threshold_color", "hex_to_rgb"]

#: log10 of the thresholds (in mT) mapped to the two ends of :data:`THRESHOLD_SAMPLES`:
#: 0.1 mT (lightest) to 10 T (darkest); values outside take the nearer end.
THRESHOLD_LOG10_RANGE_MT: tuple[float, float] = (-1.0, 4.0)

#: matplotlib ``viridis_r`` sampled at ``numpy.linspace(0, 0.9, 41)`` (lightest first),
#: rounded to 8-bit sRGB.
THRESHOLD_SAMPLES: tuple[str, ...] = (
    "#fde725", "#f1e51d", "#e2e418", "#d2e21b", "#c2df23", "#b5de2b", "#a5db36", "#95d840",
    "#86d549", "#7ad151", "#6ccd5a", "#5ec962", "#52c569", "#48c16e", "#3dbc74", "#34b679",
    "#2cb17e", "#26ad81", "#22a785", "#1fa187", "#1e9c89", "#1f978b", "#20928c", "#228c8d",
    "#24868e", "#26818e", "#287c8e", "#2a768e", "#2d718e", "#2f6b8e", "#31668e", "#34608d",
    "#375a8c", "#3a538b", "#3d4e8a", "#3f4788", "#424086", "#443983", "#46337f", "#472c7a",
    "#482475",
)

#: Outline of hazard zones (the attraction zone) on sheets and in DXF drawings.
HAZARD_COLOR: str = "#3d0b57"
#: Text and line ink (notes in DXF drawings); matches the sheets' near-black ink.
INK_COLOR: str = "#141414"
#: Steel parts of the building (hatched on sheets, their own DXF layer): a mid grey, apart
#: from every threshold colour and from the near-black boundary line.
STEEL_COLOR: str = "#595959"


def hex_to_rgb(color: str) -> tuple[int, int, int]:
    """``"#rrggbb"`` → (r, g, b), each 0–255."""
    h = color.lstrip("#")
    return int(h[0:2], 16), int(h[2:4], 16), int(h[4:6], 16)


def threshold_rgb(threshold_mT: float) -> tuple[int, int, int]:
    """The colour of a threshold line, (r, g, b) 0–255, from its value in mT alone.

    >>> threshold_rgb(0.1), threshold_rgb(1e4)
    ((253, 231, 37), (72, 36, 117))
    """
    t = float(threshold_mT)
    lo, hi = THRESHOLD_LOG10_RANGE_MT
    pos = (math.log10(t) - lo) / (hi - lo) if t > 0 and math.isfinite(t) else 0.0
    pos = min(max(pos, 0.0), 1.0) * (len(THRESHOLD_SAMPLES) - 1)
    i = min(int(pos), len(THRESHOLD_SAMPLES) - 2)
    f = pos - i
    a, b = hex_to_rgb(THRESHOLD_SAMPLES[i]), hex_to_rgb(THRESHOLD_SAMPLES[i + 1])
    return tuple(int(round(x + f * (y - x))) for x, y in zip(a, b, strict=True))


def threshold_color(threshold_mT: float) -> str:
    """The colour of a threshold line as ``"#rrggbb"`` (see :func:`threshold_rgb`)."""
    return "#{:02x}{:02x}{:02x}".format(*threshold_rgb(threshold_mT))
