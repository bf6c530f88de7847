"""Progress of the steps that grow with a plan, for whoever wants to show it.

The library never prints. A step that can take long (the sensors of an analysis, the states of
the remedies, the set of fixes, the positions of a spot search) reports its progress here; with
no reporter installed (the library's default) that costs a function call. The command line
installs one with :func:`reporting`, which draws a line on a terminal.

A reporter has ``start(label, total)`` returning an object with ``advance(n)`` and ``done()``.
The reporter is held in a context variable, so threads and asynchronous tasks each see their own.
A loop reports with :func:`counter` (``tick = counter("states", K)``, ``tick()`` per part done,
``tick.done()`` after), or with the context manager :func:`step`.
"""

from __future__ import annotations

import contextlib
import contextvars

_reporter: contextvars.ContextVar = contextvars.ContextVar("deviation_progress", default=None)


@contextlib.contextmanager
def reporting(reporter):
    """Within the block, steps report to ``reporter`` (None: to nobody)."""
    token = _reporter.set(reporter)
    try:
        yield reporter
    finally:
        _reporter.reset(token)


class Counter:
    """Counts the parts of a step done: call it once per part (or with their number), then
    :meth:`done`."""

    def __init__(self, handle):
        self._handle = handle

    def __call__(self, n: int = 1) -> None:
        if self._handle is not None:
            self._handle.advance(n)

    def done(self) -> None:
        if self._handle is not None:
            self._handle.done()
            self._handle = None


def counter(label: str, total: int) -> Counter:
    """A step of ``total`` parts, reported to the installed reporter (if any)."""
    reporter = _reporter.get()
    return Counter(reporter.start(label, total) if reporter is not None else None)


@contextlib.contextmanager
def step(label: str, total: int):
    """:func:`counter` as a context manager: the step is done when the block ends."""
    tick = counter(label, total)
    try:
        yield tick
    finally:
        tick.done()
