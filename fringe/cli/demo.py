"""``fringe demo``: the full report on the invented demo site shipped with the package."""

from __future__ import annotations

from importlib import resources
from pathlib import Path

from fringe.cli.main import add_formats_option
from fringe.cli.report import run_report, terminal_summary

#: Where ``fringe demo`` writes (relative to the current folder).
DEMO_OUT = "fringe-demo"


def demo_scenario_path() -> Path:
    """Path of the shipped demo scenario (an invented clinic)."""
    return resources.files("fringe") / "data" / "demo_site.toml"


def register(sub) -> None:
    p = sub.add_parser("demo", help="full report on the built-in invented demo site",
                       description="Run `fringe report` on an invented clinic shipped with "
                                   f"the package, writing into ./{DEMO_OUT}/. Always exits 0 "
                                   "(whatever the verdicts) unless something breaks.")
    p.add_argument("--out", default=DEMO_OUT, metavar="DIR",
                   help=f"output folder (default ./{DEMO_OUT}/)")
    p.add_argument("--grid-step-m", type=float, metavar="M", default=None,
                   help="plan grid step in m (default: the demo's 0.1 m)")
    p.add_argument("--no-drawings", action="store_true",
                   help="write only the JSON, GeoJSON and CSV outputs")
    p.add_argument("--quiet", action="store_true", help="no progress messages on stderr")
    add_formats_option(p)
    p.set_defaults(func=run, flags={"formats": "--formats"})


def run(args) -> int:
    with resources.as_file(demo_scenario_path()) as path:
        result = run_report(path, args.out, grid_step_m=getattr(args, "grid_step_m", None),
                            drawings=not getattr(args, "no_drawings", False),
                            quiet=getattr(args, "quiet", False),
                            formats=getattr(args, "formats", None))
    print(terminal_summary(result, args.out))
    return 0
