"""``fringe demo``: run fringe on the invented demo site shipped with the package."""

from __future__ import annotations

from importlib import resources

import numpy as np

from .cmd_probe import format_table
from .constants import ADVISORY_NOTICE
from .field import field_at
from .scenario import load_site


def demo_scenario_path():
    """Path of the shipped demo scenario (an invented clinic)."""
    return resources.files("fringe") / "data" / "demo_site.toml"


def register(sub) -> None:
    p = sub.add_parser("demo", help="run on the built-in invented demo site")
    p.set_defaults(func=run)


def run(args) -> int:
    with resources.as_file(demo_scenario_path()) as path:
        site = load_site(path)
    m = site.magnets[0]
    c = np.asarray(m.center_m)
    ax = np.asarray(m.axis)
    perp = np.cross(ax, [0, 0, 1.0])
    pts = np.array([c] + [c + ax * d for d in (1, 2, 3, 4, 5)]
                   + [c + perp * d for d in (1, 2, 3, 4)])
    print(f"demo site: {site.name}\nmagnet: {m.name} (centre, then along and across the axis)")
    print(format_table(pts, field_at(site, pts)))
    print(ADVISORY_NOTICE)
    return 0
