"""The command line parses arguments and reports usage errors without the heavy libraries.

``fringe --help``, ``fringe COMMAND --help`` and a usage error must not wait for numpy,
scipy, matplotlib, shapely, magpylib, CoolProp or ezdxf (issue 20: help within 0.2 s;
common practice, no source). Each check runs in a fresh interpreter, where nothing has
been imported yet; no wall-clock time is asserted (the machine may be busy).
"""

from __future__ import annotations

import json
import os
import subprocess
import sys
from pathlib import Path

import pytest

from fringe.cli.main import COMMAND_MODULES

HEAVY = ("numpy", "scipy", "matplotlib", "shapely", "magpylib", "CoolProp", "ezdxf",
         "magpylib_material_response", "fmm3dpy", "numba")
COMMANDS = tuple(name.rsplit(".", 1)[1] for name in COMMAND_MODULES)
ROOT = Path(__file__).resolve().parents[2]

_SCRIPT = """
import contextlib, io, json, sys
from fringe.cli.main import build_parser, main
argv = json.loads(sys.argv[1])
codes = []
with contextlib.redirect_stdout(io.StringIO()), contextlib.redirect_stderr(io.StringIO()):
    if argv and argv[0] == "--main":
        codes.append(main(argv[1:]))
    else:
        for args in argv:
            try:
                build_parser().parse_args(args)
            except SystemExit as e:
                codes.append(e.code)
heavy = [m for m in json.loads(sys.argv[2]) if m in sys.modules]
print(json.dumps({"codes": codes, "heavy": heavy}))
"""


def _run(argv: list) -> dict:
    env = dict(os.environ)
    env["PYTHONPATH"] = str(ROOT) + os.pathsep + env.get("PYTHONPATH", "")
    out = subprocess.run([sys.executable, "-c", _SCRIPT, json.dumps(argv),
                          json.dumps(HEAVY)], env=env,
                         capture_output=True, text=True, check=True, cwd=ROOT)
    return json.loads(out.stdout.strip().splitlines()[-1])


def test_every_command_is_checked():
    assert set(COMMANDS) == {"probe", "demo", "report", "quench", "energy", "map", "fit",
                             "place", "shield"}


def test_help_imports_no_heavy_library():
    r = _run([["--help"]] + [[c, "--help"] for c in COMMANDS])
    assert r["codes"] == [0] * (1 + len(COMMANDS))
    assert r["heavy"] == []


@pytest.mark.parametrize("command", COMMANDS)
def test_command_help_alone_imports_no_heavy_library(command):
    r = _run([[command, "--help"]])
    assert r["codes"] == [0] and r["heavy"] == []


def test_usage_error_exits_2_without_heavy_library():
    r = _run(["--main", "probe"])  # no scenario
    assert r["codes"] == [2] and r["heavy"] == []
    r = _run(["--main", "map", "x.toml", "--step", "nan-ish"])  # --box missing, bad --step
    assert r["codes"] == [2] and r["heavy"] == []
