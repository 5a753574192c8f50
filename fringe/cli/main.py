"""The ``fringe`` command: parses arguments, calls the library, renders results.

Exit codes: 0 success; 1 internal error (a bug: please report it); 2 bad input
(scenario, plan file or arguments); 3 a verdict is ``exceeds`` (``report``, unless
``--no-fail``). Set ``FRINGE_DEBUG=1`` to see a traceback for internal errors.
"""

from __future__ import annotations

import argparse
import importlib
import json
import os
import sys
import warnings
from collections.abc import Sequence
from pathlib import Path
from typing import TYPE_CHECKING

from fringe.model.constants import ADVISORY_NOTICE
from fringe.model.constants import VERSION as __version__
from fringe.model.errors import ArgumentError, FringeError, FringeWarning, ScenarioError

if TYPE_CHECKING:
    import numpy as np

EXIT_OK, EXIT_INTERNAL, EXIT_INPUT, EXIT_EXCEEDS = 0, 1, 2, 3

#: Modules that add sub-commands: each has ``register(subparsers)`` which adds a parser
#: and sets ``func`` (args -> exit code). One list; the CLI knows nothing else.
COMMAND_MODULES: tuple[str, ...] = (
    "fringe.cli.probe",
    "fringe.cli.demo",
    "fringe.cli.report",
    "fringe.cli.quench",
    "fringe.cli.energy",
    "fringe.cli.map",
    "fringe.cli.fit",
    "fringe.cli.place",
    "fringe.cli.disturbance",
    "fringe.cli.survey",
    "fringe.cli.shield",
)


class _Parser(argparse.ArgumentParser):
    """argparse that exits with code 2 and our message form on bad arguments."""

    def error(self, message: str) -> None:  # type: ignore[override]
        self.print_usage(sys.stderr)
        sys.stderr.write(f"fringe: error: {message}\n")
        raise SystemExit(EXIT_INPUT)


def build_parser() -> argparse.ArgumentParser:
    """The argument parser with every registered sub-command."""
    p = _Parser(prog="fringe", description=(
        "Static stray field, controlled-zone drawings, stored energy and quench budgets "
        "for strong magnets. " + ADVISORY_NOTICE))
    p.add_argument("--version", action="version", version=f"fringe {__version__}")
    sub = p.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser)
    for name in COMMAND_MODULES:
        importlib.import_module(name).register(sub)
    return p


def main(argv: Sequence[str] | None = None) -> int:
    """Entry point of the ``fringe`` console command; returns the exit code."""
    parser = build_parser()
    try:
        args = parser.parse_args(argv)
    except SystemExit as e:
        return int(e.code or 0)
    if not getattr(args, "func", None):
        parser.print_help()
        return EXIT_INPUT
    if isinstance(getattr(args, "scenario", None), str):  # a command reading a scenario
        from fringe.io.scenario_keys import precheck_scenario  # stdlib only: no numpy yet

        try:  # the loader's own first checks, so a bad file is reported in a blink
            precheck_scenario(args.scenario)
        except FringeError as e:
            sys.stderr.write(f"fringe: error: {e}\n")
            return EXIT_INPUT
    from fringe.io.model_cache import install as install_model_cache  # not before parsing

    install_model_cache()
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("always", FringeWarning)
            warnings.showwarning = _show_warning
            return int(args.func(args) or 0)
    except ArgumentError as e:  # the library names its parameter; say the option instead
        sys.stderr.write(f"fringe: error: {e.renamed(getattr(args, 'flags', {}))}\n")
        return EXIT_INPUT
    except FringeError as e:
        sys.stderr.write(f"fringe: error: {e}\n")
        return EXIT_INPUT
    except KeyboardInterrupt:
        sys.stderr.write("fringe: interrupted; no output was changed\n")
        return 130
    except Exception as e:  # noqa: BLE001 - users get one line, never a traceback
        if os.environ.get("FRINGE_DEBUG"):
            raise
        sys.stderr.write(f"fringe: internal error ({type(e).__name__}: {e}). This is a bug; "
                         "run again with FRINGE_DEBUG=1 for details.\n")
        return EXIT_INTERNAL


_default_showwarning = warnings.showwarning


def _show_warning(message, category, filename, lineno, file=None, line=None) -> None:
    """Print a :class:`FringeWarning` as one ``fringe: warning: …`` line on stderr."""
    if issubclass(category, FringeWarning):
        sys.stderr.write(f"fringe: warning: {message}\n")
    else:
        _default_showwarning(message, category, filename, lineno, file, line)


# -- helpers shared by command modules ---------------------------------------------------

def sheet_formats(text: str) -> tuple[str, ...]:
    """The ``--formats`` value: comma-separated names from
    :data:`~fringe.model.constants.SHEET_FORMATS` (an argparse ``type``: an unknown or
    missing name is a usage error naming the option, exit 2)."""
    from fringe.model.constants import SHEET_FORMATS

    names = [t.strip().lower() for t in text.split(",") if t.strip()]
    bad = [n for n in names if n not in SHEET_FORMATS]
    if bad or not names:
        raise argparse.ArgumentTypeError(
            f"must be one or more of {','.join(SHEET_FORMATS)} separated by commas; "
            f"got {text!r}")
    return tuple(f for f in SHEET_FORMATS if f in names)


def add_formats_option(p, default: str = "all") -> None:
    """Add ``--formats`` (the sheet files to write) to a command's parser; ``default``
    describes what is written without it."""
    from fringe.model.constants import SHEET_FORMATS

    p.add_argument("--formats", type=sheet_formats, default=None, metavar="LIST",
                   help=f"sheet formats to write, comma-separated, from "
                        f"{','.join(SHEET_FORMATS)} (default: {default})")


def read_points_file(path: str) -> np.ndarray:
    """Read (N, 3) points in m from a ``.npy`` or ``.csv`` file (x,y,z; header allowed)."""
    import numpy as np

    from fringe.field.evaluate import coordinate_range_problem

    p = Path(path)
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", UserWarning)  # numpy: "input contained no data"
            if p.suffix.lower() == ".npy":
                arr = np.load(p, allow_pickle=False)
            elif p.suffix.lower() == ".csv":
                try:
                    arr = np.loadtxt(p, delimiter=",", ndmin=2)
                except ValueError:
                    arr = np.loadtxt(p, delimiter=",", ndmin=2, skiprows=1)
            else:
                raise ScenarioError(f"`--points` must be a .npy or .csv file; got {p.name!r}")
    except OSError as e:
        raise ScenarioError(f"cannot read the points file: {e.strerror or e}", str(p)) from None
    except (ValueError, EOFError) as e:
        raise ScenarioError(f"`--points` must hold numbers x,y,z per row; {e}", str(p)) from None
    if not isinstance(arr, np.ndarray) or arr.dtype.kind not in "iuf":
        kind = getattr(arr, "dtype", type(arr).__name__)
        raise ScenarioError(f"`--points` must hold real numbers x,y,z in m; got {kind}", str(p))
    arr = np.asarray(arr, dtype=float)
    if arr.size == 0:
        raise ScenarioError("`--points` must hold at least one row x,y,z; got none", str(p))
    if arr.ndim != 2 or arr.shape[1] != 3:
        raise ScenarioError(f"`--points` must have 3 columns (x, y, z in m); got shape {arr.shape}",
                            str(p))
    if not np.all(np.isfinite(arr)):
        raise ScenarioError("`--points` must be finite numbers; got NaN or inf", str(p))
    if problem := coordinate_range_problem(arr, "--points"):
        raise ScenarioError(problem, str(p))
    return arr


def print_json(obj) -> None:
    """Print ``obj`` as JSON (NaN written as null)."""
    sys.stdout.write(json.dumps(_clean(obj), indent=2) + "\n")


def _clean(o):
    import numpy as np

    if isinstance(o, dict):
        return {k: _clean(v) for k, v in o.items()}
    if isinstance(o, (list, tuple)):
        return [_clean(v) for v in o]
    if isinstance(o, np.ndarray):
        return _clean(o.tolist())
    if isinstance(o, (np.floating, float)):
        f = float(o)
        return f if np.isfinite(f) else None
    if isinstance(o, np.integer):
        return int(o)
    return o


if __name__ == "__main__":  # pragma: no cover
    raise SystemExit(main())
