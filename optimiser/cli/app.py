"""The ``optimiser`` command: the application, its commands, and the entry point.

Commands live one group per module (:mod:`~optimiser.cli.analyse`,
:mod:`~optimiser.cli.design`, :mod:`~optimiser.cli.sweeps`) and import what is heavy
inside themselves, so the help appears without loading pandas, plotly or the solvers.
"""

from __future__ import annotations

import sys

import typer

from optimiser.cli import interrupt
from optimiser.cli.analyse import check, report
from optimiser.cli.common import EXIT_INTERRUPTED
from optimiser.cli.design import compare, design
from optimiser.cli.sweeps import sensitivity, tradeoff

app = typer.Typer(
    help="Least-cost sizing and checking of gravity water mains (preliminary design aid).",
    no_args_is_help=True, add_completion=False, pretty_exceptions_enable=False)


@app.callback()
def _root() -> None:
    """Least-cost sizing and checking of gravity water mains (preliminary design aid)."""


for command in (check, design, report, compare, tradeoff, sensitivity):
    app.command()(command)


def main() -> None:
    """Entry point of the console script: run the command, end a Ctrl-C cleanly."""
    interrupt.while_running()
    try:
        app()
    except interrupt.Interrupted:
        sys.stderr.write(interrupt.message() + "\n")
        sys.exit(EXIT_INTERRUPTED)
