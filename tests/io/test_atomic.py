"""Atomic outputs: a failed or killed run never damages the previous results.

In-process: an exception inside :func:`fringe.io.atomic.atomic_file` /
:func:`fringe.io.atomic.atomic_directory` leaves the old file/folder byte for byte and no
temporary left behind. Out of process: a writer killed with SIGKILL (no clean-up code
runs at all) mid-write leaves the old results intact; the real ``fringe probe`` killed
while writing its output, or interrupted with Ctrl-C (SIGINT), does too.
"""

from __future__ import annotations

import os
import signal
import subprocess
import sys
import time
from importlib import resources
from pathlib import Path

import numpy as np
import pytest

from fringe.io.atomic import atomic_directory, atomic_file, write_text_atomic
from fringe.model.errors import FringeIOError

OLD = b"old results, complete\n"


def _snapshot(folder: Path) -> dict[str, bytes]:
    """Every file under ``folder`` (relative name → bytes)."""
    return {str(p.relative_to(folder)): p.read_bytes()
            for p in sorted(folder.rglob("*")) if p.is_file()}


# -- in-process ----------------------------------------------------------------------

def test_atomic_file_exception_keeps_old_file(tmp_path):
    target = tmp_path / "result.csv"
    target.write_bytes(OLD)
    with pytest.raises(RuntimeError, match="boom"), atomic_file(target) as tmp:
        assert tmp.parent == tmp_path and tmp.suffix == ".csv" and tmp != target
        tmp.write_bytes(b"half")
        raise RuntimeError("boom")
    assert target.read_bytes() == OLD
    assert os.listdir(tmp_path) == ["result.csv"]  # the temporary is gone


def test_atomic_file_keyboard_interrupt_keeps_old_file(tmp_path):
    target = tmp_path / "result.npy"
    target.write_bytes(OLD)
    with pytest.raises(KeyboardInterrupt), atomic_file(target) as tmp:
        tmp.write_bytes(b"half")
        raise KeyboardInterrupt
    assert target.read_bytes() == OLD and os.listdir(tmp_path) == ["result.npy"]


def test_atomic_file_success_replaces_with_plain_mode(tmp_path):
    target = tmp_path / "result.txt"
    target.write_bytes(OLD)
    write_text_atomic(target, "new ✓")
    assert target.read_text(encoding="utf-8") == "new ✓"
    assert os.listdir(tmp_path) == ["result.txt"]
    mask = os.umask(0)
    os.umask(mask)
    assert target.stat().st_mode & 0o777 == 0o666 & ~mask  # as open(path, "w") would give


def test_atomic_file_refuses_folder_and_missing_parent(tmp_path):
    (tmp_path / "taken.npy").mkdir()
    with pytest.raises(FringeIOError, match="is a folder"), atomic_file(tmp_path / "taken.npy"):
        pass
    with pytest.raises(FringeIOError, match="does not exist"), \
            atomic_file(tmp_path / "nope" / "x.npy"):
        pass
    assert sorted(os.listdir(tmp_path)) == ["taken.npy"]


def _old_folder(tmp_path: Path) -> Path:
    out = tmp_path / "report"
    (out / "sub").mkdir(parents=True)
    (out / "summary.json").write_bytes(OLD)
    (out / "sub" / "plan.svg").write_bytes(b"<svg/>")
    return out


def test_atomic_directory_exception_keeps_old_folder(tmp_path):
    out = _old_folder(tmp_path)
    before = _snapshot(out)
    with pytest.raises(ValueError), atomic_directory(out) as tmp:
        (tmp / "summary.json").write_text("half")
        raise ValueError("drawing failed")
    assert _snapshot(out) == before
    assert sorted(os.listdir(tmp_path)) == ["report"]  # no .partial folder left


def test_atomic_directory_success_replaces_whole(tmp_path):
    out = _old_folder(tmp_path)
    with atomic_directory(out) as tmp:
        (tmp / "summary.json").write_text("new")
    assert _snapshot(out) == {"summary.json": b"new"}  # stale files do not linger
    assert sorted(os.listdir(tmp_path)) == ["report"]


def test_atomic_directory_failed_swap_puts_old_back(tmp_path, monkeypatch):
    """If renaming the new folder in fails, the old one is moved back before the error."""
    import fringe.io.atomic as atomic

    out = _old_folder(tmp_path)
    before = _snapshot(out)
    real = os.replace
    calls = []

    def flaky(src, dst):
        calls.append((src, dst))
        if ".partial." in str(src):
            raise OSError(28, "No space left on device")
        return real(src, dst)

    monkeypatch.setattr(atomic.os, "replace", flaky)
    with pytest.raises(FringeIOError, match="No space left"), atomic_directory(out) as tmp:
        (tmp / "summary.json").write_text("new")
    monkeypatch.undo()
    assert _snapshot(out) == before
    assert sorted(os.listdir(tmp_path)) == ["report"]
    assert len(calls) == 3  # aside, (failed) in, back


def test_atomic_directory_refuses_a_file(tmp_path):
    (tmp_path / "report").write_bytes(OLD)
    with pytest.raises(FringeIOError, match="not a folder"), atomic_directory(tmp_path / "report"):
        pass
    assert (tmp_path / "report").read_bytes() == OLD


# -- SIGKILL: no Python clean-up runs at all ------------------------------------------

_WRITER = r"""
import sys, time
from pathlib import Path
from fringe.io.atomic import atomic_directory, atomic_file
mode, target = sys.argv[1], Path(sys.argv[2])
if mode == "file":
    with atomic_file(target) as tmp, open(tmp, "wb") as fh:
        fh.write(b"NEW, PARTIAL")
        fh.flush()
        print("writing", flush=True)
        time.sleep(120)
else:
    with atomic_directory(target) as tmp:
        (tmp / "summary.json").write_text("NEW, PARTIAL")
        print("writing", flush=True)
        time.sleep(120)
"""


@pytest.mark.parametrize("mode", ["file", "folder"])
def test_sigkill_mid_write_keeps_previous_results(mode, tmp_path):
    if mode == "file":
        target = tmp_path / "field.csv"
        target.write_bytes(OLD)
        before = {"field.csv": OLD}
    else:
        target = _old_folder(tmp_path)
        before = _snapshot(target)
    proc = subprocess.Popen([sys.executable, "-c", _WRITER, mode, str(target)],
                            stdout=subprocess.PIPE, text=True)
    try:
        assert proc.stdout.readline().strip() == "writing"
    finally:
        proc.send_signal(signal.SIGKILL)
        proc.wait(timeout=60)
        proc.stdout.close()
    assert proc.returncode == -signal.SIGKILL
    if mode == "file":
        assert target.read_bytes() == OLD
    else:
        assert _snapshot(target) == before
    # the killed writer's temporary stays behind as a hidden sibling, never under the name
    hidden = [n for n in os.listdir(tmp_path) if n.startswith(".")]
    assert len(hidden) == 1 and hidden[0].startswith(f".{target.name}.")


# -- the real command, killed or interrupted while writing its output ----------------

def _demo_scenario() -> str:
    return str(resources.files("fringe") / "data" / "demo_site.toml")


def _start_probe_and_wait_for_write(tmp_path: Path, out: Path) -> subprocess.Popen:
    """Start ``fringe probe`` on 2e6 points writing CSV (several seconds of writing, so the
    signal reliably lands mid-write); return once it is mid-write."""
    rng = np.random.default_rng(20261202)  # seeded: the same points every run
    pts = rng.uniform([-2.0, -3.0, -1.0], [12.0, 11.0, 3.0], size=(2_000_000, 3))
    np.save(tmp_path / "big.npy", pts)
    env = {k: v for k, v in os.environ.items() if k != "FRINGE_DEBUG"}
    proc = subprocess.Popen([sys.executable, "-m", "fringe.cli", "probe", _demo_scenario(),
                             "--points", str(tmp_path / "big.npy"), "--out", str(out)],
                            stderr=subprocess.PIPE, text=True, env=env)
    deadline = time.monotonic() + 240
    while time.monotonic() < deadline and proc.poll() is None:
        tmps = [p for p in out.parent.iterdir() if p.name.startswith(f".{out.name}.")]
        if tmps and tmps[0].stat().st_size > 0:
            return proc
        time.sleep(0.005)
    proc.kill()
    proc.wait()
    pytest.fail(f"never caught the probe mid-write (exit {proc.returncode}); "
                f"stderr: {proc.stderr.read()}")


def test_probe_killed_mid_write_keeps_previous_output(tmp_path):
    out = tmp_path / "field.csv"
    out.write_bytes(OLD)
    proc = _start_probe_and_wait_for_write(tmp_path, out)
    proc.send_signal(signal.SIGKILL)
    proc.wait(timeout=60)
    proc.stderr.close()
    assert proc.returncode == -signal.SIGKILL
    assert out.read_bytes() == OLD


def test_probe_interrupted_mid_write_keeps_output_and_cleans_up(tmp_path):
    out = tmp_path / "field.csv"
    out.write_bytes(OLD)
    proc = _start_probe_and_wait_for_write(tmp_path, out)
    proc.send_signal(signal.SIGINT)
    _, err = proc.communicate(timeout=120)
    assert proc.returncode == 130, err
    assert "interrupted; no output was changed" in err and "Traceback" not in err
    assert out.read_bytes() == OLD
    assert sorted(os.listdir(tmp_path)) == ["big.npy", "field.csv"]  # temporary removed


def test_report_killed_mid_write_keeps_previous_report(tmp_path):
    """``fringe report`` builds its folder aside; SIGKILL while it writes leaves the old one."""
    from tests.io.test_bad_input_plan import PLAN_TOML

    scen = tmp_path / "site.toml"
    scen.write_text(PLAN_TOML, encoding="utf-8")
    out = _old_folder(tmp_path)
    before = _snapshot(out)
    env = {k: v for k, v in os.environ.items() if k != "FRINGE_DEBUG"}
    proc = subprocess.Popen([sys.executable, "-m", "fringe.cli", "report", str(scen),
                             "--out", str(out), "--quiet"],
                            stdout=subprocess.DEVNULL, stderr=subprocess.PIPE, text=True,
                            env=env)
    deadline = time.monotonic() + 240
    caught = False
    while time.monotonic() < deadline and proc.poll() is None:
        partial = [p for p in tmp_path.iterdir() if p.name.startswith(".report.partial.")]
        if partial and any(partial[0].iterdir()):
            proc.send_signal(signal.SIGKILL)
            caught = True
            break
        time.sleep(0.005)
    proc.wait(timeout=60)
    err = proc.stderr.read()
    proc.stderr.close()
    if not caught:
        pytest.fail(f"never caught the report mid-write (exit {proc.returncode}): {err}")
    assert proc.returncode == -signal.SIGKILL
    assert _snapshot(out) == before  # every old file, byte for byte, and nothing new


# -- an output folder is replaced whole: never a folder that holds the user's own files ----

def test_report_refuses_to_replace_a_foreign_folder(tmp_path, run_cli):
    from tests.io.test_bad_input_plan import PLAN_TOML

    scen = tmp_path / "site.toml"
    scen.write_text(PLAN_TOML, encoding="utf-8")
    mine = tmp_path / "documents"
    mine.mkdir()
    (mine / "thesis.txt").write_text("precious")
    code, out, err = run_cli("report", scen, "--out", mine, "--no-drawings", "--quiet")
    assert code == 2 and "Traceback" not in err and "`--out`" in err, err
    assert sorted(os.listdir(mine)) == ["thesis.txt"]


def test_place_refuses_to_replace_a_foreign_folder(tmp_path, run_cli):
    from tests.io.test_bad_input_plan import PLAN_TOML

    scen = tmp_path / "site.toml"
    scen.write_text(PLAN_TOML, encoding="utf-8")
    mine = tmp_path / "documents"
    mine.mkdir()
    (mine / "thesis.txt").write_text("precious")
    code, out, err = run_cli("place", scen, "--magnet", "m1", "--region", "magnet room",
                             "--angles", "0", "--out", mine, "--quiet")
    assert (mine / "thesis.txt").read_text() == "precious"
    assert code == 2 and "`--out`" in err


def test_library_output_errors_name_the_argument_not_an_option(tmp_path):
    # common practice, no source: below the command line an error names the Python
    # argument (`out_dir`); the commands pass their option (`--out`)
    from fringe.io.atomic import check_output_folder
    from fringe.model.errors import FringeIOError

    f = tmp_path / "a-file"
    f.write_text("x")
    with pytest.raises(FringeIOError, match="^`out_dir` must be a folder"):
        check_output_folder(f, marker="summary.json")
    with pytest.raises(FringeIOError, match="^`--out` must be a folder"):
        check_output_folder(f, marker="summary.json", name="--out")
