"""The cyclic garbage collector paused around a burst of short-lived objects.

An evaluation (results, sentences, drafts) and a workbook (tens of thousands of openpyxl
objects) are made in bursts that reference counting frees. Their allocations set off
collections of the older generations, each walking every object the process holds (pandas' and
scipy's module state included): about a tenth of an evaluation and more than half of the string
building of a workbook, measured on the benchmarks. Nothing made in these bursts needs the
collector; cycles left over wait for the next collection.

:func:`paused` nests and is safe across threads: the collector is switched off when the first
pause begins and back on when the last one ends, and only if it was on before the first began.
(A pause that read ``gc.isenabled()`` on its own could read "off" while another thread's pause
held it, and then leave it off for good.)
"""

from __future__ import annotations

import contextlib
import gc
import threading
from collections.abc import Iterator

_lock = threading.Lock()
_depth = 0
_was_enabled = False


@contextlib.contextmanager
def paused() -> Iterator[None]:
    """Pause the cyclic collector for the ``with`` block (also a decorator); on leaving the
    last pause, its state before the first is restored, also on an error."""
    global _depth, _was_enabled
    with _lock:
        if _depth == 0:
            _was_enabled = gc.isenabled()
            gc.disable()
        _depth += 1
    try:
        yield
    finally:
        with _lock:
            _depth -= 1
            if _depth == 0 and _was_enabled:
                gc.enable()
