"""Shared fixtures."""

from __future__ import annotations

from importlib import resources

import pytest


@pytest.fixture(scope="session")
def demo_site():
    """The invented demo site shipped with the package."""
    from fringe.scenario import load_site

    with resources.as_file(resources.files("fringe") / "data" / "demo_site.toml") as p:
        return load_site(p)
