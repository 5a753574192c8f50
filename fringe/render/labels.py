"""Label placement on drawings: the geometry, as pure functions over boxes and segments.

Every label of a map sheet (magnet names, room names, threshold-line values, equipment
names) is placed in display units (pixels of the sheet's canvas) against a common set of
obstacles kept in a :class:`Obstacles`:

* **hard** obstacles a label may never touch: boxes of labels already placed, equipment
  markers, and line segments of walls (room outlines, DXF walls), magnet footprints,
  cryostat envelopes and outlines of magnets on other floors;
* **soft** obstacles a label avoids when it can: threshold lines, extra layers
  (attraction zone, dashed outlines), equipment volumes. They add to a candidate's cost
  (the length of line under the label) but never forbid it.

A label is placed greedily, in priority order (magnets, rooms, lines, equipment), by
:func:`choose`: of the candidate boxes given, the first free of hard obstacles inside the
drawing with the least soft cost wins (ties go to the earlier candidate, so the result is
deterministic); a label with no free candidate is left out (or, for a room, drawn at its
best spot shrunk to its smallest size). Candidates come from :func:`around` (eight
positions round an anchor box at growing distances; the far rings are drawn with a leader
line) or from the caller (points inside a room, points along a line).

Boxes are ``(x0, y0, x1, y1)`` with ``x0 <= x1`` and ``y0 <= y1``; segments are rows
``(xa, ya, xb, yb)`` of an ``(n, 4)`` array. Nothing here draws or imports matplotlib.
"""

from __future__ import annotations

from collections.abc import Iterable, Sequence
from dataclasses import dataclass, field

import numpy as np

__all__ = ["Box", "Obstacles", "around", "box_around", "boxes_overlap", "boxes_overlap_any",
           "choose", "clearance", "clearances", "grow", "inside", "segments_from_lines",
           "segments_hit_box", "segments_hit_boxes", "length_in_box", "lengths_in_boxes",
           "AROUND_DIRECTIONS"]

Box = tuple[float, float, float, float]

#: Directions (unit steps in x, y) of the eight positions round an anchor, in the order
#: tried: the four corners first (the label's text then points away from the anchor at
#: both ends), right before left and above before below, then the four sides.
AROUND_DIRECTIONS: tuple[tuple[int, int], ...] = (
    (1, 1), (1, -1), (-1, 1), (-1, -1), (1, 0), (-1, 0), (0, 1), (0, -1))


def grow(b: Box, pad: float) -> Box:
    """``b`` enlarged by ``pad`` on every side (shrunk for a negative pad)."""
    return (b[0] - pad, b[1] - pad, b[2] + pad, b[3] + pad)


def box_around(cx: float, cy: float, w: float, h: float) -> Box:
    """Box of width ``w`` and height ``h`` centred on (cx, cy)."""
    return (cx - w / 2, cy - h / 2, cx + w / 2, cy + h / 2)


def inside(b: Box, frame: Box) -> bool:
    """Whether ``b`` lies wholly in ``frame``."""
    return b[0] >= frame[0] and b[1] >= frame[1] and b[2] <= frame[2] and b[3] <= frame[3]


def boxes_overlap(b: Box, boxes, pad: float = 0.0) -> np.ndarray:
    """For each row of ``boxes`` ((n, 4)), whether it overlaps ``b`` grown by ``pad``.

    Boxes that only touch along an edge do not overlap.

    >>> boxes_overlap((0, 0, 2, 1), [(1, 0.5, 3, 2), (2, 0, 3, 1), (5, 5, 6, 6)]).tolist()
    [True, False, False]
    """
    a = np.asarray(boxes, float).reshape(-1, 4)
    x0, y0, x1, y1 = grow(b, pad)
    return (a[:, 0] < x1) & (a[:, 2] > x0) & (a[:, 1] < y1) & (a[:, 3] > y0)


def clearance(b: Box, boxes) -> float:
    """Smallest gap between ``b`` and any of ``boxes`` (0 if one overlaps; inf if none).

    >>> clearance((0, 0, 1, 1), [(4, 0, 5, 1), (1, 5, 2, 6)])
    3.0
    """
    a = np.asarray(boxes, float).reshape(-1, 4)
    if a.size == 0:
        return float("inf")
    dx = np.maximum(np.maximum(a[:, 0] - b[2], b[0] - a[:, 2]), 0.0)
    dy = np.maximum(np.maximum(a[:, 1] - b[3], b[1] - a[:, 3]), 0.0)
    return float(np.hypot(dx, dy).min())


def segments_from_lines(lines: Iterable) -> np.ndarray:
    """Segments ``(n, 4)`` of polylines (each an (k, 2) array of points; NaN rows break).

    >>> segments_from_lines([[(0, 0), (1, 0), (1, 1)]]).tolist()
    [[0.0, 0.0, 1.0, 0.0], [1.0, 0.0, 1.0, 1.0]]
    """
    out = []
    for pts in lines:
        p = np.asarray(pts, float).reshape(-1, 2)
        if len(p) < 2:
            continue
        s = np.hstack([p[:-1], p[1:]])
        out.append(s[np.all(np.isfinite(s), axis=1)])
    return np.vstack(out) if out else np.zeros((0, 4))


def _clip_params(boxes: np.ndarray, segs: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Liang–Barsky: parameter interval [t0, t1] of each segment inside each box, (m, n)."""
    xa, ya, xb, yb = (segs[None, :, k] for k in range(4))
    bx0, by0, bx1, by1 = (boxes[:, None, k] for k in range(4))
    dx, dy = xb - xa, yb - ya
    t0 = np.zeros((len(boxes), len(segs)))
    t1 = np.ones((len(boxes), len(segs)))
    with np.errstate(divide="ignore", invalid="ignore"):
        for p, q in ((-dx, xa - bx0), (dx, bx1 - xa), (-dy, ya - by0), (dy, by1 - ya)):
            p, q = np.broadcast_arrays(p, q)
            r = q / p
            parallel = p == 0
            t1 = np.where(parallel & (q < 0), -1.0, t1)  # parallel and outside: empty
            t0 = np.where(~parallel & (p < 0), np.maximum(t0, r), t0)
            t1 = np.where(~parallel & (p > 0), np.minimum(t1, r), t1)
    return t0, t1


def _as_boxes(boxes) -> np.ndarray:
    return np.asarray(boxes, float).reshape(-1, 4)


def _chunks(n: int, size: int = 64):
    for i in range(0, n, size):
        yield slice(i, min(n, i + size))


def _near_segments(boxes: np.ndarray, segs: np.ndarray) -> np.ndarray:
    """The segments whose bounding box meets the union of ``boxes``."""
    if not len(segs) or not len(boxes):
        return segs[:0]
    x0, y0 = boxes[:, 0].min(), boxes[:, 1].min()
    x1, y1 = boxes[:, 2].max(), boxes[:, 3].max()
    keep = ((np.minimum(segs[:, 0], segs[:, 2]) <= x1) & (np.maximum(segs[:, 0], segs[:, 2])
            >= x0) & (np.minimum(segs[:, 1], segs[:, 3]) <= y1)
            & (np.maximum(segs[:, 1], segs[:, 3]) >= y0))
    return segs[keep]


def segments_hit_boxes(boxes, segs) -> np.ndarray:
    """For each box, whether any segment passes through its inside (touching an edge
    or running along it is not a hit).

    >>> s = [(-1, 0.5, 3, 0.5), (2.5, -1, 2.5, 3), (0, 1, 2, 1)]
    >>> segments_hit_boxes([(0, 0, 2, 1), (0, 0.6, 2, 1)], s).tolist()
    [True, False]
    """
    b = _as_boxes(boxes)
    out = np.zeros(len(b), dtype=bool)
    a = _near_segments(b, _as_boxes(segs))
    if not len(a):
        return out
    for sl in _chunks(len(b)):
        bb = b[sl]
        t0, t1 = _clip_params(bb, a)
        tm = (t0 + t1) / 2  # the middle of the clipped part lies strictly inside
        mx = a[None, :, 0] + (a[None, :, 2] - a[None, :, 0]) * tm
        my = a[None, :, 1] + (a[None, :, 3] - a[None, :, 1]) * tm
        strict = ((mx > bb[:, None, 0]) & (mx < bb[:, None, 2]) & (my > bb[:, None, 1])
                  & (my < bb[:, None, 3]))
        out[sl] = np.any((t1 > t0) & strict, axis=1)
    return out


def segments_hit_box(b: Box, segs) -> bool:
    """Whether any segment passes through the inside of ``b``.

    >>> segments_hit_box((0, 0, 2, 1), [(0, 1, 2, 1), (2.5, -1, 2.5, 3)])
    False
    """
    return bool(segments_hit_boxes([b], segs)[0])


def lengths_in_boxes(boxes, segs) -> np.ndarray:
    """For each box, the total length of the segments' parts inside it.

    >>> lengths_in_boxes([(0, 0, 2, 1)], [(-1, 0.5, 3, 0.5), (1, -5, 1, 5)]).tolist()
    [3.0]
    """
    b = _as_boxes(boxes)
    out = np.zeros(len(b))
    a = _near_segments(b, _as_boxes(segs))
    if not len(a):
        return out
    seg_len = np.hypot(a[:, 2] - a[:, 0], a[:, 3] - a[:, 1])
    for sl in _chunks(len(b)):
        t0, t1 = _clip_params(b[sl], a)
        out[sl] = np.sum(np.clip(t1 - t0, 0.0, None) * seg_len[None, :], axis=1)
    return out


def length_in_box(b: Box, segs) -> float:
    """Total length of the segments' parts inside ``b``."""
    return float(lengths_in_boxes([b], segs)[0])


def boxes_overlap_any(boxes, others, pad: float = 0.0) -> np.ndarray:
    """For each of ``boxes``, whether it (grown by ``pad``) overlaps any of ``others``."""
    b = _as_boxes(boxes)
    o = _as_boxes(others)
    if not len(o) or not len(b):
        return np.zeros(len(b), dtype=bool)
    return np.any((o[None, :, 0] < b[:, None, 2] + pad) & (o[None, :, 2] > b[:, None, 0] - pad)
                  & (o[None, :, 1] < b[:, None, 3] + pad)
                  & (o[None, :, 3] > b[:, None, 1] - pad), axis=1)


def clearances(boxes, others) -> np.ndarray:
    """For each of ``boxes``, the smallest gap to any of ``others`` (inf if none)."""
    b = _as_boxes(boxes)
    o = _as_boxes(others)
    if not len(o):
        return np.full(len(b), np.inf)
    dx = np.maximum(np.maximum(o[None, :, 0] - b[:, None, 2], b[:, None, 0] - o[None, :, 2]),
                    0.0)
    dy = np.maximum(np.maximum(o[None, :, 1] - b[:, None, 3], b[:, None, 1] - o[None, :, 3]),
                    0.0)
    return np.hypot(dx, dy).min(axis=1)


@dataclass
class Obstacles:
    """What labels must keep off (hard) and would rather keep off (soft), display px.

    Parameters
    ----------
    frame : Box
        Labels stay wholly inside it (the drawing area less a margin).
    boxes : list of Box
        Hard boxes: placed labels, equipment markers.
    walls : (n, 4) array
        Hard segments: walls, magnet outlines and envelopes, outlines of magnets.
    soft : (m, 4) array
        Soft segments: threshold lines, extra layers, equipment volumes.
    pad : float
        Free space kept round every label, px.
    """

    frame: Box
    boxes: list = field(default_factory=list)
    walls: np.ndarray = field(default_factory=lambda: np.zeros((0, 4)))
    soft: np.ndarray = field(default_factory=lambda: np.zeros((0, 4)))
    pad: float = 2.5

    def __post_init__(self) -> None:
        self.walls = _as_boxes(self.walls)
        self.soft = _as_boxes(self.soft)
        self.boxes = [tuple(float(v) for v in b) for b in self.boxes]

    def add_walls(self, segs) -> None:
        """Add hard segments."""
        self.walls = np.vstack([self.walls, _as_boxes(segs)])

    def add_soft(self, segs) -> None:
        """Add soft segments."""
        self.soft = np.vstack([self.soft, _as_boxes(segs)])

    def add_box(self, b: Box) -> None:
        """Add a hard box (a placed label, a marker)."""
        self.boxes.append(tuple(float(v) for v in b))

    def free_mask(self, boxes, *, walls: bool = True, more_walls=None) -> np.ndarray:
        """For each box: inside the frame, clear of hard boxes and (unless ``walls`` is
        False) of hard segments and of ``more_walls`` ((k, 4) segments), with the pad
        kept."""
        b = _as_boxes(boxes)
        f = self.frame
        ok = (b[:, 0] >= f[0]) & (b[:, 1] >= f[1]) & (b[:, 2] <= f[2]) & (b[:, 3] <= f[3])
        if self.boxes and ok.any():
            ok[ok] = ~boxes_overlap_any(b[ok], self.boxes, self.pad)
        if walls and len(self.walls) and ok.any():
            p = self.pad
            ok[ok] = ~segments_hit_boxes(b[ok] + np.array([-p, -p, p, p]), self.walls)
        if walls and more_walls is not None and len(more_walls) and ok.any():
            p = self.pad
            ok[ok] = ~segments_hit_boxes(b[ok] + np.array([-p, -p, p, p]), more_walls)
        return ok

    def free(self, b: Box, *, walls: bool = True, more_walls=None) -> bool:
        """:meth:`free_mask` of one box."""
        return bool(self.free_mask([b], walls=walls, more_walls=more_walls)[0])

    def soft_costs(self, boxes, minus=None) -> np.ndarray:
        """Length (px) of soft lines under each box grown by the pad, less that of the
        segments ``minus`` (e.g. the label's own line, itself among the soft lines)."""
        p = self.pad
        b = _as_boxes(boxes) + np.array([-p, -p, p, p])
        cost = lengths_in_boxes(b, self.soft)
        if minus is not None and len(minus):
            cost = np.maximum(cost - lengths_in_boxes(b, minus), 0.0)
        return cost

    def soft_cost(self, b: Box) -> float:
        """:meth:`soft_costs` of one box."""
        return float(self.soft_costs([b])[0])


def around(anchor: Box, w: float, h: float, gaps: Sequence[float] = (2.0, 8.0, 18.0, 32.0,
                                                                       50.0)) -> list[Box]:
    """Candidate boxes ``w`` × ``h`` round ``anchor``, ring by ring.

    For each gap (px between the anchor box and the label box), the eight positions of
    :data:`AROUND_DIRECTIONS`: a corner position puts the label's nearest corner
    ``gap`` from the anchor's corner diagonally, a side position centres it on that side.

    >>> around((0, 0, 2, 2), 4, 1, gaps=(1,))[0]
    (3.0, 3.0, 7.0, 4.0)
    """
    x0, y0, x1, y1 = anchor
    cx, cy = (x0 + x1) / 2, (y0 + y1) / 2
    out: list[Box] = []
    for g in gaps:
        for dx, dy in AROUND_DIRECTIONS:
            if dx > 0:
                lx = x1 + g
            elif dx < 0:
                lx = x0 - g - w
            else:
                lx = cx - w / 2
            if dy > 0:
                ly = y1 + g
            elif dy < 0:
                ly = y0 - g - h
            else:
                ly = cy - h / 2
            out.append((float(lx), float(ly), float(lx + w), float(ly + h)))
    return out


def choose(candidates: Sequence[Box], obs: Obstacles, *, extra_cost=None,
           soft_weight: float = 1.0, walls: bool = True, more_walls=None) -> int | None:
    """Index of the best free candidate, or None when none is free.

    Free: inside the frame, clear of hard boxes and hard segments (see
    :meth:`Obstacles.free_mask`; ``more_walls`` are extra hard segments for this
    choice only). Best: least ``soft_weight`` × soft cost +
    ``extra_cost[i]`` (e.g. a distance from the preferred spot); ties keep the earlier
    candidate, so the choice is deterministic.

    >>> obs = Obstacles(frame=(0, 0, 100, 100), boxes=[(0, 0, 10, 10)])
    >>> choose([(5, 5, 15, 15), (20, 20, 30, 30)], obs)
    1
    """
    b = _as_boxes(candidates)
    if not len(b):
        return None
    ok = obs.free_mask(b, walls=walls, more_walls=more_walls)
    if not ok.any():
        return None
    idx = np.flatnonzero(ok)
    cost = np.zeros(len(idx)) if extra_cost is None else np.asarray(extra_cost, float)[idx]
    if soft_weight:
        cost = cost + soft_weight * obs.soft_costs(b[idx])
    return int(idx[int(np.argmin(cost))])
