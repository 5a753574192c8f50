"""``fringe energy``: stored energy, inductance and fringe energy of a site's magnets.

Only parses, calls the library (:mod:`fringe.physics.energy`) and renders.
"""

from __future__ import annotations

import math
import sys
from pathlib import Path
from typing import TYPE_CHECKING

from fringe.cli.main import add_formats_option
from fringe.model.constants import (
    ADVISORY_NOTICE,
    DEFAULT_ENERGY_LEVELS_J_PER_M3,
    DEFAULT_ENVELOPE_MARGIN_M,
)
from fringe.model.errors import FringeIOError, ScenarioError, must_be

if TYPE_CHECKING:
    import numpy as np

    from fringe.physics.energy import MagnetEnergy

#: Largest accepted |field route − circuit route| / circuit route for ``--verify``
#: (the issue's 0.1 % agreement; measured agreement is ~1e-6).
VERIFY_TOLERANCE: float = 1e-3


def register(sub) -> None:
    p = sub.add_parser(
        "energy", help="stored energy, inductance matrix and fringe energy of each magnet",
        description=("Stored magnetic energy W = ½ IᵀMI of each magnet (Maxwell's coaxial "
                     "filament formula over the winding cross-sections), inductance matrix, "
                     "series-circuit inductance, centre field, zonal moments and the energy "
                     "outside the cryostat envelope; with --verify also ∫B²/2μ₀ dV. "
                     + ADVISORY_NOTICE))
    p.add_argument("scenario", help="scenario TOML file")
    p.add_argument("--magnet", metavar="NAME", help="only this magnet (default: all)")
    p.add_argument("--json", action="store_true", help="print JSON instead of text")
    p.add_argument("--verify", action="store_true",
                   help="also integrate B²/2μ₀ over space and compare (exit 1 if > 0.1 %% apart)")
    p.add_argument("--envelope-margin-m", type=float, default=DEFAULT_ENVELOPE_MARGIN_M,
                   metavar="M", help=("margin around the windings of the cryostat envelope "
                                      f"cylinder, m (default {DEFAULT_ENVELOPE_MARGIN_M})"))
    p.add_argument("--box", nargs=6, type=float, metavar=("XMIN", "YMIN", "ZMIN", "XMAX",
                                                          "YMAX", "ZMAX"),
                   help="also report the energy outside this site box (m; must hold the windings)")
    p.add_argument("--radius-m", type=float, metavar="R",
                   help=("also report the energy outside a sphere of radius R about each "
                         "magnet centre (m; at least the sphere enclosing the windings)"))
    p.add_argument("--maps", metavar="DIR",
                   help="write plan and section maps of the energy density to DIR (PNG unless "
                        "--formats says otherwise)")
    p.add_argument("--levels", nargs="+", type=float, metavar="U",
                   default=list(DEFAULT_ENERGY_LEVELS_J_PER_M3),
                   help="contour levels of the maps, J/m³ (default 1 10 100 1000)")
    add_formats_option(p, default="png")
    p.set_defaults(func=run, flags={"magnet": "--magnet"})


def magnet_record(e: MagnetEnergy) -> dict:
    """The JSON record of one magnet (keys of the issue kept exactly)."""
    r, z0, z1 = e.envelope_m
    return {
        "name": e.name,
        "stored_energy_J": e.stored_energy_J,
        "stored_energy_MJ": e.stored_energy_J / 1e6,
        "center_field_T": e.center_field_T,
        "inductance_matrix_H": e.inductance_matrix_H.tolist(),
        "circuit_inductance_H": e.circuit_inductance_H,
        "coil_currents_A": e.coil_currents_A.tolist(),
        "envelope_cylinder_m": {"radius_m": r, "z_min_m": z0, "z_max_m": z1},
        "energy_outside_envelope_J": e.energy_outside_envelope_J,
        "energy_outside_envelope_fraction": (e.energy_outside_envelope_J / e.stored_energy_J
                                             if e.stored_energy_J else None),
        "energy_outside_box_J": e.energy_outside_box_J,
        "zonal_moments": e.zonal_moments_Am,
        "field_energy_J": e.field_energy_J,
        "verify_relative_difference": e.verify_relative_difference,
    }


def _radius_record(e: MagnetEnergy, radius_m, outside: dict) -> dict:
    if e.name not in outside:
        return {}
    w = outside[e.name]
    return {"energy_outside_radius": {"radius_m": radius_m, "energy_J": w,
                                      "energy_fraction": w / e.stored_energy_J
                                      if e.stored_energy_J else None}}


def _energy(value_J: float) -> str:
    """An energy right-aligned in the text column, in J, kJ or MJ by size."""
    from fringe.cli.textfmt import format_energy_J

    number, unit = format_energy_J(value_J, 6).split(" ")
    return f"{number:>16} {unit:<2}"


def format_matrix(matrix_H) -> list[str]:
    """The inductance matrix rows, each labelled ``coil k`` under a ``coil k`` header."""
    n = len(matrix_H)
    labels = [f"coil {k}" for k in range(1, n + 1)]
    w = max(len(x) for x in labels)
    lines = ["    " + " " * w + " " + " ".join(f"{x:>11}" for x in labels)]
    for label, row in zip(labels, matrix_H, strict=True):
        lines.append(f"    {label:<{w}} " + " ".join(f"{v:11.5g}" for v in row))
    return lines


def format_magnet(e: MagnetEnergy) -> str:
    """Plain text block of one magnet (energies in J, kJ or MJ by size)."""
    from fringe.cli.textfmt import plural

    r, z0, z1 = e.envelope_m
    n = len(e.coil_currents_A)
    lines = [f"magnet: {e.name}",
             f"  stored energy W = ½ IᵀMI {_energy(e.stored_energy_J)}",
             f"  centre field B_z(0)      {e.center_field_T:16.6g} T"]
    if e.circuit_inductance_H is None:
        lines.append("  circuit inductance 2W/I²   not defined (coil currents differ)")
    else:
        lines.append(f"  circuit inductance 2W/I² {e.circuit_inductance_H:16.6g} H   "
                     f"(series circuit at {abs(e.coil_currents_A[0]):g} A)")
    frac = e.energy_outside_envelope_J / e.stored_energy_J if e.stored_energy_J else math.nan
    lines.append(f"  energy outside envelope  {_energy(e.energy_outside_envelope_J)} "
                 f"({100 * frac:.3g} % of W; cylinder ρ ≤ {r:.3g} m, "
                 f"{z0:.3g} ≤ z ≤ {z1:.3g} m about the centre)")
    if e.energy_outside_box_J is not None:
        lines.append(f"  energy outside the box   {_energy(e.energy_outside_box_J)}")
    q = e.zonal_moments_Am
    lines.append(f"  zonal moments: dipole {q['dipole_Am2']:.5g} A·m², l=3 {q['l3_Am4']:.5g} "
                 f"A·m⁴, l=5 {q['l5_Am6']:.5g} A·m⁶")
    if e.field_energy_J is not None:
        lines.append(f"  verify ∫B²/2μ₀ dV        {_energy(e.field_energy_J)} "
                     f"(relative difference {e.verify_relative_difference:+.2e})")
    lines.append(f"  inductance matrix (H), {plural(n, 'winding')}, currents (A): "
                 + " ".join(f"{c:g}" for c in e.coil_currents_A))
    lines += format_matrix(e.inductance_matrix_H)
    return "\n".join(line.rstrip() for line in lines)


def _write_maps(site, magnets, out_dir: Path, levels,
                formats: tuple[str, ...] | None = None) -> list[Path]:
    """Each energy-density map, drawn once, written in each of ``formats`` (default PNG)."""
    from fringe.render.drawing import number_sheets, save_figure
    from fringe.render.energy import energy_density_sheets

    try:
        out_dir.mkdir(parents=True, exist_ok=True)
    except OSError as e:
        raise FringeIOError(must_be("--maps", "a directory that can be created or written",
                                    f"{out_dir} ({e.strerror or e})")) from None
    sheets = energy_density_sheets(site, magnets, levels)
    number_sheets([fig for _, fig in sheets])  # "k of n" over the maps written together
    return [save_figure(fig, out_dir / f"{stem}.{fmt}")
            for stem, fig in sheets for fmt in (formats or ("png",))]


def _check_maps_folder(maps) -> None:
    """Refuse ``--maps`` naming a file, before any computation."""
    if maps and Path(maps).exists() and not Path(maps).is_dir():
        raise FringeIOError(must_be("--maps", "a folder (the maps are written into it)",
                                    f"{maps} (a file)"))


def _check_numbers(args) -> None:
    """Reject a negative envelope margin or non-positive contour levels."""
    if not (math.isfinite(args.envelope_margin_m) and args.envelope_margin_m >= 0):
        raise ScenarioError(must_be("--envelope-margin-m", "a number >= 0",
                                    args.envelope_margin_m))
    if any(not (math.isfinite(v) and v > 0) for v in args.levels):
        raise ScenarioError(must_be("--levels", "positive numbers (J/m³)", args.levels))


def _site_box(args, magnets) -> tuple[np.ndarray, np.ndarray] | None:
    """The ``--box`` corners, checked to hold each magnet's windings (None without it)."""
    if not args.box:
        return None
    import numpy as np

    from fringe.physics.energy import check_box

    b = np.asarray(args.box, dtype=float)
    if not np.all(np.isfinite(b)) or not np.all(b[:3] < b[3:]):
        raise ScenarioError(must_be("--box", "XMIN YMIN ZMIN XMAX YMAX ZMAX with each min "
                                    "< max", args.box))
    box = (b[:3], b[3:])
    for m in magnets:
        check_box(m, *box, key="--box")
    return box


def _outside_radius(args, magnets) -> dict[str, float]:
    """Energy outside the ``--radius-m`` sphere of each magnet, by name (empty without it)."""
    outside_r: dict[str, float] = {}
    if args.radius_m is None:
        return outside_r
    from fringe.physics.energy import energy_outside_sphere_J

    rad = float(args.radius_m)
    for m in magnets:
        if not (math.isfinite(rad) and rad >= m.enclosing_radius_m):
            raise ScenarioError(must_be(
                "--radius-m", f"a radius of at least {m.enclosing_radius_m:.4g} m (the "
                f"sphere enclosing the windings of {m.name!r})", args.radius_m))
        outside_r[m.name] = energy_outside_sphere_J(m, rad)
    return outside_r


def _print_text(site, results, mutual, total, maps, radius_m, outside_r) -> None:
    """Print the plain text report of the site's energies."""
    from fringe.cli.textfmt import ENERGY_ZERO_REL, clean_zero, format_energy_J

    print(f"site: {site.name}")
    own = max((abs(e.stored_energy_J) for e in results), default=0.0)
    for e in results:
        print(format_magnet(e))
        if e.name in outside_r:
            w_out = outside_r[e.name]
            print(f"  energy outside r = {radius_m:g} m{_energy(w_out)} "
                  f"({100 * w_out / e.stored_energy_J:.3g} % of W; sphere about the "
                  "centre)")
    for a, b, w in mutual:
        w = clean_zero(w, own, ENERGY_ZERO_REL)  # exact zeros by symmetry print as 0
        print(f"interaction energy {a!r} ↔ {b!r}: {format_energy_J(w, 6)}  (flux of one "
              "magnet's field linked by the other's windings)")
    if len(results) > 1:
        print(f"total energy of the site: {format_energy_J(total, 6)}")
    for p in maps:
        print(f"wrote {p}")
    print(ADVISORY_NOTICE)


def run(args) -> int:
    from fringe.cli.main import EXIT_INTERNAL, print_json
    from fringe.io.scenario import load_site
    from fringe.physics.energy import magnet_energy, site_mutual_energies

    _check_maps_folder(args.maps)
    site = load_site(args.scenario)
    if not site.magnets:
        raise ScenarioError("`magnet` must list at least one magnet; got none", args.scenario)
    magnets = [site.magnet(args.magnet)] if args.magnet else list(site.magnets)
    _check_numbers(args)
    box = _site_box(args, magnets)
    outside_r = _outside_radius(args, magnets)
    results = [magnet_energy(m, envelope_margin_m=args.envelope_margin_m, verify=args.verify,
                             box_m=box) for m in magnets]
    mutual = site_mutual_energies(magnets) if len(magnets) > 1 else []
    total = sum(e.stored_energy_J for e in results) + sum(w for *_, w in mutual)
    maps = _write_maps(site, magnets, Path(args.maps), args.levels,
                      getattr(args, "formats", None)) if args.maps else []
    bad = [e.name for e in results if args.verify and not
           abs(e.verify_relative_difference) <= VERIFY_TOLERANCE]
    if args.json:
        print_json({
            "site": site.name,
            "magnets": [{**magnet_record(e), **_radius_record(e, args.radius_m, outside_r)}
                        for e in results],
            "mutual_energies": [{"magnets": [a, b], "interaction_energy_J": w}
                                for a, b, w in mutual],
            "total_energy_J": total,
            "maps": [str(p) for p in maps],
            "advisory": ADVISORY_NOTICE,
        })
    else:
        _print_text(site, results, mutual, total, maps, args.radius_m, outside_r)
    if bad:
        sys.stderr.write(f"fringe: the two energy routes differ by more than "
                         f"{VERIFY_TOLERANCE:.1%} for {', '.join(map(repr, bad))}\n")
        return EXIT_INTERNAL
    return 0
