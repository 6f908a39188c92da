"""Bulk object building without the cyclic garbage collector rescanning it.

Parsing, elaboration, the topology checks and MNA assembly each build many
small objects that all stay alive. CPython's cyclic collector is triggered by
allocation counts and rescans the surviving objects each time, so on a large
netlist it spends more time than the work itself and makes it grow faster than
linearly, finding nothing (these structures have no reference cycles to
reclaim). Pausing it for the duration is common practice for bulk loads.

Re-enabling it alone would not be enough: everything built in the pause sits in
the youngest generation, and the first collection after it scans all of it
(about a fifth of the parse time of a large netlist). So on leaving, everything
alive is promoted straight to the oldest generation (``gc.freeze`` then
``gc.unfreeze``, two list splices), where it is scanned only by the rare full
collections; nothing becomes uncollectable.

References
----------
Python documentation, ``gc`` module: ``gc.disable``, ``gc.freeze``, ``gc.unfreeze``
("put them back into the oldest generation"), from memory.
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
            if not gc.get_freeze_count():  # leave alone objects the host process froze itself
                gc.freeze()
                gc.unfreeze()
            gc.enable()
