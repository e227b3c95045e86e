"""The allocator thresholds that keep a correlated run's freed work memory for reuse."""

from __future__ import annotations

import ctypes
import sys

import pytest

from engine.memory_reuse import keep_freed_memory


@pytest.mark.skipif(not sys.platform.startswith("linux"), reason="glibc's mallopt only")
def test_thresholds_are_set_once_on_glibc():
    glibc = hasattr(ctypes.CDLL(None), "gnu_get_libc_version")
    assert keep_freed_memory() is glibc  # mallopt returns 1 on success (malloc.h)
    assert keep_freed_memory() is glibc  # cached: set once per process
