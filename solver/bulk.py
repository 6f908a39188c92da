"""Bulk object building without the cyclic garbage collector rescanning it.

Parsing, elaboration, the topology checks and MNA assembly each build many
small objects that all stay alive. CPython's cyclic collector is triggered by
allocation counts and rescans the surviving objects each time, so on a large
netlist it spends more time than the work itself and makes it grow faster than
linearly, finding nothing (these structures have no reference cycles to
reclaim). Pausing it for the duration is common practice for bulk loads.

References
----------
Python documentation, ``gc`` module: ``gc.disable``, ``gc.freeze`` (from memory).
"""
from __future__ import annotations

import contextlib
import gc


@contextlib.contextmanager
def paused_gc():
    """Disable the cyclic collector inside the block (nested uses are fine).

    Examples
    --------
    >>> with paused_gc():
    ...     gc.isenabled()
    False
    """
    enabled = gc.isenabled()
    gc.disable()
    try:
        yield
    finally:
        if enabled:
            gc.enable()
