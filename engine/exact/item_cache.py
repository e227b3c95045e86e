"""Values kept per item (or per part) across analyses: items outlive analyses, so an edit
computes the values of the one item it changed, and a repeated analysis none."""

from __future__ import annotations

from collections.abc import Callable, Hashable, Sequence
from typing import TypeVar

K = TypeVar("K", bound=Hashable)
V = TypeVar("V")

# A cache holding more than this many items is cleared whole.
CACHE_ITEMS = 65536


def kept(cache: dict[K, V], keys: Sequence[K], compute: Callable[[list[K]], list[V]]) -> list[V]:
    """cache[k] for each key; those missing from one call compute(missing keys) (each
    missing key once). One lookup per key when all are known: items hash in Python."""
    found = [cache.get(k) for k in keys]
    missing = list(dict.fromkeys(k for k, v in zip(keys, found, strict=True) if v is None))
    if not missing:
        return found  # type: ignore[return-value]
    if len(cache) > CACHE_ITEMS:
        cache.clear()
    cache.update(zip(missing, compute(missing), strict=True))
    return [cache[k] if v is None else v for k, v in zip(keys, found, strict=True)]
