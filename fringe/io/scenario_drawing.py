"""Scenario section ``[drawing]``: what the title block of every sheet says, the paper
and the drawing scale (docs/drawings.md)::

    [drawing]
    number = "FR-0101"            # drawing number (all optional)
    revision = "B"
    status = "for approval"
    drawn_by = "A. Planner"       # names in the sign-off boxes; unset: left blank
    checked_by = "B. Checker"
    approved_by = ""
    paper = "A3"                  # ISO 216: A0, A1, A2, A3 (default), A4; landscape
    scale = "1:100"               # plans and sections; default: the largest drawing
                                  # (smallest 1:n of the standard scales) that fits

The parsed section (``Site.drawing``) is a :class:`fringe.model.site.DrawingSettings`.
"""

from __future__ import annotations

import re

from fringe.io.reader import Reader
from fringe.model.site import PAPER_SIZES_MM, STANDARD_SCALES, DrawingSettings

__all__ = ["parse_drawing", "parse_scale", "SECTION_KEY"]

#: Top-level scenario key of this section.
SECTION_KEY: str = "drawing"

_TEXT_KEYS = ("number", "revision", "status", "drawn_by", "checked_by", "approved_by")


def parse_scale(text: str) -> int | None:
    """The n of a scale written "1:n" (n a whole number ≥ 1), or None if it is not one.

    >>> parse_scale("1:100"), parse_scale(" 1 : 50 "), parse_scale("1/100")
    (100, 50, None)
    """
    m = re.fullmatch(r"\s*1\s*:\s*(\d{1,7})\s*", text)
    if m is None or int(m.group(1)) < 1:
        return None
    return int(m.group(1))


def parse_drawing(root: Reader) -> DrawingSettings:
    """Parse the optional ``[drawing]`` table (defaults when absent)."""
    r = root.table(SECTION_KEY)
    if r is None:
        return DrawingSettings()
    texts = {k: r.string(k, "", nonempty=False).strip() for k in _TEXT_KEYS}
    paper = r.string("paper", "A3", choices=tuple(PAPER_SIZES_MM))
    scale = None
    if r.has("scale"):
        raw = r.raw("scale")
        expected = ("a drawing scale written \"1:n\" with n a whole number, e.g. "
                    + ", ".join(f'"1:{n}"' for n in STANDARD_SCALES[:6]))
        if not isinstance(raw, str):
            r.fail(r.key("scale"), expected, raw)
        scale = parse_scale(raw)
        if scale is None:
            r.fail(r.key("scale"), expected, raw)
    r.finish()
    return DrawingSettings(**texts, paper=paper, scale=scale)
