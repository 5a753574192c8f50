"""Output-path problems are refused before any computation, for every command with an output.

Each case replaces the command's computation with a function that fails the test if called
(common practice, no source: a refusal must not cost the user a full run).
"""

from __future__ import annotations

import pytest

from tests.conftest import SMALL_SCENARIO_TOML


def _forbid(*_a, **_k):
    raise AssertionError("computation started before the output path was checked")


@pytest.fixture
def scenario(write_file):
    return write_file(SMALL_SCENARIO_TOML)


@pytest.fixture
def bad_outputs(tmp_path):
    """Output paths a command must refuse: the current folder, an existing file, a folder
    holding other files."""
    (tmp_path / "a-file.txt").write_text("keep me")
    other = tmp_path / "not-ours"
    other.mkdir()
    (other / "thesis.tex").write_text("keep me")
    return {"dot": ".", "file": str(tmp_path / "a-file.txt"), "foreign": str(other)}


@pytest.mark.parametrize("kind", ["dot", "file", "foreign"])
def test_report_refuses_its_folder_before_computing(kind, scenario, bad_outputs, tmp_path,
                                                    monkeypatch, run_cli):
    import fringe.analysis.report as report

    monkeypatch.setattr(report, "compute_report", _forbid)
    monkeypatch.chdir(tmp_path)
    code, out, err = run_cli("report", scenario, "--out", bad_outputs[kind])
    assert code == 2, err
    assert "`--out`" in err and "Traceback" not in err
    assert (tmp_path / "a-file.txt").read_text() == "keep me"
    assert (tmp_path / "not-ours" / "thesis.tex").read_text() == "keep me"


def test_report_dot_refused_at_once_without_loading(scenario, tmp_path, monkeypatch, run_cli):
    import fringe.io.scenario as scenario_io  # the commands import load_site when they run

    monkeypatch.setattr(scenario_io, "load_site", _forbid)
    monkeypatch.chdir(tmp_path)
    code, _out, err = run_cli("report", scenario, "--out", ".")
    assert code == 2 and "`--out` must not" in err, err


def test_place_refuses_its_folder_before_searching(scenario, bad_outputs, tmp_path,
                                                   monkeypatch, run_cli):
    import fringe.analysis.placement as placement

    monkeypatch.setattr(placement, "search_placement", _forbid)
    monkeypatch.chdir(tmp_path)
    code, _out, err = run_cli("place", scenario, "--magnet", "m1",
                              "--region=-3,-3;3,-3;3,3;-3,3", "--out", bad_outputs["foreign"])
    assert code == 2 and "`--out`" in err, err


@pytest.mark.parametrize("target", ["dot", "file_as_dir"])
def test_probe_map_quench_fit_refuse_their_file_before_computing(target, scenario, tmp_path,
                                                                 monkeypatch, run_cli):
    import fringe.io.scenario as scenario_io  # the commands import these when they run
    import fringe.physics.fit as fit

    monkeypatch.setattr(scenario_io, "load_site", _forbid)
    monkeypatch.setattr(fit, "fit_magnet", _forbid)
    monkeypatch.chdir(tmp_path)
    folder = tmp_path / ("x.npy" if target == "file_as_dir" else "unused")
    folder.mkdir()
    for name in ("x.npz", "x.pdf", "x.toml"):
        (tmp_path / name).mkdir()
    cases = [
        ("probe", scenario, "--at", "0", "0", "0", "--out", "." if target == "dot" else "x.npy"),
        ("map", scenario, "--box", "-1", "-1", "0", "1", "1", "2", "--step", "0.5", "--out",
         "./" if target == "dot" else "x.npz"),
        ("quench", scenario, "--pdf", "missing/x.pdf" if target == "dot" else "x.pdf"),
        ("fit", "--center-field-T", "1.5", "--line", "0.5", "4", "2.5", "--out",
         "." if target == "dot" else "x.toml"),
    ]
    for argv in cases:
        code, _out, err = run_cli(*argv)
        assert code == 2, (argv, err)
        assert "Traceback" not in err and ("`--out`" in err or "`--pdf`" in err), (argv, err)


def test_energy_maps_naming_a_file_is_refused_before_loading(scenario, tmp_path, monkeypatch,
                                                             run_cli):
    import fringe.io.scenario as scenario_io  # the command imports load_site when it runs

    monkeypatch.setattr(scenario_io, "load_site", _forbid)
    (tmp_path / "maps").write_text("a file")
    code, _out, err = run_cli("energy", scenario, "--maps", tmp_path / "maps")
    assert code == 2 and "`--maps`" in err, err
