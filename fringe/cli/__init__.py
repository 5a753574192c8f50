"""The ``fringe`` command line: one module per command; parsing, progress, exit codes."""

from fringe.cli.main import main

__all__ = ["main"]
