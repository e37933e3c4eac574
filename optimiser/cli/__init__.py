"""Command line: a thin layer over the public API (exit codes per contract section 6).

``optimiser.cli:main`` is the console script and ``optimiser.cli:app`` the application.
"""

import sys
from pathlib import Path

from optimiser.cli import interrupt

if Path(sys.argv[0]).stem == "optimiser":
    # Started as the console script: until main() runs, Ctrl-C ends the start-up with
    # one line and exit code 130 (nothing is written yet). Not when imported elsewhere
    # (tests, notebooks), whose own Ctrl-C handling stays as it was.
    interrupt.while_starting()

from optimiser.cli.app import app, main  # after the start-up handler

__all__ = ["app", "main"]
