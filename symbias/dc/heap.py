"""Heap headroom for batched solves: fewer page faults from numpy temporaries.

A batched Newton step makes a few hundred short-lived numpy arrays of a few
hundred kilobytes each.  glibc's allocator returns freed memory at the top of
its heap to the system at once and asks for it again on the next allocation,
so every temporary pays for fresh zeroed pages; on the bipolar Wilson mirror
that was about 40 % of a Monte Carlo point (``bench/dc.py``).  Asking glibc to
keep :data:`HEAP_TOP_PAD` bytes of headroom at the top of the heap
(``mallopt(M_TOP_PAD)``, a documented glibc setting) removes those faults.

The setting is process-wide: it is made once, the first time a batch of at
least :data:`MIN_BATCH` samples is solved, only where the C library is glibc,
and never when the environment variable ``SYMBIAS_HEAP_PAD`` is ``0``.  The
process then keeps up to 64 MiB of freed heap instead of returning it at once.

Examples
--------
>>> keep_heap_headroom(10) is None  # a small batch changes nothing
True
"""

from __future__ import annotations

import ctypes
import os
import platform

__all__ = ["keep_heap_headroom", "HEAP_TOP_PAD", "MIN_BATCH"]

#: Bytes glibc keeps at the top of the heap when it grows or shrinks.
HEAP_TOP_PAD = 64 << 20
#: Smallest batch for which the setting is made (single points never touch it).
MIN_BATCH = 64
#: glibc's ``M_TOP_PAD`` parameter number (``malloc.h``).
_M_TOP_PAD = -2

_state: dict[str, bool | None] = {"set": None}


def keep_heap_headroom(batch: int) -> bool | None:
    """Set glibc's heap top pad once per process (see the module docstring).

    Returns None when nothing was attempted (small batch, already tried,
    turned off, not glibc), else whether glibc accepted the setting.
    """
    if batch < MIN_BATCH or _state["set"] is not None:
        return None
    _state["set"] = False
    if os.environ.get("SYMBIAS_HEAP_PAD", "").strip() == "0" or platform.libc_ver()[0] != "glibc":
        return None
    try:
        libc = ctypes.CDLL(None)
        accepted = bool(libc.mallopt(ctypes.c_int(_M_TOP_PAD), ctypes.c_int(HEAP_TOP_PAD)))
    except (OSError, AttributeError):
        return None
    _state["set"] = accepted
    return accepted
