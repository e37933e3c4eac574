"""The ``optimiser`` command: the application, its commands, and the entry point.

Commands live one group per module (:mod:`~optimiser.cli.analyse`,
:mod:`~optimiser.cli.design`, :mod:`~optimiser.cli.sweeps`) and import what is heavy
inside themselves, so the help appears without loading pandas, plotly or the solvers.
"""

from __future__ import annotations

import functools
import sys
from collections.abc import Callable
from typing import Any

import typer
from typer.core import TyperArgument, TyperCommand, TyperGroup

from optimiser.cli import interrupt
from optimiser.cli.analyse import check, report
from optimiser.cli.common import EXIT_INTERRUPTED
from optimiser.cli.design import compare, design
from optimiser.cli.sweeps import sensitivity, tradeoff


def _no_type(ctx: Any) -> None:
    return None


def _plain_types(params: list[Any]) -> list[Any]:
    """Help shows what a value is in plain words (FILE, FOLDER, SECONDS: each option's
    metavar), never a parser type name: an argument is named by its metavar, and a flag
    takes no value, so neither shows a type."""
    for param in params:
        if isinstance(param, TyperArgument) or getattr(param, "is_flag", False):
            param.display_type_rich = _no_type  # this parameter's own, not the class's
    return params


class PlainHelpCommand(TyperCommand):
    def get_params(self, ctx: Any) -> list[Any]:
        return _plain_types(super().get_params(ctx))


class PlainHelpGroup(TyperGroup):
    def get_params(self, ctx: Any) -> list[Any]:
        return _plain_types(super().get_params(ctx))


app = typer.Typer(
    help="Least-cost sizing and checking of gravity water mains (preliminary design aid).",
    no_args_is_help=True, add_completion=False, pretty_exceptions_enable=False,
    cls=PlainHelpGroup)


@app.callback()
def _root() -> None:
    """Least-cost sizing and checking of gravity water mains (preliminary design aid)."""


def _input_errors_exit_2(command: Callable[..., None]) -> Callable[..., None]:
    """``command`` with every :class:`~optimiser.io.InputError` that escapes it (a
    refusal raised deep in a run, e.g. a combination the optimiser does not design)
    printed plainly with exit 2, as the loaders' are: one home for every command."""

    @functools.wraps(command)
    def run(*args: Any, **kwargs: Any) -> None:
        from optimiser.cli.common import fail_input
        from optimiser.io import InputError

        try:
            command(*args, **kwargs)
        except InputError as error:
            fail_input(error)
    return run


for command in (check, design, report, compare, tradeoff, sensitivity):
    app.command(cls=PlainHelpCommand)(_input_errors_exit_2(command))


def main() -> None:
    """Entry point of the console script: run the command, end a Ctrl-C cleanly."""
    interrupt.while_running()
    try:
        app()
    except interrupt.Interrupted:
        sys.stderr.write(interrupt.message() + "\n")
        sys.exit(EXIT_INTERRUPTED)
