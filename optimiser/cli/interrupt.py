"""Ctrl-C: one line, exit 130, no traceback, nothing half-written.

Two regimes. While the program starts (imports), nothing has been written, so SIGINT
prints the line and ends the process at once. While a command runs, SIGINT raises
:class:`Interrupted`, which unwinds through every ``finally`` (staged output folders are
removed) up to :func:`optimiser.cli.app.main`, which prints the line and exits 130. The
short moment when finished files are moved into place is :func:`committing`: an interrupt
there waits until the move is complete, so an output folder is always either the old set
or the new one (and the line printed then says the files were written).

Python runs a signal handler only between its own instructions, so a long solve inside
a compiled solver would hold the interrupt back until the solve ends. A watcher thread
sees the signal as it arrives; if the handler has not run within :data:`GRACE_S` and no
output is being written (:func:`writing`), nothing can be half-written, so the watcher
stops any worker processes, prints the line and ends the process itself.

``Interrupted`` is not a ``KeyboardInterrupt`` on purpose: the command-line library turns
a ``KeyboardInterrupt`` into its own "Aborted!" and exit 1.
"""

from __future__ import annotations

import multiprocessing
import os
import signal
import threading
from collections.abc import Callable, Iterable, Iterator
from contextlib import contextmanager
from pathlib import Path
from types import FrameType
from typing import TYPE_CHECKING

if TYPE_CHECKING:
    from optimiser.io.writers import StagedOutput

MESSAGE = "interrupted, nothing written"
MESSAGE_AFTER_WRITING = "interrupted after every output file was written"
GRACE_S = 1.0
"""How long the watcher leaves the handler to act before it ends the process itself."""
EXIT_CODE = 130
"""128 + SIGINT, as a shell reports a command ended by Ctrl-C."""

_state = {"shielded": False, "pending": False, "written": False, "writing": False}
_handled = threading.Event()


class Interrupted(BaseException):
    """SIGINT arrived while a command ran."""


def _exit_now(message: str) -> None:
    os.write(2, (message + "\n").encode())
    os._exit(EXIT_CODE)


def _exit_at_once(signum: int, frame: FrameType | None) -> None:
    _exit_now(MESSAGE)


def _raise_interrupted(signum: int, frame: FrameType | None) -> None:
    if _handled.is_set():
        return  # the first interrupt is being handled; let the clean-up finish
    _handled.set()
    if _state["shielded"]:
        _state["pending"] = True
        return
    raise Interrupted


def _watch(read_fd: int) -> None:
    """In a thread: end the process when the handler cannot run (see the module)."""
    while True:
        if signal.SIGINT not in os.read(read_fd, 64):
            continue
        if _handled.wait(GRACE_S):
            return
        while _state["writing"]:  # the handler will run soon; writing is Python code
            if _handled.wait(GRACE_S):
                return
        for child in multiprocessing.active_children():
            child.terminate()
        _exit_now(message())


def while_starting() -> None:
    """SIGINT ends the process with the message (nothing to clean up yet)."""
    signal.signal(signal.SIGINT, _exit_at_once)


def while_running(watch: bool = True) -> None:
    """SIGINT raises :class:`Interrupted` (outputs in progress are cleaned up); the
    watcher thread (unless ``watch`` is false) covers the time inside compiled code."""
    _handled.clear()
    signal.signal(signal.SIGINT, _raise_interrupted)
    if not watch:
        return
    read_fd, write_fd = os.pipe()
    os.set_blocking(write_fd, False)
    signal.set_wakeup_fd(write_fd, warn_on_full_buffer=False)
    threading.Thread(target=_watch, args=(read_fd,), name="interrupt-watcher",
                     daemon=True).start()


def message() -> str:
    """The line to print for an interrupt now."""
    return MESSAGE_AFTER_WRITING if _state["written"] else MESSAGE


@contextmanager
def writing() -> Iterator[None]:
    """Outputs are being staged: an interrupt is left to the handler (which removes
    them), never ends the process from the watcher."""
    _state["writing"] = True
    try:
        yield
    finally:
        _state["writing"] = False


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


def staged_outputs(write: Callable[[StagedOutput], None],
                   protect: Iterable[Path] = ()) -> list[Path]:
    """Run ``write(output)`` on a staged output set, then move it into place whole (an
    interrupt while writing leaves nothing; one while moving waits for the move). An
    output that would replace one of the input files ``protect`` is bad input."""
    from optimiser.io.writers import StagedOutput

    with writing(), StagedOutput(protect) as output:
        write(output)
        with committing():
            return output.commit()
