"""``fringe fit``: an equivalent coil model from data-sheet numbers."""

from __future__ import annotations

import sys
import warnings
from typing import TYPE_CHECKING

from fringe.model.constants import ADVISORY_NOTICE
from fringe.model.errors import FringeInputError, FringeWarning, ScenarioError

if TYPE_CHECKING:
    from fringe.physics.fit import FieldLine, FitResult

__all__ = ["register", "run", "magnet_toml"]

_GROUP_NAMES = {"shielded": ("main pair 1", "main pair 2", "main pair 3", "shield pair"),
                "lab": ("main section", "end pair", "shield pair")}


def register(sub) -> None:
    p = sub.add_parser(
        "fit", help="coil model from data-sheet numbers",
        description=("Fit an equivalent coil model to a magnet's data-sheet numbers (centre "
                     "field, shielding, warm bore, how far one field line reaches along and "
                     "across the axis) and print it as a scenario [[magnet]] block. "
                     + ADVISORY_NOTICE))
    p.add_argument("--center-field-T", type=float, required=True, dest="center_field_T",
                   metavar="B", help="field at the isocentre, T")
    p.add_argument("--radial-m", type=float, default=None, dest="radial_m", metavar="R",
                   help="extent of the field line across the axis (centre plane), m")
    p.add_argument("--axial-m", type=float, default=None, dest="axial_m", metavar="A",
                   help="extent of the field line along the axis, m")
    p.add_argument("--threshold-mT", type=float, default=None, dest="threshold_mT",
                   metavar="MT", help="level of that field line, mT (default 0.5)")
    p.add_argument("--line", type=float, nargs=3, action="append", default=[], dest="lines",
                   metavar=("THRESHOLD_mT", "AXIAL_m", "RADIAL_m"),
                   help="one data-sheet field line: its level in mT and how far it reaches "
                        "along and across the axis, m; repeatable; combines with "
                        "--radial-m/--axial-m")
    p.add_argument("--unshielded", action="store_true",
                   help="the magnet has no active shield (default: actively shielded)")
    p.add_argument("--bore-m", type=float, default=None, dest="bore_m", metavar="D",
                   help="warm bore diameter, m (< 0.3 m selects the vertical lab-magnet family)")
    p.add_argument("--out", metavar="FILE", help="also write the [[magnet]] block to FILE")
    p.set_defaults(func=run)


def magnet_toml(result: FitResult) -> str:
    """The fitted magnet as a scenario ``[[magnet]]`` block with ``[[magnet.coil]]`` tables
    (written by :func:`fringe.io.toml_out.magnet_toml`)."""
    from fringe.io import toml_out
    from fringe.physics.families import FAMILIES

    m = result.magnet
    lines_txt = "; ".join(f"{ln.threshold_T * 1e3:g} mT line {ln.axial_m:g} m axial x "
                          f"{ln.radial_m:g} m radial" for ln in result.requested)
    desc = (f"Equivalent coil model fitted to data-sheet numbers ({result.center_field_T:.4g} T; "
            f"{lines_txt}); not the supplier's coils")
    comments = [ADVISORY_NOTICE,
                "Equivalent model fitted to data-sheet numbers by `fringe fit` "
                f"(family {result.family}); only its stray field is meant to match.",
                "Move it with center_m and axis (the bore axis)."]
    names = _GROUP_NAMES["lab" if FAMILIES[result.family].lab else "shielded"]
    coil_notes = [f"{names[i // 2] if i // 2 < len(names) else f'coil pair {i // 2 + 1}'}, "
                  f"{'+' if c.z_max_m > 0 else '-'}z half" for i, c in enumerate(m.coils)]
    return toml_out.magnet_toml(m, description=desc, comments=comments,
                                coil_comments=coil_notes, position_digits=9, coil_digits=9)


def summary_text(result: FitResult) -> str:
    """Achieved extents, residuals, moments and warnings as comment lines."""
    out = [f"# fitted family: {result.family}; centre field {result.center_field_T:.6g} T",
           "# line      requested axial x radial (m)   achieved axial x radial (m)   "
           "error axial / radial"]
    for req, ach, (ea, er) in zip(result.requested, result.achieved, result.residuals,
                                  strict=True):
        out.append(f"# {req.threshold_T * 1e3:5g} mT   {req.axial_m:8.3f} x {req.radial_m:7.3f}"
                   f"            {ach.axial_m:8.3f} x {ach.radial_m:7.3f}"
                   f"           {ea * 100:+6.2f} % / {er * 100:+6.2f} %")
    q = result.moments_Am
    out.append(f"# dipole moment q1 = {q[1]:.4g} A·m²; q3 = {q[3]:.4g} A·m⁴; "
               f"q5 = {q[5]:.4g} A·m⁶ (exterior zonal moments)")
    turns = sum(c.turns for c in result.magnet.coils)
    cur = max(abs(c.current_A) for c in result.magnet.coils)
    jmax = max(abs(c.current_density_A_per_m2) for c in result.magnet.coils)
    out.append(f"# {len(result.magnet.coils)} coils, {turns:.0f} turns at {cur:.4g} A; "
               f"largest winding current density {jmax:.3g} A/m²")
    for n in result.notes:
        out.append(f"# NOTE: {n.replace('`bore_m`', '`--bore-m`')}")
    for w in result.warnings:
        out.append(f"# WARNING: {w}")
    return "\n".join(out) + "\n"


def _positive(flag: str, v: float) -> None:
    if not (v > 0 and v < float("inf")):
        raise ScenarioError(f"`{flag}` must be a positive number; got {v!r}")


def field_lines(args) -> list[FieldLine]:
    """The requested field lines: one from ``--radial-m/--axial-m[/--threshold-mT]``, then
    every ``--line THRESHOLD_mT AXIAL_m RADIAL_m``, checked (ScenarioError names the option)."""
    from fringe.physics.fit import FieldLine

    out = []
    single = (args.radial_m, args.axial_m)
    if any(v is not None for v in single) or args.threshold_mT is not None:
        if None in single:
            raise ScenarioError("`--radial-m` and `--axial-m` go together (one field line; "
                                "`--threshold-mT` gives its level); or give `--line "
                                "THRESHOLD_mT AXIAL_m RADIAL_m`")
        thr = 0.5 if args.threshold_mT is None else args.threshold_mT
        for flag, v in (("--radial-m", args.radial_m), ("--axial-m", args.axial_m),
                        ("--threshold-mT", thr)):
            _positive(flag, v)
        if thr * 1e-3 >= args.center_field_T:
            raise ScenarioError(f"`--threshold-mT` must be below the centre field "
                                f"({args.center_field_T * 1e3:g} mT); got {thr!r}")
        out.append(FieldLine(thr * 1e-3, args.axial_m, args.radial_m))
    for i, (thr, ax, rad) in enumerate(args.lines):
        for what, v in (("THRESHOLD_mT", thr), ("AXIAL_m", ax), ("RADIAL_m", rad)):
            _positive(f"--line` #{i + 1} `{what}", v)
        if thr * 1e-3 >= args.center_field_T:
            raise ScenarioError(f"`--line` #{i + 1}: THRESHOLD_mT must be below the centre "
                                f"field ({args.center_field_T * 1e3:g} mT); got {thr!r}")
        out.append(FieldLine(thr * 1e-3, ax, rad))
    if not out:
        raise ScenarioError("give at least one field line: `--radial-m R --axial-m A` "
                            "(with `--threshold-mT`, default 0.5) or `--line THRESHOLD_mT "
                            "AXIAL_m RADIAL_m` (repeatable)")
    levels = [ln.threshold_T for ln in out]
    if len(set(levels)) != len(levels):
        raise ScenarioError("each field line needs its own level: two lines share "
                            "THRESHOLD_mT (check `--line` and `--threshold-mT`)")
    return out


def run(args) -> int:
    from fringe.io.atomic import check_output_file, write_text_atomic
    from fringe.physics.fit import MAX_CENTER_FIELD_T, fit_magnet

    _positive("--center-field-T", args.center_field_T)
    if args.center_field_T > MAX_CENTER_FIELD_T:
        raise ScenarioError(f"`--center-field-T` must be at most {MAX_CENTER_FIELD_T:g} T (no "
                            f"magnet family here reaches beyond); got {args.center_field_T!r}")
    if args.bore_m is not None and not (0 < args.bore_m < float("inf")):
        raise ScenarioError(f"`--bore-m` must be a positive number; got {args.bore_m!r}")
    lines = field_lines(args)
    if args.out:
        check_output_file(args.out, name="--out")
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", FringeWarning)  # printed below from the result
            res = fit_magnet(args.center_field_T, lines, shielded=not args.unshielded,
                             bore_m=args.bore_m)
    except FringeInputError as e:
        raise ScenarioError(str(e)) from None
    block = magnet_toml(res)
    sys.stdout.write(block)
    sys.stdout.write("\n" + summary_text(res))
    if args.out:
        write_text_atomic(args.out, block)
        sys.stdout.write(f"# written to {args.out}\n")
    for n in res.notes:
        sys.stderr.write(f"fringe: note: {n.replace('`bore_m`', '`--bore-m`')}\n")
    for w in res.warnings:
        sys.stderr.write(f"fringe: warning: {w}\n")
    return 0
