"""Benchmark: start-up of the command line (``fringe --help``, ``fringe COMMAND --help``).

Each command runs end to end in a fresh interpreter (``python -m fringe.cli …``), five
times; the best time is printed (the rule of ``timeit``: the minimum measures the code,
the spread measures the machine). ``python -c "import numpy"`` is timed the same way for
comparison: help must not wait for numpy, scipy or matplotlib.

Usage::

    python benchmarks/bench_commands.py [--repeat 5]
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


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--repeat", type=int, default=5, help="runs per command (default 5)")
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


if __name__ == "__main__":
    main()
