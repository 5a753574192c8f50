"""Implant sheets: the spatial field gradient |∇|B|| on the plane through each magnet's axis.

One sheet per magnet (:func:`implant_sheets`): labelled lines at the levels of ``[plan]
gradient_lines_T_per_m``, the windings, the cryostat envelope (not accessible) with the
open bore, and for each ``[[implant_condition]]`` the region where one of its limits is
passed. Data from :mod:`fringe.analysis.implants`; see docs/implants.md.
"""

from __future__ import annotations

import shapely

from fringe.analysis.implants import ImplantMap, SiteImplants
from fringe.model.magnet import Magnet

__all__ = ["implant_sheets", "implant_findings"]

#: The cautions every implant sheet carries (docs/implants.md).
IMPLANT_CAUTION: str = (
    "Implant and device conditions: the device's own labelling, the magnet supplier's "
    "spatial-gradient data and the site's MR safety expert govern.")


def _envelope_outline(m: ImplantMap):
    """The envelope's two cross-sections in the map plane (u along, v across), m."""
    r_in, r_out, z0, z1 = m.envelope_rz_m
    return shapely.union(shapely.box(z0, r_in, z1, r_out), shapely.box(z0, -r_out, z1, -r_in))


def _windings(magnet: Magnet) -> list[tuple[str, object]]:
    """Winding cross-sections in the map plane, both sides of the axis."""
    boxes = []
    for c in magnet.coils:
        boxes += [shapely.box(c.z_min_m, c.r_inner_m, c.z_max_m, c.r_outer_m),
                  shapely.box(c.z_min_m, -c.r_outer_m, c.z_max_m, -c.r_inner_m)]
    return [(magnet.name, shapely.union_all(boxes))]


def _notes(imp: SiteImplants, m: ImplantMap) -> list[str]:
    mx = imp.maxima[m.magnet]
    b, g, f = mx["field_T"], mx["grad_abs_B_T_per_m"], mx["force_product_T2_per_m"]
    notes = [
        "|∇|B||: magnitude of the gradient of the field magnitude (the spatial field "
        "gradient of implant labels; 1 T/m = 100 G/cm). All magnets of the site superposed.",
        f"Largest accessible values (outside the cryostat envelope; the bore is accessible): "
        f"|B| {b.value:.3g} T, |∇|B|| {g.value:.3g} T/m, |B|·|∇|B|| {f.value:.3g} T²/m "
        "(points in summary.json, magnets[].accessible_maxima).",
        "Blank inside the cryostat envelope (dashed), where nobody and nothing can be.",
    ]
    for c in imp.conditions:
        state = ("holds everywhere accessible" if c.holds_everywhere_accessible else
                 "a limit is passed in its hatched region (legend)")
        if getattr(c, "marginal", False):
            state += ", but is marginal: not within the field uncertainty"
        iso = "" if c.holds_at_isocentre else " It is NOT met at the isocentre."
        notes.append(f"Implant condition {c.condition.name!r}: {state}.{iso}")
    notes.append(IMPLANT_CAUTION)
    return notes


def implant_sheets(imp: SiteImplants, magnets: dict, base: dict) -> list[tuple[str, object]]:
    """One gradient sheet per magnet as ``(title stem, Figure)``.

    Parameters
    ----------
    imp : SiteImplants
    magnets : dict of name → Magnet
        For the winding cross-sections.
    base : dict
        Title-block fields shared by the report's sheets (``SheetInfo`` keywords).
    """
    from fringe.render import drawing as dr

    out = []
    for m in imp.maps:
        label = ("cryostat envelope (not accessible); the bore between is open"
                 if m.envelope_rz_m[0] > 0 else
                 "cryostat envelope with its bore, too narrow for a person (not accessible)")
        overlays = [dr.Overlay(label, _envelope_outline(m).boundary, "outline")]
        for k, c in enumerate(imp.conditions):
            region = c.regions.get(m.magnet)
            if region is not None and not region.is_empty:
                overlays.append(dr.Overlay(f"implant condition {c.condition.name!r}: a limit "
                                           "is passed (hatched); it holds outside", region,
                                           f"condition-{k % 3 + 1}"))
        info = dr.SheetInfo(title=f"Spatial field gradient around {m.magnet}",
                            subtitle="|∇|B|| in T/m on the plane through the bore axis, "
                                     "for checking implant and device labels", **base)
        mag = magnets.get(m.magnet)
        fig = dr.map_sheet(m.u_m, m.v_m, m.grad_T_per_m, imp.levels_T_per_m, info,
                           unit="T/m", quantity="|∇|B||", overlays=overlays,
                           windings=_windings(mag) if mag is not None else (),
                           notes=_notes(imp, m),
                           x_label="along the bore axis from the isocentre, m",
                           y_label="across the axis, m", north_arrow=False)
        out.append((m.magnet, fig))
    return out


def implant_findings(imp: SiteImplants | None) -> list[str]:
    """Cover-sheet findings: each implant condition, plainly; failures at the isocentre
    first."""
    if imp is None:
        return []
    lines = []
    for c in sorted(imp.conditions, key=lambda c: c.holds_at_isocentre):
        name = c.condition.name
        if not c.holds_at_isocentre:
            lines.append(f"Implant condition {name!r} is NOT met at the isocentre: this "
                         "magnet is outside the device's labelled conditions")
        elif not c.holds_everywhere_accessible:
            p = ", ".join(f"{v:.2f}" for v in c.worst_point_m)
            lines.append(f"Implant condition {name!r}: met at the isocentre but a limit is "
                         f"passed elsewhere (worst at ({p}) m, {c.worst_ratio:.2f}× the limit)")
        elif getattr(c, "marginal", False):
            lines.append(f"Implant condition {name!r}: met everywhere accessible, but "
                         f"marginal ({c.worst_ratio:.2f}× the limit at worst: not met if "
                         "the field is higher by the plan's field uncertainty)")
        else:
            lines.append(f"Implant condition {name!r}: met everywhere accessible")
    return lines
