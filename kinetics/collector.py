"""Pausing Python's cyclic garbage collector while many long-lived objects are made."""

from __future__ import annotations

import contextlib
import gc
import threading
from collections.abc import Iterator

__all__ = ["collector_paused", "fewer_passes"]

#: blocks (of any thread) that hold the collector paused, and whether it was on before the
#: first of them (the collector is one for the whole process)
_lock = threading.Lock()
_pauses = 0
_was_enabled = False


@contextlib.contextmanager
def collector_paused(pause: bool = True) -> Iterator[None]:
    """Pause Python's cyclic garbage collector for the ``with`` block (when ``pause``).

    Work that makes hundreds of thousands of objects that stay alive (reading a large
    scheme file, numba compiling a kernel) sets off collector passes that walk all of
    them again and again: a third of the time of reading a 20,000-reaction file, 0.4 s of
    the sweep kernel's first compilation.  The collector's previous state is restored
    after the block, and its next pass collects what the block left behind.  Threads may
    pause it at the same time: it is on again when the last of them is done.

    Parameters
    ----------
    pause : bool
        False leaves the collector alone (for a block that needs the pause only at times).

    Examples
    --------
    >>> import gc
    >>> with collector_paused():
    ...     gc.isenabled()
    False
    >>> gc.isenabled()
    True
    """
    if not pause:
        yield
        return
    global _pauses, _was_enabled
    with _lock:
        if _pauses == 0:
            _was_enabled = gc.isenabled()
            gc.disable()
        _pauses += 1
    try:
        yield
    finally:
        with _lock:
            _pauses -= 1
            if _pauses == 0 and _was_enabled:
                gc.enable()


@contextlib.contextmanager
def fewer_passes(youngest: int = 50_000) -> Iterator[None]:
    """Let the collector pass less often during the ``with`` block (a command of the CLI).

    The youngest generation is collected after ``youngest`` new container objects instead
    of Python's 700: the imports of a command and numba's loading of its kernels make
    hundreds of thousands of lasting objects, and passes over them cost 5 % of a warm
    command (measured on ``sweep``: 1.16 -> 1.10 s CPU, the same peak memory).  The older
    generations keep their thresholds, and the previous ones are restored after the block.

    Parameters
    ----------
    youngest : int
        Threshold of the youngest generation (never lowered).

    Examples
    --------
    >>> import gc
    >>> before = gc.get_threshold()
    >>> with fewer_passes():
    ...     gc.get_threshold()[0]
    50000
    >>> gc.get_threshold() == before
    True
    """
    before = gc.get_threshold()
    gc.set_threshold(max(youngest, before[0]), *before[1:])
    try:
        yield
    finally:
        gc.set_threshold(*before)
