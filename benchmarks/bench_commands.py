"""Benchmark: start-up of the command line and ``fringe demo`` against a calibration.

Each command runs end to end in a fresh interpreter (``python -m fringe.cli …``), five
times; the best time is printed (the rule of ``timeit``: the minimum measures the code,
the spread measures the machine). ``python -c "import numpy"`` is timed the same way for
comparison: help must not wait for numpy, scipy or matplotlib.

Then ``fringe demo`` (into a fresh temporary folder, progress off) is timed against the
calibration workload of issue 20: the direct magpylib sum
(:func:`fringe.field.evaluate.field_at_magpylib`) of the demo magnet at 10⁵ points 1–30 m
from its centre (isotropic directions, distance uniform, seed 2026), run in this process.
The two alternate (demo, sum, demo, sum, …) so both see the same load; the best of each
and their ratio are printed (target of issue 20: demo ≤ 1.5 × the sum).

Usage::

    python benchmarks/bench_commands.py [--repeat 5] [--demo-repeat 3] [--formats LIST]
"""

from __future__ import annotations

import argparse
import os
import subprocess
import sys
import time
from pathlib import Path

#: The sub-commands whose ``--help`` is timed (as in :data:`fringe.cli.main.COMMAND_MODULES`).
COMMANDS: tuple[str, ...] = ("probe", "demo", "report", "quench", "energy", "map", "fit",
                             "place")


def best_time_s(cmd: list[str], repeat: int, env: dict[str, str]) -> float:
    """Best wall time in s of ``cmd`` run ``repeat`` times (stdout and stderr discarded)."""
    best = float("inf")
    for _ in range(repeat):
        t0 = time.perf_counter()
        subprocess.run(cmd, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL, env=env,
                       check=False)
        best = min(best, time.perf_counter() - t0)
    return best


def calibration_s(n: int = 100_000) -> float:
    """Wall time in s of the direct magpylib sum of the demo magnet at ``n`` points."""
    from importlib import resources

    import numpy as np

    from fringe.field.evaluate import field_at_magpylib
    from fringe.io.scenario import load_site

    with resources.as_file(resources.files("fringe") / "data" / "demo_site.toml") as p:
        site = load_site(p)
    m = site.magnets[0]
    rng = np.random.default_rng(2026)
    d = rng.normal(size=(n, 3))
    d /= np.linalg.norm(d, axis=1)[:, None]
    pts = np.asarray(m.center_m) + d * rng.uniform(1.0, 30.0, n)[:, None]
    t0 = time.perf_counter()
    field_at_magpylib(site, pts)
    return time.perf_counter() - t0


def demo_against_calibration(repeat: int, env: dict[str, str], formats: str | None) -> None:
    """Print the best ``fringe demo`` time, the best calibration time and their ratio."""
    import tempfile

    cmd = [sys.executable, "-m", "fringe.cli", "demo", "--quiet"]
    if formats:
        cmd += ["--formats", formats]
    demo, cal = [], []
    calibration_s(2000)  # imports and the first touch of magpylib, not timed
    for _ in range(repeat):
        with tempfile.TemporaryDirectory() as tmp:
            t0 = time.perf_counter()
            r = subprocess.run(cmd + ["--out", str(Path(tmp) / "demo")], env=env, check=False,
                               stdout=subprocess.DEVNULL, stderr=subprocess.PIPE, text=True)
            demo.append(time.perf_counter() - t0)
            if r.returncode != 0:
                raise SystemExit(f"fringe demo failed ({r.returncode}): {r.stderr[-2000:]}")
        cal.append(calibration_s())
    print(f"fringe demo{' --formats ' + formats if formats else ''} against the direct "
          f"magpylib sum of 10^5 points on the demo magnet, alternating, {repeat} runs each; "
          f"load average {os.getloadavg()[0]:.1f}")
    print(f"  fringe demo        best {min(demo):7.2f} s  (all: "
          f"{', '.join(f'{t:.2f}' for t in demo)})")
    print(f"  calibration (10^5) best {min(cal):7.2f} s  (all: "
          f"{', '.join(f'{t:.2f}' for t in cal)})")
    print(f"  ratio demo / calibration: {min(demo) / min(cal):.2f} on the best runs "
          f"(target <= 1.5)")


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--repeat", type=int, default=5, help="runs per command (default 5)")
    ap.add_argument("--demo-repeat", type=int, default=3,
                    help="runs of fringe demo and of the calibration (default 3; 0 skips)")
    ap.add_argument("--formats", default=None, help="--formats passed to fringe demo")
    a = ap.parse_args()
    root = str(Path(__file__).resolve().parent.parent)
    env = dict(os.environ)
    env["PYTHONPATH"] = root + os.pathsep + env.get("PYTHONPATH", "")
    py = sys.executable
    rows = [("python -c 'import numpy'", [py, "-c", "import numpy"]),
            ("python -c 'pass'", [py, "-c", "pass"]),
            ("fringe --help", [py, "-m", "fringe.cli", "--help"])]
    rows += [(f"fringe {c} --help", [py, "-m", "fringe.cli", c, "--help"]) for c in COMMANDS]
    rows.append(("fringe probe (usage error)", [py, "-m", "fringe.cli", "probe"]))
    print(f"best of {a.repeat} runs, wall time, {os.cpu_count()} cores")
    for label, cmd in rows:
        print(f"  {label:<30} {best_time_s(cmd, a.repeat, env):7.3f} s")
    if a.demo_repeat > 0:
        sys.path.insert(0, root)
        demo_against_calibration(a.demo_repeat, env, a.formats)


if __name__ == "__main__":
    main()
