"""Placement search: where in a room, and turned which way, should a magnet go?

The magnet's centre is searched over an allowed region (a room outline, or any polygon,
shrunk by the magnet's own plan footprint) and its bore direction over a list of angles
about the vertical. Each candidate placement is scored by

1. **spill** (m², smaller is better): the area of every threshold footprint, on every
   floor, lying in a *zone* that must stay below that threshold, summed over the
   thresholds at or above the zone's limit (see :func:`zones_of_site`). A zone is an
   open room (limit: its own ``limit_mT`` or the boundary value), a controlled room with
   its own ``limit_mT``, or the space on a floor outside every room drawn (limit: the
   boundary value). Equal weights: because footprints are nested (a higher threshold's
   footprint lies inside a lower one's), ground reached by k of the thresholds counts k
   times, so the boundary footprint is always the largest term and deep incursions cost
   more than shallow ones — with the usual roughly logarithmic spacing of thresholds the
   sum approximates the spilled area plus ∫ log(|B|/limit) dA. Thresholds below a zone's
   limit are not counted there (they are allowed into it);
2. **margin** (m, larger is better): the smallest signed clearance between a zone and
   the footprint at that zone's limit: the plan distance when they do not meet, minus
   the penetration depth when they do. The penetration depth is how far the footprint
   reaches beyond the controlled area: the largest distance from a point of the
   footprint inside the zone to the nearest point of the footprint inside the controlled
   rooms (a directed Hausdorff distance, evaluated on the outline of the spilled part,
   densified to half the grid step). A footprint that does not reach any controlled room
   on its floor — typically the footprint on a floor above or below, coming through the
   slab — has no horizontal depth: it is left out of the margin, counted in the spill,
   and reported with its vertical shortfall (:func:`vertical_shortfall_m`).

Candidates are ranked by spill (rounded to 0.01 m²), then by margin.

Method
------
The field moves rigidly with the magnet, and the centre height is kept, so for a magnet
alone each floor's footprint for a centre c is a translated copy of the footprint for
c = 0. For each tested bore direction the footprint polygons relative to the centre are
computed once (:func:`relative_footprints`; band envelope and contours from
:mod:`fringe.analysis.zones` on the fast engine); scoring a candidate is then shapely polygon
arithmetic only. The search is coarse-to-fine: a lattice over the allowed region
(about ``COARSE_POINTS`` centres per direction), then Nelder–Mead (Nelder & Mead 1965)
from the best few lattice points on the continuous surrogate ``spill − min(margin,
10 m)`` (continuous: both terms vanish together where the footprint touches a zone),
with a penalty outside the region. The scenario's own placement is always scored too
(if its centre lies in the allowed region), so the search never reports a placement
worse than it.

Several magnets: the other magnets' fields superpose, and a footprint of the combined
field is not a union of the single-magnet footprints. During the search the union is
used as a stand-in (exact wherever one magnet's field dominates); the best
``EXACT_CANDIDATES`` placements are then re-evaluated with the combined field on a
fresh plan grid (:func:`exact_footprints`) and re-ranked on those numbers, which are
the ones reported.

Steel (``[[steel]]`` parts): the steel's response changes with every trial position, and a
solve per trial is far too slow for a search of hundreds of placements. The search
therefore scores placements in free space (the translated footprints above); the best
``EXACT_CANDIDATES`` placements (and the scenario's own) are then solved with the steel
at their positions (:func:`fringe.analysis.steel.with_solved_steel`) and re-ranked on
those numbers, which are the ones reported. A placement that only the steel would make
good can therefore be missed; the notes say so.

Limits: centre heights are not searched; the allowed region uses the windings' plan
rectangle (:func:`fringe.analysis.geometry.magnet_plan_outline`), not a cryostat outline;
penetration depths on rooms that are not convex are evaluated on the spilled outline
only.

References
----------
J. A. Nelder and R. Mead, "A simplex method for function minimization", Comput. J. 7,
308–313 (1965) (``scipy.optimize.minimize(method="Nelder-Mead")``).
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field, replace

import numpy as np
import shapely
from scipy.optimize import brentq, minimize

from fringe.analysis.geometry import magnet_plan_outline
from fringe.analysis.verdicts import room_limit
from fringe.analysis.zones import field_magnitude_T, floor_map, footprints, plan_axes_m, reach_m
from fringe.model.building import Floor
from fringe.model.errors import ArgumentError, ScenarioError, must_be
from fringe.model.magnet import Magnet
from fringe.model.site import SitePlan, site_plan

__all__ = ["Zone", "Placement", "PlacementResult", "zones_of_site", "axis_at_angle",
           "parse_region", "allowed_region", "relative_footprints", "exact_footprints",
           "score_footprints", "vertical_shortfall_m", "search_placement",
           "COARSE_POINTS", "EXACT_CANDIDATES", "OUTSIDE_ROOMS"]

Progress = Callable[[str], None] | None

#: Approximate number of lattice centres per bore direction in the coarse stage.
COARSE_POINTS: int = 200
#: Lattice points refined by Nelder–Mead per bore direction.
REFINE_STARTS: int = 3
#: Placements re-evaluated with the combined field when other magnets are present.
EXACT_CANDIDATES: int = 6
#: Margin cap (m) in the search surrogate: beyond this, more clearance earns nothing.
MARGIN_CAP_M: float = 10.0
#: Spill resolution used for ranking, m² (contour noise is well below this).
SPILL_RESOLUTION_M2: float = 0.01
#: Zones this much farther than the margin from a footprint are left out of the
#: per-room breakdown, m.
NEAR_M: float = 1.0
#: Name given to the space on a floor outside every room drawn.
OUTSIDE_ROOMS: str = "(outside every room)"


# -- zones -----------------------------------------------------------------------------

@dataclass(frozen=True)
class Zone:
    """Plan area a threshold footprint must stay out of.

    Attributes
    ----------
    name : str
        Room name, or :data:`OUTSIDE_ROOMS`.
    floor : str
    geometry : shapely Polygon or MultiPolygon (site x-y, m)
    limit_mT : float
        Footprints at or above this value count as spill here.
    """

    name: str
    floor: str
    geometry: object
    limit_mT: float


def zones_of_site(plan: SitePlan, boundary_mT: float, window_m) -> tuple[tuple[Zone, ...],
                                                                          dict[str, object]]:
    """Zones of every floor that has rooms, and each floor's controlled area.

    Parameters
    ----------
    plan : SitePlan
    boundary_mT : float
        Limit of open rooms without their own ``limit_mT`` and of the space outside
        every room, mT.
    window_m : ((x0, y0), (x1, y1))
        Box bounding the space outside every room (large enough to hold every
        footprint considered), m.

    Returns
    -------
    zones : tuple of Zone
    controlled : dict floor name → geometry
        Union of the controlled rooms without a limit of their own (may be empty).
    """
    from fringe.model.building import Boundary

    bnd = Boundary(float(boundary_mT), "")
    (x0, y0), (x1, y1) = window_m
    box = shapely.box(x0, y0, x1, y1)
    zones: list[Zone] = []
    controlled: dict[str, object] = {}
    for fl in plan.floors:
        rooms = [r for r in plan.rooms if r.floor == fl.name]
        if not rooms:
            continue
        ctrl = []
        for r in rooms:
            lim, _src = room_limit(r, bnd)
            if lim is None:
                ctrl.append(r.outline)
            else:
                zones.append(Zone(r.name, fl.name, r.outline, lim * 1e3))
        controlled[fl.name] = shapely.union_all(ctrl) if ctrl else shapely.Polygon()
        outside = shapely.difference(box, shapely.union_all([r.outline for r in rooms]))
        if outside.area > 1e-9:
            zones.append(Zone(OUTSIDE_ROOMS, fl.name, outside, float(boundary_mT)))
    return tuple(zones), controlled


# -- orientation, region -----------------------------------------------------------------

def axis_at_angle(axis, angle_deg: float) -> tuple[float, float, float]:
    """The bore axis turned to ``angle_deg`` about the vertical.

    The angle is measured in plan from site +x toward +y; the axis keeps its tilt out
    of the plan (its vertical component). A vertical axis is returned unchanged.
    """
    a = np.asarray(axis, dtype=float)
    a = a / np.linalg.norm(a)
    h = float(math.hypot(a[0], a[1]))
    if h < 1e-12:
        return (0.0, 0.0, float(np.sign(a[2]) or 1.0))
    t = math.radians(angle_deg)
    out = np.array([h * math.cos(t), h * math.sin(t), a[2]])
    out[np.abs(out) < 1e-15] = 0.0
    return tuple(float(v) for v in out)


def plan_angle_deg(axis) -> float | None:
    """Plan angle (deg, from +x toward +y, in [0, 360)) of an axis; None if vertical."""
    a = np.asarray(axis, dtype=float)
    if math.hypot(a[0], a[1]) < 1e-12:
        return None
    return math.degrees(math.atan2(a[1], a[0])) % 360.0


def parse_region(text: str, plan: SitePlan, magnet_floor: Floor
                 ) -> tuple[object, Floor, str]:
    """The region named by ``text``: a room name, or ``"x1,y1;x2,y2;..."`` in m.

    Returns ``(polygon, floor, label)``; a polygon lies on ``magnet_floor``.
    """
    for r in plan.rooms:
        if r.name == text:
            return r.outline, plan.floor(r.floor), f"room {r.name!r}"
    names = ", ".join(repr(r.name) for r in plan.rooms) or "none"
    expect = (f"a room of the scenario ({names}) or a polygon 'x1,y1;x2,y2;x3,y3;...' "
              "of at least 3 points in site metres")
    pts = []
    try:
        for part in text.split(";"):
            if not part.strip():
                continue
            xy = [float(v) for v in part.split(",")]
            if len(xy) != 2:
                raise ValueError
            pts.append(xy)
    except ValueError:
        raise ArgumentError(must_be("region", expect, text), "region") from None
    arr = np.asarray(pts, dtype=float)
    if len(arr) < 3 or not np.all(np.isfinite(arr)):
        raise ArgumentError(must_be("region", expect, text), "region")
    poly = shapely.Polygon(arr)
    if not poly.is_valid or not poly.area > 0:
        raise ArgumentError(must_be("region", "a simple polygon of non-zero area "
                                    f"(shapely: {shapely.is_valid_reason(poly)})", text),
                            "region")
    return shapely.normalize(poly), magnet_floor, "the given polygon"


def magnet_outline_relative(magnet: Magnet):
    """Plan outline of the magnet's windings relative to its centre (shapely Polygon)."""
    m0 = magnet.moved(center_m=(0.0, 0.0, magnet.center_m[2]))
    return magnet_plan_outline(m0)


def allowed_region(outline, magnet_outline_rel) -> shapely.Geometry:
    """Centres c for which the magnet outline moved to c lies inside ``outline``.

    The Minkowski erosion ``outline ⊖ P``: the outline minus, for every boundary edge
    [a, b], the convex hull of (a − P) ∪ (b − P) — the centres at which the (convex)
    footprint P would meet that edge (de Berg et al., *Computational Geometry*, 3rd ed.,
    Sec. 13.3, Minkowski sums of convex polygons).
    """
    P = np.asarray(magnet_outline_rel.exterior.coords)[:-1]
    rings = [outline.exterior, *outline.interiors] if outline.geom_type == "Polygon" else \
        [r for g in outline.geoms for r in (g.exterior, *g.interiors)]
    hulls = []
    for ring in rings:
        c = np.asarray(ring.coords)
        for a, b in zip(c[:-1], c[1:], strict=True):
            hulls.append(shapely.MultiPoint(np.concatenate([a - P, b - P])).convex_hull)
    out = shapely.difference(outline, shapely.union_all(hulls))
    return shapely.make_valid(out) if not out.is_valid else out


# -- footprints --------------------------------------------------------------------------

@dataclass(frozen=True)
class FootprintSet:
    """Footprint polygons per (floor, threshold_mT), and the grid they came from."""

    polygons: dict[tuple[str, float], object]
    clipped: tuple[tuple[str, float], ...]
    step_m: float


def _floors_needed(plan: SitePlan, zones: Sequence[Zone]) -> list[Floor]:
    names = {z.floor for z in zones}
    return [f for f in plan.floors if f.name in names]


def relative_footprints(magnet: Magnet, floors: Sequence[Floor], levels_mT: Sequence[float],
                        step_m: float, band_step_m: float, progress: Progress = None
                        ) -> FootprintSet:
    """Footprints of ``magnet`` alone, centred at plan (0, 0), its height kept.

    The window is ± :func:`fringe.analysis.zones.reach_m` of the lowest level around the centre,
    so nothing is clipped (clipped ones are listed all the same).
    """
    m0 = magnet.moved(center_m=(0.0, 0.0, magnet.center_m[2]))
    r = reach_m(m0, min(levels_mT) * 1e-3) + 2 * step_m
    n = math.ceil(r / step_m)
    ax = step_m * np.arange(-n, n + 1)
    return _footprint_set(m0, floors, ax, ax, levels_mT, step_m, band_step_m, progress)


def _footprint_set(site, floors, x, y, levels_mT, step_m, band_step_m, progress):
    polys: dict[tuple[str, float], object] = {}
    clipped = []
    thr_T = [t * 1e-3 for t in levels_mT]
    for fl in floors:
        fm = floor_map(site, fl, x, y, band_step_m, thr_T)
        for fp in footprints(fm, levels_mT):
            polys[(fl.name, fp.threshold_mT)] = fp.geometry
            if fp.clipped:
                clipped.append((fl.name, fp.threshold_mT))
        if progress:
            progress(f"footprints on floor {fl.name!r} done")
    return FootprintSet(polys, tuple(clipped), step_m)


def exact_footprints(magnets: Sequence[Magnet], moving: Magnet, floors: Sequence[Floor],
                     levels_mT: Sequence[float], step_m: float, band_step_m: float,
                     steel: Sequence = ()) -> FootprintSet:
    """Footprints of the combined field of ``magnets`` on a site grid covering every
    magnet's reach (lowest level), the grid nodes aligned to ``moving``'s centre; with
    ``steel`` (SteelPart), the steel solved in the field of ``magnets`` counts too."""
    lo = min(levels_mT) * 1e-3
    xs, ys = [], []
    for m in magnets:
        r = reach_m(m, lo) + 2 * step_m
        xs += [m.center_m[0] - r, m.center_m[0] + r]
        ys += [m.center_m[1] - r, m.center_m[1] + r]
    cx, cy = moving.center_m[0], moving.center_m[1]
    x0 = cx + step_m * math.floor((min(xs) - cx) / step_m)
    y0 = cy + step_m * math.floor((min(ys) - cy) / step_m)
    x, y = plan_axes_m(((x0, y0), (max(xs), max(ys))), step_m)
    src = tuple(magnets)
    if steel:
        from fringe.analysis.steel import with_solved_steel
        from fringe.model.site import Site

        src = with_solved_steel(Site("placement", src, steel=tuple(steel)))[0]
    return _footprint_set(src, floors, x, y, levels_mT, step_m, band_step_m, None)


def _translated(geom, offsets: np.ndarray) -> np.ndarray:
    """Copies of ``geom`` moved by each row of ``offsets`` (N, 2), as a geometry array."""
    n = len(offsets)
    arr = np.empty(n, dtype=object)
    arr[:] = [geom] * n
    if geom.is_empty or n == 0:
        return arr
    coords = shapely.get_coordinates(arr)
    k = len(coords) // n
    return shapely.set_coordinates(arr, coords + np.repeat(offsets, k, axis=0))


# -- scoring -------------------------------------------------------------------------------

@dataclass
class _Scores:
    spill: np.ndarray            # (N,) m², all counted thresholds
    boundary_spill: np.ndarray   # (N,) m², each zone at its own limit
    margin: np.ndarray           # (N,) m (inf when no zone is near)
    areas: dict                  # zone index → {threshold: (N,)}
    clearance: dict              # zone index → (N,) signed clearance (nan: enclosed)
    depth: dict                  # zone index → (N,) penetration depth (nan: none/undefined)


def _levels_for(zone: Zone, levels_mT: Sequence[float]) -> list[float]:
    return sorted(t for t in levels_mT if t >= zone.limit_mT * (1 - 1e-9))


def score_footprints(fp_at, zones: Sequence[Zone], controlled: dict, levels_mT, n: int,
                     step_m: float) -> _Scores:
    """Score ``n`` placements given their footprints.

    Parameters
    ----------
    fp_at : callable (floor, threshold_mT) → geometry array (n,)
        Footprint of each placement.
    zones, controlled
        From :func:`zones_of_site`.
    levels_mT : sequence of float
        Every footprint level available (must include each zone's limit).
    """
    spill = np.zeros(n)
    bspill = np.zeros(n)
    margin = np.full(n, np.inf)
    areas, clear, depth = {}, {}, {}
    for k, z in enumerate(zones):
        lv = _levels_for(z, levels_mT)
        areas[k] = {}
        live = np.ones(n, dtype=bool)
        for t in lv:
            a = np.zeros(n)
            if live.any():
                F = fp_at(z.floor, t)
                a[live] = shapely.area(shapely.intersection(F[live], z.geometry))
            a[a < 1e-9] = 0.0
            areas[k][t] = a
            live &= a > 0  # nested footprints: none above once one is zero
            spill += a
        a_lim = areas[k][lv[0]]
        bspill += a_lim
        F = fp_at(z.floor, lv[0])
        c = np.full(n, np.nan)
        d = np.full(n, np.nan)
        empty = shapely.is_empty(F)
        apart = (~empty) & (a_lim == 0)
        if apart.any():
            c[apart] = shapely.distance(F[apart], z.geometry)
        hit = np.flatnonzero(a_lim > 0)
        ctrl = controlled.get(z.floor, shapely.Polygon())
        if hit.size and not ctrl.is_empty:
            inside = shapely.intersection(F[hit], ctrl)
            ok = ~shapely.is_empty(inside)
            if ok.any():
                idx = hit[ok]
                spilled = shapely.intersection(F[idx], z.geometry)
                line = shapely.segmentize(shapely.boundary(spilled), max(step_m / 2, 1e-3))
                pts, which = shapely.get_coordinates(line, return_index=True)
                dist = shapely.distance(shapely.points(pts), inside[ok][which])
                dd = np.zeros(idx.size)
                np.maximum.at(dd, which, dist)
                d[idx] = dd
                c[idx] = -dd
        clear[k] = c
        depth[k] = d
        margin = np.fmin(margin, np.where(np.isnan(c), np.inf, c))
    return _Scores(spill, bspill, margin, areas, clear, depth)


def vertical_shortfall_m(magnet: Magnet, floor: Floor, threshold_mT: float,
                         step_m: float = 0.1) -> float:
    """How far (m) the ``threshold_mT`` line of ``magnet`` reaches into ``floor``'s band
    from above or below: the extra vertical distance between magnet centre and band that
    would keep the largest |B| on that floor below the threshold (0 if it already is;
    nan for a band containing the magnet centre).

    The largest |B| over a plan window at height z is found on a grid (``step_m``) and
    the crossing in z located with Brent's method.
    """
    zc = magnet.center_m[2]
    lo, hi = floor.band_z_m
    if lo <= zc <= hi:
        return math.nan
    t = threshold_mT * 1e-3
    r = reach_m(magnet, t)
    n = math.ceil(r / step_m)
    ax = magnet.center_m[0] + step_m * np.arange(-n, n + 1)
    ay = magnet.center_m[1] + step_m * np.arange(-n, n + 1)
    X, Y = np.meshgrid(ax, ay)
    sign = 1.0 if lo > zc else -1.0
    gap = (lo - zc) if sign > 0 else (zc - hi)

    def excess(h):
        pts = np.column_stack([X.ravel(), Y.ravel(), np.full(X.size, zc + sign * h)])
        return float(np.max(field_magnitude_T(magnet, pts))) - t

    if excess(gap) < 0:
        return 0.0
    top = max(r, gap) + step_m
    if excess(top) >= 0:
        return math.nan
    return float(brentq(excess, gap, top, xtol=1e-3)) - gap


# -- the search ----------------------------------------------------------------------------

@dataclass(frozen=True)
class Placement:
    """One scored placement of the moving magnet.

    ``spill_by_room`` lists every zone the footprints reach (spill > 0) or come within
    ``NEAR_M`` (1 m) of the margin: ``{"room", "floor", "limit_mT", "area_m2" (at its
    limit), "areas_m2" {threshold: area}, "clearance_m", "depth_m", "through_floor"}``.
    """

    center_m: tuple[float, float, float]
    axis: tuple[float, float, float]
    angle_deg: float | None
    spill_area_m2: float
    boundary_spill_m2: float
    margin_m: float
    spill_by_room: tuple[dict, ...]
    source: str = "search"
    exact: bool = True

    @property
    def key(self) -> tuple[float, float]:
        """Ranking key: spill rounded to ``SPILL_RESOLUTION_M2``, then −margin."""
        return (round(self.spill_area_m2 / SPILL_RESOLUTION_M2), -self.margin_m)


@dataclass(frozen=True)
class PlacementResult:
    """What :func:`search_placement` found.

    ``candidates`` are ranked best first; ``current`` is the scenario's own placement
    scored the same way (None when the region is on another floor); ``vertical`` lists
    ``(room, floor, limit_mT, shortfall_m)`` for each footprint reaching a zone through
    a floor slab at the best placement (:func:`vertical_shortfall_m`).
    """

    magnet: Magnet
    region_label: str
    region: object
    allowed: dict[float | None, object]
    boundary_mT: float
    levels_mT: tuple[float, ...]
    candidates: tuple[Placement, ...]
    current: Placement | None
    lattice: dict[float | None, np.ndarray]
    evaluations: int
    notes: tuple[str, ...] = ()
    vertical: tuple[tuple[str, str, float, float], ...] = field(default=())
    relative: dict = field(default_factory=dict, compare=False, repr=False)
    fixed: dict = field(default_factory=dict, compare=False, repr=False)

    @property
    def best(self) -> Placement:
        """The first-ranked placement."""
        return self.candidates[0]

    def footprint(self, placement: Placement, floor: str, threshold_mT: float) -> shapely.Geometry:
        """Absolute footprint polygon of ``placement`` on ``floor`` (the moving magnet's
        translated footprint, united with the other magnets' own ones if any)."""
        key = placement.angle_deg
        fs = self.relative.get(key)
        if fs is None or (floor, threshold_mT) not in fs.polygons:
            return shapely.Polygon()
        g = _translated(fs.polygons[(floor, threshold_mT)],
                        np.array([placement.center_m[:2]]))[0]
        f = self.fixed.get((floor, threshold_mT))
        return shapely.union(g, f) if f is not None else g

    @property
    def fits(self) -> bool:
        """True when the best placement spills into no zone."""
        return self.best.spill_area_m2 < SPILL_RESOLUTION_M2 / 2


def _breakdown(sc: _Scores, i: int, zones: Sequence[Zone]) -> tuple[dict, ...]:
    out = []
    near = max(float(sc.margin[i]), 0.0) + NEAR_M if math.isfinite(sc.margin[i]) else NEAR_M
    for k, z in enumerate(zones):
        lv = sorted(sc.areas[k])
        a = {t: float(sc.areas[k][t][i]) for t in lv}
        c = float(sc.clearance[k][i])
        if a[lv[0]] <= 0 and not (c < near):
            continue
        d = float(sc.depth[k][i])
        out.append({"room": z.name, "floor": z.floor, "limit_mT": z.limit_mT,
                    "area_m2": a[lv[0]], "areas_m2": {t: v for t, v in a.items() if v > 0},
                    "clearance_m": None if math.isnan(c) else c,
                    "depth_m": None if math.isnan(d) else d,
                    "through_floor": bool(a[lv[0]] > 0 and math.isnan(d))})
    out.sort(key=lambda r: (-r["area_m2"], r["clearance_m"] if r["clearance_m"] is not None
                            else -1e9))
    return tuple(out)


def _placement(sc: _Scores, i: int, zones, center, axis, angle, source, exact=True):
    return Placement(tuple(float(v) for v in center), tuple(axis), angle,
                     float(sc.spill[i]), float(sc.boundary_spill[i]), float(sc.margin[i]),
                     _breakdown(sc, i, zones), source, exact)


@dataclass
class _Problem:
    """What one search fixes before it starts (built by :func:`_problem`)."""

    magnet: Magnet
    others: tuple[Magnet, ...]
    plan: SitePlan
    boundary_mT: float
    step_m: float
    band_step_m: float
    home: Floor
    outline: object
    floor: Floor
    label: str
    z_m: float
    zones: tuple[Zone, ...]
    controlled: dict
    levels_mT: list[float]
    floors: list[Floor]
    fixed: dict = field(default_factory=dict)
    notes: list[str] = field(default_factory=list)
    evaluations: int = 0
    steel: tuple = ()

    def scores(self, fs: FootprintSet, centres: np.ndarray) -> _Scores:
        """Score the moving magnet's footprints ``fs`` translated to ``centres`` (N, 2)."""
        centres = np.atleast_2d(centres)
        self.evaluations += len(centres)
        cache: dict = {}

        def fp_at(fl, t):
            if (fl, t) not in cache:
                arr = _translated(fs.polygons[(fl, t)], centres)
                g = self.fixed.get((fl, t))
                if g is not None and not g.is_empty:
                    arr = shapely.union(arr, g)
                cache[(fl, t)] = arr
            return cache[(fl, t)]

        return score_footprints(fp_at, self.zones, self.controlled, self.levels_mT,
                                len(centres), self.step_m)

    def placement(self, sc: _Scores, i: int, center, axis, angle, source: str) -> Placement:
        """Placement ``i`` of ``sc`` (exact when no other magnet is superposed)."""
        return _placement(sc, i, self.zones, center, axis, angle, source,
                          not (self.others or self.steel))


def _as_region_room(plan: SitePlan, region: str, notes: list[str]) -> SitePlan:
    """The plan with the room named ``region`` (if any) made the magnet's controlled room."""
    room = next((r for r in plan.rooms if r.name == region), None)
    if room is None or (room.access == "controlled" and room.limit_mT is None):
        return plan
    notes.append(f"Room {room.name!r} is treated as controlled access for the "
                 "search (the magnet would stand in it).")
    return replace(plan, rooms=tuple(replace(r, access="controlled", limit_mT=None)
                                     if r is room else r for r in plan.rooms))


def _search_window(magnet: Magnet, others, plan: SitePlan, outline, boundary_mT: float):
    """Box holding every footprint considered: the rooms and the region grown by reach."""
    reach = reach_m(magnet, 1e-3 * min([boundary_mT] + [r.limit_mT for r in plan.rooms
                                                        if r.limit_mT is not None]))
    b = np.array(outline.bounds)
    xs = [b[0] - reach - 1, b[2] + reach + 1]
    ys = [b[1] - reach - 1, b[3] + reach + 1]
    for m in others:
        rr = reach_m(m, boundary_mT * 1e-3)
        xs += [m.center_m[0] - rr - 1, m.center_m[0] + rr + 1]
        ys += [m.center_m[1] - rr - 1, m.center_m[1] + rr + 1]
    for r in plan.rooms:
        rb = r.outline.bounds
        xs += [rb[0] - 1, rb[2] + 1]
        ys += [rb[1] - 1, rb[3] + 1]
    return (min(xs), min(ys)), (max(xs), max(ys))


def _problem(site, magnet_name: str, region: str, angles_deg, boundary_mT) -> _Problem:
    """Check the arguments and fix the zones, levels and floors of one search."""
    magnet = site.magnet(magnet_name)
    others = tuple(m for m in site.magnets if m.name != magnet.name)
    plan = site_plan(site)
    s = plan.settings
    bnd = float(boundary_mT if boundary_mT is not None else s.boundary.value_mT)
    if not (math.isfinite(bnd) and bnd > 0):
        raise ArgumentError(must_be("boundary_mT", "a positive number of mT", boundary_mT),
                            "boundary_mT")
    if not len(angles_deg):
        raise ArgumentError(must_be("angles_deg", "at least one angle in degrees", ""),
                            "angles_deg")
    home = plan.floor_of_point(magnet.center_m[2])
    outline, floor, label = parse_region(region, plan, home)
    notes: list[str] = []
    plan = _as_region_room(plan, region, notes)
    zc = magnet.center_m[2] - home.elevation_m + floor.elevation_m
    if floor.name != home.name:
        notes.append(f"The region is on floor {floor.name!r}: the centre height is kept "
                     f"{magnet.center_m[2] - home.elevation_m:g} m above that floor "
                     f"(z = {zc:g} m).")
    zones, controlled = zones_of_site(plan, bnd, _search_window(magnet, others, plan, outline,
                                                                  bnd))
    if not zones:
        raise ScenarioError(must_be("room", "at least one room that is not controlled (or "
                                    "a floor with space outside its rooms) to keep the field "
                                    "out of", "none"), site.source_file or None)
    levels = sorted({t for t in s.thresholds_mT if t >= bnd * (1 - 1e-9)} | {bnd}
                    | {z.limit_mT for z in zones})
    pb = _Problem(magnet, others, plan, bnd, s.grid_step_m, s.band_step_m, home, outline,
                  floor, label, zc, zones, controlled, levels, _floors_needed(plan, zones),
                  notes=notes, steel=tuple(getattr(site, "steel", ())))
    if pb.steel:
        notes.append(f"{len(pb.steel)} steel part(s): the search scored placements in free "
                     "space; the best placements were solved with the steel at their "
                     "positions and re-ranked on those numbers (a solve per trial position "
                     "would be too slow).")
    if others:  # the other magnets' own footprints: the union stand-in during the search
        pb.fixed = exact_footprints(others, others[0], pb.floors, levels, pb.step_m,
                                    pb.band_step_m).polygons
        notes.append(f"{len(others)} other magnet(s) kept in place; the search used the "
                     "union of footprints as a stand-in and the best placements were "
                     "re-evaluated with the combined field.")
    return pb


def _orientations(magnet: Magnet, angles_deg, notes: list[str]
                  ) -> dict[float | None, tuple[float, float, float]]:
    """Bore directions to try, keyed by plan angle (None: vertical, which has only one)."""
    orient: dict[float | None, tuple[float, float, float]] = {}
    for a in angles_deg:
        ax_ = axis_at_angle(magnet.axis, float(a))
        key = None if plan_angle_deg(ax_) is None else float(a) % 360.0
        orient.setdefault(key, ax_)
    if None in orient and len(angles_deg) > 1:
        notes.append("The bore axis is vertical: turning it about the vertical changes "
                     "nothing, so only one direction was tried.")
    return orient


def _lattice(allowed, h: float) -> np.ndarray:
    """Cell centres of spacing ``h`` inside ``allowed``, plus one point on its surface."""
    x0, y0, x1, y1 = allowed.bounds
    gx = x0 + h / 2 + h * np.arange(max(1, math.ceil((x1 - x0) / h)))
    gy = y0 + h / 2 + h * np.arange(max(1, math.ceil((y1 - y0) / h)))
    GX, GY = np.meshgrid(gx, gy)
    pts = np.column_stack([GX.ravel(), GY.ravel()])
    pts = pts[shapely.contains_xy(allowed, pts[:, 0], pts[:, 1])]
    extra = shapely.get_coordinates(shapely.point_on_surface(allowed))
    return np.concatenate([pts, extra]) if len(pts) else extra


def _refine_starts(pts: np.ndarray, sc: _Scores, h: float) -> tuple[list[int], list]:
    """Lattice indices by rank, and up to ``REFINE_STARTS`` well-separated start points."""
    order = sorted(range(len(pts)), key=lambda i: (round(sc.spill[i] / SPILL_RESOLUTION_M2),
                                                  -sc.margin[i]))
    starts: list[np.ndarray] = []
    for i in order:
        if all(np.hypot(*(pts[i] - p)) > 2.5 * h for p in starts):
            starts.append(pts[i])
        if len(starts) >= REFINE_STARTS:
            break
    return order, starts


def _refined(pb: _Problem, fs: FootprintSet, allowed, start, h: float) -> np.ndarray | None:
    """Nelder–Mead from ``start`` on the surrogate spill − min(margin, cap); None outside."""
    def surrogate(c):
        sc1 = pb.scores(fs, np.asarray(c)[None, :])
        g = float(sc1.spill[0] - min(sc1.margin[0], MARGIN_CAP_M))
        if not shapely.contains_xy(allowed, c[0], c[1]):
            g += 100.0 * (1.0 + shapely.distance(allowed, shapely.Point(c)))
        return g

    simplex = np.array([start, start + [h, 0.0], start + [0.0, h]])
    res = minimize(surrogate, start, method="Nelder-Mead",
                   options={"initial_simplex": simplex, "xatol": pb.step_m / 4,
                            "fatol": 1e-4, "maxfev": 120})
    c = np.asarray(res.x)
    return c if shapely.contains_xy(allowed, c[0], c[1]) else None


def _search_direction(pb: _Problem, fs: FootprintSet, allowed, key, ax_,
                      coarse_points: int, say) -> tuple[list[Placement], np.ndarray, float]:
    """Coarse lattice over ``allowed`` for one bore direction, then local refinement.

    Returns the placements found, the lattice and its spacing, m.
    """
    h = max(pb.step_m, math.sqrt(allowed.area / max(coarse_points, 4)))
    pts = _lattice(allowed, h)
    sc = pb.scores(fs, pts)
    say(f"{_angle_text(key)}: {len(pts)} lattice centres scored")
    order, starts = _refine_starts(pts, sc, h)
    found = [pb.placement(sc, i, (*pts[i], pb.z_m), ax_, key, "lattice")
             for i in order[:REFINE_STARTS]]
    for p in starts:
        c = _refined(pb, fs, allowed, p, h)
        if c is not None:
            found.append(pb.placement(pb.scores(fs, c[None, :]), 0, (*c, pb.z_m), ax_, key,
                                      "refined"))
    say(f"{_angle_text(key)}: refined from {len(starts)} start(s)")
    return found, pts, h


def _scenario_placement(pb: _Problem, rel: dict, allowed: dict) -> tuple[Placement | None, bool]:
    """The scenario's own placement scored like the others, and whether it is in the region."""
    magnet = pb.magnet
    if pb.floor.name != pb.home.name:
        return None, False
    cur_angle = plan_angle_deg(magnet.axis)
    key = cur_angle if cur_angle is None else round(cur_angle, 9) % 360.0
    if key not in rel:
        rel[key] = relative_footprints(magnet, pb.floors, pb.levels_mT, pb.step_m,
                                       pb.band_step_m)
    sc0 = pb.scores(rel[key], np.array([magnet.center_m[:2]]))
    current = pb.placement(sc0, 0, magnet.center_m, magnet.axis, key, "scenario")
    A_cur = allowed.get(key)
    if A_cur is None:
        A_cur = allowed_region(pb.outline, magnet_outline_relative(magnet))
    return current, bool(shapely.contains_xy(A_cur, *magnet.center_m[:2]))


def _vertical_shortfalls(pb: _Problem, best: Placement) -> list[tuple[str, str, float, float]]:
    """For each footprint reaching a zone through a slab: the extra distance needed, m."""
    out = []
    for r in best.spill_by_room:
        if r["through_floor"]:
            mb = pb.magnet.moved(center_m=best.center_m, axis=best.axis)
            v = vertical_shortfall_m(mb, pb.plan.floor(r["floor"]), r["limit_mT"], pb.step_m)
            out.append((r["room"], r["floor"], r["limit_mT"], v))
    return out


def search_placement(site, magnet_name: str, region: str, angles_deg: Sequence[float] = (0, 90),
                     boundary_mT: float | None = None, *, n_best: int = 5,
                     coarse_points: int = COARSE_POINTS, progress: Progress = None
                     ) -> PlacementResult:
    """Search the centre and bore direction of one magnet of ``site``.

    Parameters
    ----------
    site : Site
    magnet_name : str
        The magnet moved; every other magnet stays where it is.
    region : str
        A room name of the scenario, or a polygon ``"x1,y1;x2,y2;..."`` in site metres.
        The magnet's winding outline must lie inside it.
    angles_deg : sequence of float
        Bore directions tried, degrees about the vertical from site +x toward +y.
    boundary_mT : float, optional
        Controlled-area boundary (default: the scenario's ``plan`` boundary).
    n_best : int
        Placements returned.
    coarse_points : int
        Approximate lattice size per direction in the coarse stage.

    Returns
    -------
    PlacementResult

    Raises
    ------
    ArgumentError
        ``region``, ``angles_deg`` or ``boundary_mT`` cannot be used.
    """
    say = progress or (lambda msg: None)
    pb = _problem(site, magnet_name, region, angles_deg, boundary_mT)
    magnet = pb.magnet
    base = magnet.moved(center_m=(magnet.center_m[0], magnet.center_m[1], pb.z_m))
    rel: dict[float | None, FootprintSet] = {}
    allowed: dict[float | None, object] = {}
    lattice: dict[float | None, np.ndarray] = {}
    spacing: dict[float | None, float] = {}
    evaluated: list[Placement] = []
    for key, ax_ in _orientations(magnet, angles_deg, pb.notes).items():
        mk = base.moved(axis=ax_)
        say(f"footprints for bore direction {_angle_text(key)}")
        rel[key] = relative_footprints(mk, pb.floors, pb.levels_mT, pb.step_m, pb.band_step_m)
        if rel[key].clipped:
            pb.notes.append(f"At {_angle_text(key)} footprints reach the edge of their window "
                            f"({', '.join(f'{t:g} mT on {f}' for f, t in rel[key].clipped)}): "
                            "areas there are underestimated.")
        P = magnet_outline_relative(mk)
        allowed[key] = A = allowed_region(pb.outline, P)
        if A.is_empty or A.area < 1e-9:
            pb.notes.append(f"At {_angle_text(key)} the magnet's winding outline "
                            f"({_outline_size(P)}) does not fit in the region.")
            continue
        found, lattice[key], spacing[key] = _search_direction(pb, rel[key], A, key, ax_,
                                                              coarse_points, say)
        evaluated += found
    current, cur_in_region = _scenario_placement(pb, rel, allowed)
    if cur_in_region:
        evaluated.append(current)
    if not evaluated:
        raise ArgumentError(must_be("region", "large enough to hold the magnet's winding "
                                    f"outline ({_outline_size(magnet_outline_relative(magnet))})"
                                    " at one of the angles tried", region), "region")
    ranked = _dedupe(sorted(evaluated, key=lambda p: p.key), spacing, pb.step_m)
    if pb.others or pb.steel:  # re-evaluate with the combined field (and the steel)
        say("re-evaluating the best placements with the combined field"
            + (" and the steel" if pb.steel else ""))
        args = (magnet, pb.others, pb.floors, pb.levels_mT, pb.zones, pb.controlled,
                pb.step_m, pb.band_step_m, pb.steel)
        pool = [_exact_placement(p, *args) for p in ranked[:EXACT_CANDIDATES]
                if p.source != "scenario"]
        if current is not None:
            current = _exact_placement(current, *args)
            if cur_in_region:
                pool.append(current)
        ranked = _dedupe(sorted(pool, key=lambda p: p.key), spacing, pb.step_m)
    return PlacementResult(magnet, pb.label, pb.outline, allowed, pb.boundary_mT,
                           tuple(pb.levels_mT), tuple(ranked[:n_best]), current, lattice,
                           pb.evaluations, tuple(pb.notes),
                           tuple(_vertical_shortfalls(pb, ranked[0])), rel, pb.fixed)


def _exact_placement(p: Placement, magnet, others, floors, levels, zones, controlled, step,
                     band_step, steel=()) -> Placement:
    mk = magnet.moved(center_m=p.center_m, axis=p.axis)
    fs = exact_footprints((mk, *others), mk, floors, levels, step, band_step, steel)

    def fp_at(fl, t):
        arr = np.empty(1, dtype=object)
        arr[0] = fs.polygons[(fl, t)]
        return arr

    sc = score_footprints(fp_at, zones, controlled, levels, 1, step)
    return _placement(sc, 0, zones, p.center_m, p.axis, p.angle_deg, p.source, True)


def _dedupe(ranked: list[Placement], spacing: dict, step: float) -> list[Placement]:
    """Keep the better of placements with the same direction closer than the coarse
    lattice spacing (the scenario's own placement is always kept)."""
    out: list[Placement] = []
    for p in ranked:
        r = max(2 * step, 0.99 * spacing.get(p.angle_deg, 0.0))
        if p.source != "scenario" and any(
                q.angle_deg == p.angle_deg and math.dist(q.center_m, p.center_m) < r
                for q in out):
            continue
        out.append(p)
    return out


def _angle_text(key) -> str:
    return "a vertical axis" if key is None else f"{key:g}°"


def _outline_size(P) -> str:
    x0, y0, x1, y1 = P.bounds
    return f"{x1 - x0:.2f} m × {y1 - y0:.2f} m in plan"


def moved_site(site, magnet: Magnet, placement: Placement):
    """``site`` with ``magnet`` moved to ``placement`` (others unchanged); its steel, if
    any, solved again for the new position."""
    from fringe.analysis.steel import with_solved_steel

    mags = tuple(magnet.moved(center_m=placement.center_m, axis=placement.axis)
                 if m.name == magnet.name else m for m in site.magnets)
    return with_solved_steel(replace(site, magnets=mags, induced=None))[0]


