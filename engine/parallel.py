"""Engine work split in two, run on two threads.

numpy releases the GIL in the sampling kernels (random draws, shuffles, ufuncs, sorts), so
two threads nearly halve a simulation on a two-core machine. The split is fixed, not taken
from the core count, and the parts are combined in order: results are bitwise the same on
every machine, threaded or not.
"""

from __future__ import annotations

import itertools
from collections.abc import Callable
from concurrent.futures import ThreadPoolExecutor
from typing import TypeVar

T = TypeVar("T")
U = TypeVar("U")

PARTS = 2
_pool: ThreadPoolExecutor | None = None


def halves(count: int) -> list[range]:
    """`count` items as PARTS contiguous ranges (empty ones dropped)."""
    bounds = [count * i // PARTS for i in range(PARTS + 1)]
    return [range(a, b) for a, b in itertools.pairwise(bounds) if b > a]


def _shared_pool() -> ThreadPoolExecutor:
    global _pool
    if _pool is None:
        _pool = ThreadPoolExecutor(max_workers=PARTS, thread_name_prefix="rangefold-engine")
    return _pool


def run_pair(first: Callable[[], T], second: Callable[[], U]) -> tuple[T, U]:
    """first() here and second() on a pool thread, at the same time."""
    later = _shared_pool().submit(second)
    return first(), later.result()


def run_split(work: Callable[[range], T], count: int) -> list[T]:
    """work(range) for each part of range(count), in parallel; results in part order.

    An exception in a part (cancellation included) is raised here once both parts end.
    """
    parts = halves(count)
    if len(parts) < 2:
        return [work(p) for p in parts]
    futures = [_shared_pool().submit(work, p) for p in parts]
    return [f.result() for f in futures]
