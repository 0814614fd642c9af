"""Full passes of Python's cycle collector deferred while a sheet is imported.

CPython's collector (``gc``) walks every object the process holds in each full
(generation 2) pass.  An import keeps every checked record of the sheet alive until it
writes them, so the heap grows by hundreds of thousands of objects and each full pass
costs more: a 10,000-row dry run of deposition runs spent 1.3-2.2 s of 7.5-8.3 s in 7-8
of them (benchmarks/REPORT.md).  None of that memory is garbage.  The young generations
still collect the short-lived cycles each row makes; one full pass when the import ends
frees at once the cycles that grew old meanwhile (the records it no longer holds), and
the collector then runs as usual.  Raising the third threshold is the documented way
(``gc.set_threshold``).

Process-wide, so a counter under a lock restores the setting only when the last of
several overlapping imports (threads of one worker) ends.
"""

from __future__ import annotations

import gc
import threading
from collections.abc import Iterator
from contextlib import contextmanager

_NEVER = 2**30  # gen-1 passes before a full one: none within any import
_lock = threading.Lock()
_depth = 0
_saved: tuple[int, ...] = ()


@contextmanager
def full_collections_deferred() -> Iterator[None]:
    """Within the block, no automatic full collection; the threshold comes back after."""
    global _depth, _saved
    with _lock:
        if _depth == 0:
            _saved = gc.get_threshold()
            gc.set_threshold(_saved[0], _saved[1], _NEVER)
        _depth += 1
    try:
        yield
    finally:
        with _lock:
            _depth -= 1
            last = _depth == 0
            if last:
                gc.set_threshold(*_saved)
        if last:
            gc.collect()
