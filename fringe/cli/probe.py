"""``fringe probe``: the field at chosen points."""

from __future__ import annotations

import sys
from pathlib import Path
from typing import TYPE_CHECKING

from fringe.model.constants import ADVISORY_NOTICE, FIELD_BASIS_NOTE
from fringe.model.errors import ScenarioError

if TYPE_CHECKING:
    import numpy as np


def register(sub) -> None:
    p = sub.add_parser("probe", help="field at points",
                       description="B at points of a scenario's site. " + ADVISORY_NOTICE)
    p.add_argument("scenario", help="scenario TOML file")
    p.add_argument("--at", nargs=3, type=float, action="append", metavar=("X", "Y", "Z"),
                   default=[], help="a point in the site frame, m (repeatable)")
    p.add_argument("--points", metavar="FILE", help="many points: .npy (N,3) or .csv x,y,z in m")
    p.add_argument("--json", action="store_true", help="print JSON instead of a table")
    p.add_argument("--out", metavar="FILE", help="write the (N,3) field in T to .npy or .csv")
    p.set_defaults(func=run)


def field_table_rows(points_m: np.ndarray, B_T: np.ndarray,
                     grad_abs_B: np.ndarray | None = None) -> list[dict]:
    """Per-point records in the JSON form of ``fringe probe --json``.

    With ``grad_abs_B`` (N, 3) in T/m each record also gives ``grad_abs_B_T_per_m``
    (|∇|B||) and ``force_product_T2_per_m`` (|B|·|∇|B||); null where |B| = 0.
    """
    import numpy as np

    from fringe.field.evaluate import energy_density_J_per_m3

    b_abs = np.linalg.norm(B_T, axis=1)
    u = energy_density_J_per_m3(B_T)
    rows = [{"point_m": p.tolist(), "B_T": b.tolist(), "B_abs_T": float(a),
             "energy_density_J_per_m3": float(e)} for p, b, a, e in zip(points_m, B_T, b_abs, u,
                                                                        strict=True)]
    if grad_abs_B is not None:
        g = np.linalg.norm(grad_abs_B, axis=1)
        for row, gi, a in zip(rows, g, b_abs, strict=True):
            row["grad_abs_B_T_per_m"] = float(gi)
            row["force_product_T2_per_m"] = float(a * gi)
    return rows


def format_table(points_m: np.ndarray, B_T: np.ndarray) -> str:
    """A plain text table of points, |B| (mT and T), components (mT) and energy density.

    Components below :data:`fringe.cli.textfmt.FIELD_ZERO_REL` of |B| (rounding noise of an
    exact zero, e.g. B_x on the axis) print as 0; the JSON keeps every digit.
    """
    import numpy as np

    from fringe.cli.textfmt import FIELD_ZERO_REL
    from fringe.field.evaluate import energy_density_J_per_m3

    b_abs = np.linalg.norm(B_T, axis=1)
    u = energy_density_J_per_m3(B_T)
    head = (f"{'x_m':>8} {'y_m':>8} {'z_m':>8} | {'|B|_mT':>12} {'|B|_T':>11} | "
            f"{'Bx_mT':>11} {'By_mT':>11} {'Bz_mT':>11} | {'u_J/m3':>11}")
    lines = [head, "-" * len(head)]
    for p, b, a, e in zip(points_m, B_T, b_abs, u, strict=True):
        b = np.where(np.abs(b) <= FIELD_ZERO_REL * a, 0.0, b) + 0.0  # + 0.0: no "-0"
        lines.append(f"{p[0]:8.3f} {p[1]:8.3f} {p[2]:8.3f} | {a * 1e3:12.5g} {a:11.4e} | "
                     f"{b[0] * 1e3:11.4g} {b[1] * 1e3:11.4g} {b[2] * 1e3:11.4g} | {e:11.4e}")
    return "\n".join(lines)


def run(args) -> int:
    import numpy as np

    from fringe.analysis.steel import with_solved_steel
    from fringe.cli.main import print_json, read_points_file
    from fringe.field.evaluate import (
        coordinate_range_problem,
        field_at,
        field_gradient_at,
        grad_abs_B_T_per_m,
    )
    from fringe.io.atomic import atomic_file, check_output_file
    from fringe.io.scenario import load_site

    if args.out:  # before any computation
        if Path(args.out).suffix.lower() not in (".npy", ".csv"):
            raise ScenarioError(f"`--out` must end in .npy or .csv; got {Path(args.out).name!r}")
        check_output_file(args.out, name="--out")
    site = load_site(args.scenario)
    pts = [np.asarray(args.at, dtype=float).reshape(-1, 3)]
    if args.points:
        pts.append(read_points_file(args.points))
    points = np.concatenate(pts)
    if len(points) == 0:
        raise ScenarioError("`--at` or `--points` must give at least one point; got none")
    if not np.all(np.isfinite(points)):
        raise ScenarioError("`--at` must be finite numbers; got NaN or inf")
    if problem := coordinate_range_problem(points, "--at"):  # --points was checked on reading
        raise ScenarioError(problem)
    if not site.magnets:
        raise ScenarioError("`magnet` must list at least one magnet; got none", args.scenario)
    site = with_solved_steel(site)[0]  # its steel counts, if any
    inside = np.empty(len(points), dtype=bool)
    B = field_at(site, points, inside=inside)  # the winding check comes with the bands
    if inside.any():
        n_in = int(inside.sum())
        sys.stderr.write(f"fringe: warning: {n_in} {'point lies' if n_in == 1 else 'points lie'} "
                         "inside a winding; "
                         "the field there is a quadrature estimate of lower accuracy\n")
    if args.out:
        out = Path(args.out)
        suffix = out.suffix.lower()
        if suffix not in (".npy", ".csv"):
            raise ScenarioError(f"`--out` must end in .npy or .csv; got {out.name!r}")
        with atomic_file(out) as tmp:
            if suffix == ".npy":
                with open(tmp, "wb") as fh:
                    np.save(fh, B)
            else:
                np.savetxt(tmp, B, delimiter=",", header="Bx_T,By_T,Bz_T", comments="")
        sys.stderr.write(f"wrote {len(B)} field vectors (T) to {out}\n")
        return 0
    if args.json:
        _, jac = field_gradient_at(site, points)  # analytic on the fast path (docs/implants.md)
        print_json({"points": field_table_rows(points, B, grad_abs_B_T_per_m(B, jac)),
                    "field_basis": FIELD_BASIS_NOTE, "advisory": ADVISORY_NOTICE})
    else:
        print(f"site: {site.name}")
        print(format_table(points, B))
        print(FIELD_BASIS_NOTE)
        print(ADVISORY_NOTICE)
    return 0
