"""Shared fixtures."""

from __future__ import annotations

import os
from importlib import resources

import pytest
from hypothesis import settings

# CI (CI=true) replays the same examples every run, so a red build always means a real
# regression that reproduces; local runs keep exploring new random examples.
settings.register_profile("ci", derandomize=True, print_blob=True)
if os.environ.get("CI"):
    settings.load_profile("ci")


@pytest.fixture(scope="session", autouse=True)
def model_disk_cache():
    """The disk store of fast field models, as the command line and the public API install it."""
    from fringe.io.model_cache import install

    install()


@pytest.fixture(scope="session")
def demo_site():
    """The invented demo site shipped with the package."""
    from fringe.io.scenario import load_site

    with resources.as_file(resources.files("fringe") / "data" / "demo_site.toml") as p:
        return load_site(p)


#: A small invented magnet (one solenoid coil, ≈ 0.17 T at its centre): cheap to evaluate.
SMALL_SCENARIO_TOML = """\
[site]
name = "small test site (invented)"

[[magnet]]
name = "m1"
center_m = [0.0, 0.0, 1.0]
axis = [0, 0, 1]
  [[magnet.coil]]
  r_inner_m = 0.30
  r_outer_m = 0.32
  z_min_m = -0.20
  z_max_m = 0.20
  turns = 1000
  current_A = 100.0
"""


@pytest.fixture
def write_file(tmp_path):
    """``write_file(content, name="scenario.toml")`` → Path; str is written as UTF-8."""

    def write(content: str | bytes, name: str = "scenario.toml"):
        p = tmp_path / name
        p.write_bytes(content.encode("utf-8") if isinstance(content, str) else content)
        return p

    return write


@pytest.fixture
def run_cli(capsys):
    """``run_cli(*argv)`` → (exit code, stdout, stderr) of ``fringe.cli.main.main``."""
    from fringe.cli.main import main

    def run(*argv) -> tuple[int, str, str]:
        code = main([str(a) for a in argv])
        out, err = capsys.readouterr()
        return code, out, err

    return run
