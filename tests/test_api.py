"""The curated public API: every advertised name resolves (README's Python API table)."""

from __future__ import annotations

import fringe


def test_every_public_name_resolves():
    for name in fringe.__all__:
        assert getattr(fringe, name) is not None, name


def test_readme_lists_the_public_functions():
    from pathlib import Path

    readme = (Path(__file__).resolve().parents[1] / "README.md").read_text("utf-8")
    for name in ("load_site", "field_at", "compute_report", "stored_energy_J",
                 "quench_budget", "fit_magnet", "search_placement", "threshold_extents_m"):
        assert f"fringe.{name}" in readme, name


def test_example_scenarios_load():
    from pathlib import Path

    from fringe import load_site

    folder = Path(__file__).resolve().parents[1] / "scenarios"
    files = sorted(folder.glob("*.toml"))
    assert files
    for f in files:
        site = load_site(f)
        assert site.magnets, f
