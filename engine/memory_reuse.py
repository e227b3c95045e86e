"""Freed work memory kept for the next replicate instead of handed back to the system.

glibc's allocator maps fresh pages for every block above a threshold (raised as blocks are
freed, but never past 32 MB) and returns a thread's freed heap top to the system once it
passes twice that. A correlated replicate's temporaries are (items x trials) arrays of tens
of MB, so each replicate took its memory from the system again, page by page: 1.7 million
page faults and 10 s of system time in a 10,000-item, 100k-trial report (28 s; 23 s with
the thresholds below, peak memory 1.26 -> 1.32 GB when measured; 0.25 million faults). A block is still mapped on its own
above MAPPED (the largest arrays, given back as soon as they are freed), and at most
KEPT of freed memory stays with each heap.
"""

from __future__ import annotations

import ctypes
import ctypes.util
import sys
from functools import cache

MAPPED = 64 << 20
KEPT = 128 << 20
_M_TRIM_THRESHOLD, _M_MMAP_THRESHOLD = -1, -3  # glibc's mallopt parameters (malloc.h)


@cache
def keep_freed_memory() -> bool:
    """Sets the thresholds once per process; False where the C library is not glibc."""
    if not sys.platform.startswith("linux"):
        return False
    try:
        libc = ctypes.CDLL(ctypes.util.find_library("c") or "libc.so.6")
        libc.gnu_get_libc_version  # noqa: B018 - glibc only: others' mallopt differ
    except (OSError, AttributeError):
        return False
    return bool(libc.mallopt(_M_MMAP_THRESHOLD, MAPPED) and libc.mallopt(_M_TRIM_THRESHOLD, KEPT))
