"""The one overall verdict of a report: everything checked, and what exceeds.

:func:`overall_verdict` gathers every verdict a :class:`fringe.analysis.report.ReportResult`
holds — rooms, equipment, floors (the boundary line leaving the controlled rooms), moving
steel paths with a limit (docs/disturbance.md) — into
one :class:`OverallVerdict`. The report's ``exceeds`` flag, the closing terminal line and
the exit code of ``fringe report`` all come from it, so they cannot disagree.
"""

from __future__ import annotations

from dataclasses import dataclass

from fringe.model.verdict import Verdict

__all__ = ["ExceedingItem", "OverallVerdict", "overall_verdict", "KINDS"]

#: The kinds of item that carry a verdict, in the order the closing line names them,
#: as (kind, plural).
KINDS: tuple[tuple[str, str], ...] = (("room", "rooms"), ("equipment", "equipment"),
                                      ("floor", "floors"),
                                      ("moving steel path", "moving steel paths"))


@dataclass(frozen=True)
class ExceedingItem:
    """One item whose verdict is ``exceeds``.

    Attributes
    ----------
    kind : str
        ``"room"``, ``"equipment"``, ``"floor"`` or ``"moving steel path"``
        (see :data:`KINDS`).
    name : str
    reason : str
        Short reason, e.g. ``"0.5 mT line outside the controlled rooms"``.
    """

    kind: str
    name: str
    reason: str = ""


@dataclass(frozen=True)
class OverallVerdict:
    """Every verdict of a report, summed up.

    Attributes
    ----------
    items : tuple of ExceedingItem
        The items that exceed, rooms first, then equipment, then floors.
    checked : tuple of (kind, count)
        How many items of each kind were checked (:data:`KINDS` order).
    """

    items: tuple[ExceedingItem, ...]
    checked: tuple[tuple[str, int], ...]
    #: The items whose verdict is ``marginal`` (within, but the field uncertainty band
    #: reaches the limit); they never make the report exceed.
    marginal: tuple[ExceedingItem, ...] = ()

    @property
    def exceeds(self) -> bool:
        """True when any item exceeds."""
        return bool(self.items)

    def count(self, kind: str) -> int:
        """Number of exceeding items of ``kind``."""
        return sum(i.kind == kind for i in self.items)

    def line(self) -> str:
        """The closing line: what exceeds, or that nothing does and what was checked; the
        marginal items, if any, follow after a semicolon."""
        return self._exceeding_line() + self._marginal_tail()

    def _marginal_tail(self) -> str:
        if not self.marginal:
            return ""
        names = ", ".join(i.name for i in self.marginal)
        return f"; {len(self.marginal)} marginal within the field uncertainty ({names})"

    def _exceeding_line(self) -> str:
        plural = dict(KINDS)
        if not self.items:
            done = ", ".join(f"{n} {k if n == 1 else plural[k]}" for k, n in self.checked)
            return f"verdict: nothing exceeds its limit ({done} checked)"
        parts = []
        for kind, many in KINDS:
            its = [i for i in self.items if i.kind == kind]
            if its:
                names = "; ".join(f"{i.name}: {i.reason}" if i.reason else i.name for i in its)
                parts.append(f"{len(its)} {kind if len(its) == 1 else many} ({names})")
        n = len(self.items)
        return f"verdict: {n} item{'' if n == 1 else 's'} exceed{'s' if n == 1 else ''}: " \
               + ", ".join(parts)


def overall_verdict(result) -> OverallVerdict:
    """Gather the verdicts of ``result`` (a ReportResult, or anything with its ``rooms``,
    ``equipment``, ``floor_maps``, ``boundary`` and ``floor_verdict(name)``)."""
    items: list[ExceedingItem] = []
    marginal: list[ExceedingItem] = []
    for r in result.rooms:
        if r.verdict == Verdict.MARGINAL:
            marginal.append(ExceedingItem("room", r.name))
        if r.verdict == Verdict.EXCEEDS:
            lim = "" if r.limit_T is None else f" ≥ limit {r.limit_T * 1e3:g} mT"
            items.append(ExceedingItem("room", r.name,
                                       f"max {r.max_field_T * 1e3:.3g} mT{lim}"))
    for e in result.equipment:
        if e.verdict == Verdict.MARGINAL:
            marginal.append(ExceedingItem("equipment", e.name))
        if e.verdict == Verdict.EXCEEDS:
            items.append(ExceedingItem("equipment", e.name,
                                       f"{e.field_T * 1e3:.3g} mT ≥ limit "
                                       f"{e.limit_T * 1e3:g} mT"))
    floors = tuple(result.floor_maps)
    for f in floors:
        if result.floor_verdict(f) == Verdict.MARGINAL:
            marginal.append(ExceedingItem("floor", f))
        if result.floor_verdict(f) == Verdict.EXCEEDS:
            items.append(ExceedingItem("floor", f, f"{result.boundary.value_mT:g} mT line "
                                                   "outside the controlled rooms"))
    moving = [c for c in getattr(result, "moving_steel", ()) if c.verdict is not None]
    for c in moving:  # paths with a limit (fringe.analysis.moving_steel)
        if c.verdict == Verdict.EXCEEDS:
            items.append(ExceedingItem("moving steel path", c.name,
                                       f"{c.max_abs_delta_B_ppm:.3g} ppm ≥ limit "
                                       f"{c.limit_ppm:g} ppm at the isocentre of "
                                       f"{c.disturbance.magnet}"))
    checked = (("room", len(result.rooms)), ("equipment", len(result.equipment)),
               ("floor", len(floors)))
    if moving:  # named only on sites that check moving steel
        checked += (("moving steel path", len(moving)),)
    return OverallVerdict(tuple(items), checked, tuple(marginal))
