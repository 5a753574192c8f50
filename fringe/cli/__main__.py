"""``python -m fringe.cli``: the ``fringe`` command."""

from fringe.cli.main import main

raise SystemExit(main())
