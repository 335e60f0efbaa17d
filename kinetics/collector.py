"""Pausing Python's cyclic garbage collector while many long-lived objects are made."""

from __future__ import annotations

import contextlib
import gc
import threading
from collections.abc import Iterator

__all__ = ["collector_paused"]

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
