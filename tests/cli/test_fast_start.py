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
err = io.StringIO()
with contextlib.redirect_stdout(io.StringIO()), contextlib.redirect_stderr(err):
    if argv and argv[0] == "--main":
        codes.append(main(argv[1:]))
    else:
        for args in argv:
            try:
                build_parser().parse_args(args)
            except SystemExit as e:
                codes.append(e.code)
heavy = [m for m in json.loads(sys.argv[2]) if m in sys.modules]
print(json.dumps({"codes": codes, "heavy": heavy, "stderr": err.getvalue()}))
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
                             "place", "disturbance", "survey",
                             "shield"}


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
    r = _run(["--main", "disturbance", "x.toml", "--mass-kg", "1", "--from", "1", "2",
              "--to", "1", "2", "3"])  # --from with 2 numbers
    assert r["codes"] == [2] and r["heavy"] == []
    r = _run(["--main", "map", "x.toml", "--step", "nan-ish"])  # --box missing, bad --step
    assert r["codes"] == [2] and r["heavy"] == []
    r = _run(["--main", "survey", "x.toml"])  # --readings missing
    assert r["codes"] == [2] and r["heavy"] == []


# -- a bad scenario file is reported before the heavy imports -----------------------------

#: Each command that takes a SCENARIO, with its other required arguments.
SCENARIO_COMMANDS = {
    "probe": ["--at", "1", "2", "3"],
    "report": ["--out", "OUT"],
    "quench": [],
    "energy": [],
    "map": ["--box", "0", "1", "0", "1", "0", "1", "--step", "0.5", "--out", "OUT/m.csv"],
    "place": ["--magnet", "a", "--region", "r"],
    "disturbance": ["--mass-kg", "1", "--from", "1", "2", "3", "--to", "1", "2", "4"],
    "survey": ["--readings", "r.csv"],
    "shield": ["--steel", "plate", "--thickness-mm", "2,5"],
}

#: Scenario files the loader refuses before it parses any section.
BAD_SCENARIOS = {
    "missing": None,
    "toml_syntax": b'[site]\nname = "x"\nfield = \n',
    "misspelt_key": b'[site]\nname = "x"\n[[magnets]]\nname = "a"\n',
    "not_utf8": b'[site]\nname = "\xff"\n',
}


def _bad_file(tmp_path: Path, case: str) -> Path:
    f = tmp_path / f"{case}.toml"
    if BAD_SCENARIOS[case] is not None:
        f.write_bytes(BAD_SCENARIOS[case])
    return f


def _loader_message(path: Path) -> str:
    from fringe.io.scenario import load_site
    from fringe.model.errors import ScenarioError

    with pytest.raises(ScenarioError) as e:
        load_site(path)
    return f"fringe: error: {e.value}\n"


def test_every_scenario_command_is_prechecked():
    """The table above lists exactly the commands whose parser takes a SCENARIO."""
    from fringe.cli.main import build_parser

    sub = next(a for a in build_parser()._actions if a.dest == "command")
    taking = {name for name, p in sub.choices.items()
              if any(a.dest == "scenario" for a in p._actions)}
    assert taking == set(SCENARIO_COMMANDS)


@pytest.mark.parametrize("case", sorted(BAD_SCENARIOS))
def test_bad_scenario_exits_2_without_heavy_library(tmp_path, case):
    """Missing file, TOML syntax, misspelt top-level key, bad UTF-8: the loader's message
    and exit code 2 from ``report``, with none of the heavy libraries imported."""
    f = _bad_file(tmp_path, case)
    r = _run(["--main", "report", str(f), "--out", str(tmp_path / "out")])
    assert r["codes"] == [2] and r["heavy"] == []
    assert r["stderr"] == _loader_message(f)


@pytest.mark.parametrize(("case", "says"), [
    ("missing", "cannot read the scenario file: No such file or directory"),
    ("toml_syntax", "not valid TOML: Invalid value (at line 3, column 9)"),
    ("misspelt_key", "`magnets` is not a known key; did you mean `magnet`?"),
    ("not_utf8", "the file must be UTF-8 text; byte 15 is not"),
])
def test_precheck_raises_the_loaders_error(tmp_path, case, says):
    """In one process: the pre-check raises what the full loader raises, naming the file."""
    from fringe.io.scenario_keys import precheck_scenario
    from fringe.model.errors import ScenarioError

    f = _bad_file(tmp_path, case)
    with pytest.raises(ScenarioError) as e:
        precheck_scenario(f)
    assert f"fringe: error: {e.value}\n" == _loader_message(f)
    assert str(e.value) == f"{f}: {says}"


def test_every_scenario_command_prechecks(tmp_path):
    """Every command taking a SCENARIO reports a TOML error without a heavy import."""
    f = _bad_file(tmp_path, "toml_syntax")
    expected = _loader_message(f)
    assert "(at line 3, column 9)" in expected  # the loader's line and column
    for command, rest in SCENARIO_COMMANDS.items():
        rest = [a.replace("OUT", str(tmp_path / "out")) for a in rest]
        r = _run(["--main", command, str(f), *rest])
        assert r == {"codes": [2], "heavy": [], "stderr": expected}, command
