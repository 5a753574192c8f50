"""``python -m fringe.cli``: the ``fringe`` command."""

from fringe.cli.main import main

if __name__ == "__main__":
    raise SystemExit(main())
