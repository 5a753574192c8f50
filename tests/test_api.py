"""The curated public API: every advertised name resolves (README's Python API table)."""

from __future__ import annotations

import importlib

import fringe


def test_every_public_name_is_the_object_its_module_defines():
    """Each name in ``fringe.__all__`` is the very object of the layer module that owns it,
    and every public function or class says what it does."""
    assert set(fringe.__all__) == {"__version__", *fringe._PUBLIC}
    for name, module in fringe._PUBLIC.items():
        obj = getattr(fringe, name)
        assert obj is getattr(importlib.import_module(module), name), name
        if callable(obj):
            assert (obj.__doc__ or "").strip(), f"{name} has no docstring"


def test_unknown_names_are_refused():
    import pytest

    with pytest.raises(AttributeError, match="no attribute 'field_att'"):
        fringe.field_att  # noqa: B018


def test_the_version_is_the_installed_distribution_version():
    """One version number: the package metadata is read from fringe.model.constants."""
    from importlib.metadata import version

    assert fringe.__version__ == version("fringe")


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
