"""Engine work split in two, run on two threads.

numpy releases the GIL in the sampling kernels (random draws, shuffles, ufuncs, sorts), so
two threads nearly halve a simulation on a two-core machine. The split is fixed, not taken
from the core count, and the parts are combined in order: results are bitwise the same on
every machine, threaded or not.
"""

from __future__ import annotations

import itertools
from collections.abc import Callable, Iterator
from concurrent.futures import Future, ThreadPoolExecutor
from contextlib import contextmanager
from typing import TypeVar

from threadpoolctl import threadpool_limits

T = TypeVar("T")
U = TypeVar("U")

PARTS = 2
_pool: ThreadPoolExecutor | None = None
_side: ThreadPoolExecutor | None = None


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


def beside(work: Callable[[], T]) -> Future[T]:
    """work() on a thread of its own, outside the engine's pool, while the caller goes on
    (with run_split, say): it fills the cores when one part of a split ends early."""
    global _side
    if _side is None:
        _side = ThreadPoolExecutor(max_workers=1, thread_name_prefix="rangefold-beside")
    return _side.submit(work)


def run_split(work: Callable[[range], T], count: int) -> list[T]:
    """work(range) for each part of range(count), in parallel; results in part order.

    An exception in a part (cancellation included) is raised here once both parts end.
    """
    parts = halves(count)
    if len(parts) < 2:
        return [work(p) for p in parts]
    futures = [_shared_pool().submit(work, p) for p in parts]
    return [f.result() for f in futures]


@contextmanager
def blas_on_one_thread() -> Iterator[None]:
    """BLAS limited to one thread while both engine threads compute: its own threads would
    compete for the same two cores and spin between calls (measured: 4.8 s of CPU for a
    2.5 s correlated run, against 2.6 s with one BLAS thread)."""
    with threadpool_limits(limits=1, user_api="blas"):
        yield
