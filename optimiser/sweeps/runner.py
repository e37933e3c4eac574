"""Run one function over many inputs: serially, on local processes, or on Dask.

Results come back in input order whichever way they ran, and each task is a pure
function of its input, so serial, ``workers=N`` and a Dask cluster give identical tables.
"""

from __future__ import annotations

import multiprocessing
import signal
from collections.abc import Callable, Sequence
from concurrent.futures import ProcessPoolExecutor, as_completed
from typing import Any, TypeVar

from rich.console import Console
from rich.progress import BarColumn, MofNCompleteColumn, Progress, TextColumn, TimeElapsedColumn

T = TypeVar("T")
R = TypeVar("R")


def _progress(console: Console | None, total: int, label: str) -> Progress:
    return Progress(TextColumn(label), BarColumn(), MofNCompleteColumn(), TimeElapsedColumn(),
                    console=console or Console(stderr=True), transient=True,
                    disable=console is None)


def run_all(function: Callable[[T], R], items: Sequence[T], *, workers: int = 1,
            dask_address: str | None = None, console: Console | None = None,
            label: str = "solving") -> list[R]:
    """``[function(item) for item in items]``, possibly in parallel, with a progress bar
    on ``console`` (none when it is None). ``function`` must be picklable (module level).
    """
    results: list[Any] = [None] * len(items)
    with _progress(console, len(items), label) as progress:
        task = progress.add_task(label, total=len(items))
        if dask_address:
            from distributed import Client
            from distributed import as_completed as dask_completed

            with Client(dask_address, set_as_default=False) as client:
                futures = client.map(function, list(items), pure=False)
                index = {future.key: i for i, future in enumerate(futures)}
                # The client is not the default one, so as_completed needs its loop.
                for future in dask_completed(futures, loop=client.loop):
                    results[index[future.key]] = future.result()
                    progress.advance(task)
        elif workers > 1:
            _run_on_processes(function, items, workers, results,
                              lambda: progress.advance(task))
        else:
            for i, item in enumerate(items):
                results[i] = function(item)
                progress.advance(task)
    return results


def _ignore_interrupts() -> None:
    """In a worker: Ctrl-C is the parent's to handle (it stops the workers)."""
    signal.signal(signal.SIGINT, signal.SIG_IGN)


def _run_on_processes(function: Callable[[T], R], items: Sequence[T], workers: int,
                      results: list[Any], advance: Callable[[], None]) -> None:
    """Fill ``results`` from a pool of fresh processes; on any exception or interrupt in
    the parent, stop the workers at once instead of waiting for their solves."""
    # Fresh interpreters, not forks: a fork of a process that has already run HiGHS
    # inherits its thread pool in a broken state and the child's solve never returns.
    pool = ProcessPoolExecutor(max_workers=workers, initializer=_ignore_interrupts,
                               mp_context=multiprocessing.get_context("spawn"))
    try:
        futures = {pool.submit(function, item): i for i, item in enumerate(items)}
        for future in as_completed(futures):
            results[futures[future]] = future.result()
            advance()
    except BaseException:
        # The executor has no public way to end running tasks (Python 3.11).
        for process in list(getattr(pool, "_processes", {}).values()):
            process.terminate()
        pool.shutdown(wait=False, cancel_futures=True)
        raise
    pool.shutdown(wait=True)
