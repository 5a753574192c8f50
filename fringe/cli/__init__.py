"""Layer 7, the command line: one module per command.

Each command parses its options, calls the layers below, prints, and returns an exit
code (0 success, 1 internal error, 2 bad input, 3 a verdict exceeds). Errors about a
library parameter are renamed to the command's option here, and nowhere else.
"""

from fringe.cli.main import main

__all__ = ["main"]
