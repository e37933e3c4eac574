"""Ctrl-C: one line, exit 130, no traceback, nothing half-written.

Two regimes. While the program starts (imports), nothing has been written, so SIGINT
prints the line and ends the process at once. While a command runs, SIGINT raises
:class:`Interrupted`, which unwinds through every ``finally`` (staged output folders are
removed) up to :func:`optimiser.cli.app.main`, which prints the line and exits 130. The
short moment when finished files are moved into place is :func:`committing`: an interrupt
there waits until the move is complete, so an output folder is always either the old set
or the new one (and the line printed then says the files were written).

``Interrupted`` is not a ``KeyboardInterrupt`` on purpose: the command-line library turns
a ``KeyboardInterrupt`` into its own "Aborted!" and exit 1.
"""

from __future__ import annotations

import os
import signal
from collections.abc import Iterator
from contextlib import contextmanager
from types import FrameType

MESSAGE = "interrupted, nothing written"
MESSAGE_AFTER_WRITING = "interrupted after every output file was written"
_state = {"shielded": False, "pending": False, "written": False}


class Interrupted(BaseException):
    """SIGINT arrived while a command ran."""


def _exit_at_once(signum: int, frame: FrameType | None) -> None:
    os.write(2, (MESSAGE + "\n").encode())
    os._exit(130)


def _raise_interrupted(signum: int, frame: FrameType | None) -> None:
    if _state["shielded"]:
        _state["pending"] = True
        return
    raise Interrupted


def while_starting() -> None:
    """SIGINT ends the process with the message (nothing to clean up yet)."""
    signal.signal(signal.SIGINT, _exit_at_once)


def while_running() -> None:
    """SIGINT raises :class:`Interrupted` (outputs in progress are cleaned up)."""
    signal.signal(signal.SIGINT, _raise_interrupted)


def message() -> str:
    """The line to print for an interrupt now."""
    return MESSAGE_AFTER_WRITING if _state["written"] else MESSAGE


@contextmanager
def committing() -> Iterator[None]:
    """Move finished outputs into place: an interrupt waits until the block is done."""
    _state["shielded"], _state["pending"] = True, False
    try:
        yield
        _state["written"] = True
    finally:
        _state["shielded"] = False
    if _state["pending"]:
        _state["pending"] = False
        raise Interrupted
