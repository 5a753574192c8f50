"""Bad command-line input and the warnings a user needs (``fringe probe``, top level).

Bad arguments and bad points files exit with 2 and one ``fringe: error:`` line naming
the option; the previous output file survives. Two runs go through a real subprocess
(``python -m fringe.cli`` and the ``fringe`` console script) to prove that no traceback
reaches a user's terminal.
"""

from __future__ import annotations

import os
import shutil
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest

from fringe.model.errors import FringeWarning
from tests.conftest import SMALL_SCENARIO_TOML

OLD_OUTPUT = b"previous results\n"


@pytest.fixture
def scenario(write_file):
    return write_file(SMALL_SCENARIO_TOML, "good.toml")


@pytest.fixture
def old_out(tmp_path):
    out = tmp_path / "out" / "field.npy"
    out.parent.mkdir()
    out.write_bytes(OLD_OUTPUT)
    return out


def _points_files(tmp: Path) -> dict[str, Path]:
    """Bad points files, written with numpy itself (so each is what it claims to be)."""
    files = {}

    def save(name, arr, **kw):
        np.save(tmp / name, arr, **kw)
        files[name] = tmp / name

    def text(name, content: bytes):
        (tmp / name).write_bytes(content)
        files[name] = tmp / name

    save("two_columns.npy", np.zeros((4, 2)))
    save("nan.npy", np.array([[0.0, np.nan, 1.0]]))
    save("strings.npy", np.array([["a", "b", "c"]]))
    save("complex.npy", np.ones((2, 3), dtype=complex))
    save("objects.npy", np.array([{"x": 1}], dtype=object), allow_pickle=True)
    save("flat.npy", np.zeros(3))
    save("far.npy", np.array([[0.0, 0.0, 1.0], [1e200, 0.0, 0.0]]))
    np.savez(tmp / "archive.npz", a=np.ones((2, 3)))
    (tmp / "archive.npz").rename(tmp / "zip_inside.npy")
    files["zip_inside.npy"] = tmp / "zip_inside.npy"
    text("empty.npy", b"")
    text("garbage.npy", b"not a numpy file at all")
    text("empty.csv", b"")
    text("header_only.csv", b"x,y,z\n")
    text("ragged.csv", b"1,2,3\n4,5\n")
    text("words.csv", b"x,y,z\none,two,three\n")
    text("inf.csv", b"1,2,inf\n")
    text("latin1.csv", b"\xe9,1,2\n")
    text("points.txt", b"1,2,3\n")
    return files


POINTS_CASES = [
    ("two_columns.npy", "must have 3 columns"),
    ("nan.npy", "must be finite"),
    ("strings.npy", "must hold real numbers"),
    ("complex.npy", "must hold real numbers"),
    ("objects.npy", "must hold numbers"),
    ("flat.npy", "must have 3 columns"),
    ("zip_inside.npy", "must hold real numbers"),
    ("far.npy", "got a coordinate of 1e+200 m"),
    ("empty.npy", "must hold numbers"),
    ("garbage.npy", "must hold numbers"),
    ("empty.csv", "at least one row"),
    ("header_only.csv", "at least one row"),
    ("ragged.csv", "`--points`"),
    ("words.csv", "must hold numbers"),
    ("inf.csv", "must be finite"),
    ("latin1.csv", "must hold numbers"),
    ("points.txt", "must be a .npy or .csv file"),
    ("missing.csv", "cannot read the points file"),
]


@pytest.mark.parametrize("name,expected", POINTS_CASES, ids=[c[0] for c in POINTS_CASES])
def test_bad_points_file(name, expected, tmp_path, scenario, old_out, run_cli):
    files = _points_files(tmp_path)
    path = files.get(name, tmp_path / name)
    before = sorted(os.listdir(old_out.parent))
    code, out, err = run_cli("probe", scenario, "--points", path, "--out", old_out)
    assert code == 2, err
    assert "Traceback" not in err and out == ""
    assert err.startswith("fringe: error: ") and err.count("\n") == 1, err
    assert "`--points`" in err or "points file" in err
    assert expected in err, err
    assert name in err  # the file is named
    assert old_out.read_bytes() == OLD_OUTPUT
    assert sorted(os.listdir(old_out.parent)) == before


ARG_CASES = [
    (["--at", "nan", "0", "0"], "`--at` must be finite"),
    (["--at", "inf", "0", "0"], "`--at` must be finite"),
    ([], "`--at` or `--points` must give at least one point"),
    (["--at", "1", "0", "0", "--out", "{tmp}/field.txt"], "`--out` must end in .npy or .csv"),
    (["--at", "1", "0", "0", "--out", "{tmp}/no/such/folder/field.npy"], "does not exist"),
    (["--at", "1", "0", "0", "--out", "{tmp}/out"], "`--out` must end in .npy or .csv"),
    (["--at", "1", "0", "0", "--out", "{tmp}/adir.npy"], "is a folder"),
]


@pytest.mark.parametrize("argv,expected", ARG_CASES, ids=[
    "at-nan", "at-inf", "no-points", "out-suffix", "out-no-folder", "out-is-folder-name",
    "out-is-folder"])
def test_bad_probe_arguments(argv, expected, tmp_path, scenario, old_out, run_cli):
    (tmp_path / "adir.npy").mkdir()
    before = sorted(os.listdir(old_out.parent))
    code, out, err = run_cli("probe", scenario, *[a.format(tmp=tmp_path) for a in argv])
    assert code == 2, err
    assert "Traceback" not in err and out == ""
    assert expected in err, err
    assert old_out.read_bytes() == OLD_OUTPUT
    assert sorted(os.listdir(old_out.parent)) == before
    assert (tmp_path / "adir.npy").is_dir() and not any((tmp_path / "adir.npy").iterdir())


@pytest.mark.parametrize("argv,expected", [
    (["probe", "{scen}", "--at", "1", "2"], "expected 3 argument"),
    (["probe", "{scen}", "--at", "x", "0", "0"], "invalid float value"),
    (["probe"], "required"),
    (["probe", "{scen}", "--frobnicate"], "unrecognized arguments"),
    (["no-such-command"], "invalid choice"),
    ([], None),
])
def test_argparse_errors_exit_2(argv, expected, scenario, run_cli):
    code, out, err = run_cli(*[a.format(scen=scenario) for a in argv])
    assert code == 2
    assert "Traceback" not in err
    if expected is not None:
        assert expected in err and "fringe: error: " in err, err
    else:
        assert "usage" in out.lower()  # no command: the help, and a non-zero exit


def test_version_exits_0(run_cli):
    import fringe

    code, out, err = run_cli("--version")
    assert code == 0 and fringe.__version__ in out


# -- warnings a user needs -------------------------------------------------------------

def test_points_inside_a_winding_warn_with_count(scenario, run_cli):
    # magnet centre (0, 0, 1), winding 0.30 ≤ ρ ≤ 0.32, |z| ≤ 0.2: two points inside it
    code, out, err = run_cli("probe", scenario, "--at", 0.31, 0, 1.0, "--at", 0, -0.305, 1.1,
                             "--at", 2, 0, 1, "--json")
    assert code == 0, err
    assert "fringe: warning: 2 points lie inside a winding" in err


def test_points_outside_windings_do_not_warn(scenario, run_cli):
    code, out, err = run_cli("probe", scenario, "--at", 0.29, 0, 1.0, "--at", 0.33, 0, 1.0,
                             "--at", 0.31, 0, 1.21, "--json")
    assert code == 0 and err == "", err


def test_implausible_centre_field_warns_with_the_number(write_file, run_cli):
    from fringe.field.evaluate import field_at
    from fringe.io.scenario import load_site

    text = SMALL_SCENARIO_TOML.replace("current_A = 100.0", "current_A = 100000.0")
    scen = write_file(text, "strong.toml")
    code, out, err = run_cli("probe", scen, "--at", 3, 0, 1)
    assert code == 0, err  # a warning, not a refusal: the user may mean it
    with pytest.warns(FringeWarning, match="centre field of 170.3 T"):  # library route too
        site = load_site(scen)
    b0 = float(np.linalg.norm(field_at(site, [0.0, 0.0, 1.0])))
    # consistency: the number printed is the engine's centre field to the 4 digits shown
    assert f"centre field of {b0:.4g} T" in err, (b0, err)
    assert "strong.toml" in err and "`magnet[0]`" in err and "current_A" in err
    assert err.count("fringe: warning:") == 1


def test_plausible_centre_field_is_quiet(scenario, run_cli):
    code, out, err = run_cli("probe", scenario, "--at", 3, 0, 1)
    assert code == 0 and "warning" not in err


# -- real processes: nothing but our one line reaches the terminal ----------------------

def _fringe_script() -> str | None:
    here = Path(sys.executable).parent / "fringe"
    return str(here) if here.exists() else shutil.which("fringe")


@pytest.mark.parametrize("how", ["module", "script"])
def test_subprocess_bad_input_has_no_traceback(how, tmp_path, write_file):
    scen = write_file(SMALL_SCENARIO_TOML.replace("current_A =", "curent_A ="), "typo.toml")
    out = tmp_path / "field.npy"
    out.write_bytes(OLD_OUTPUT)
    if how == "module":
        cmd = [sys.executable, "-m", "fringe.cli"]
    else:
        script = _fringe_script()
        if script is None:
            pytest.skip("the fringe console script is not installed")
        cmd = [script]
    env = {k: v for k, v in os.environ.items() if k != "FRINGE_DEBUG"}
    res = subprocess.run(cmd + ["probe", str(scen), "--at", "1", "0", "0", "--out", str(out)],
                         capture_output=True, text=True, timeout=120, env=env)
    assert res.returncode == 2, res.stderr
    assert "Traceback" not in res.stderr and res.stdout == ""
    assert res.stderr.strip().splitlines() == [res.stderr.strip()]  # exactly one line
    assert "did you mean `magnet[0].coil[0].current_A`" in res.stderr
    assert out.read_bytes() == OLD_OUTPUT


def test_points_on_winding_surfaces_edges_and_corners_are_finite(scenario, run_cli):
    """The sheet kernel is singular on its own edges; probing exactly there must still give
    finite numbers (the winding is 0.30 ≤ ρ ≤ 0.32 m, |z − 1| ≤ 0.2 m)."""
    import json

    surface = [(0.30, 0, 1.0), (0.32, 0, 1.0), (0.31, 0, 1.2), (0, 0.30, 0.8), (0.32, 0, 1.2),
               (0.30, 0, 0.8)]
    argv = [a for p in surface for a in ("--at", *p)]
    code, out, err = run_cli("probe", scenario, *argv, "--json")
    assert code == 0, err
    b = [row["B_abs_T"] for row in json.loads(out)["points"]]
    assert all(v is not None and 0 < v < 1.0 for v in b), b  # JSON null would mean NaN/inf
    assert f"{len(surface)} points lie inside a winding" in err  # boundaries count as inside
    # continuity: a nudge of 1 nm changes |B| by far less than 1 % (common practice)
    nudged = [a for p in surface for a in ("--at", p[0] + 1e-9, p[1] + 1e-9, p[2] + 1e-9)]
    code, out2, _ = run_cli("probe", scenario, *nudged, "--json")
    b2 = [row["B_abs_T"] for row in json.loads(out2)["points"]]
    assert all(abs(x - y) <= 1e-2 * x for x, y in zip(b, b2, strict=True)), (b, b2)
