"""Row-wise orders and random permutations by sorting packed integer keys.

numpy sorts 64-bit integers with vectorised kernels at about half the cost of argsort, and
faster than its Fisher-Yates shuffle draws a permutation. A key holds what is ordered in its
high bits and the column index in the low bits, so the sorted keys' low bits are the order.
Both functions work on (rows, n) arrays, one row per item.
"""

from __future__ import annotations

import sys

import numpy as np

_LOW32 = np.uint64(0xFFFFFFFF)


def orders(t: np.ndarray, out: np.ndarray | None = None) -> np.ndarray:
    """Per row, the column indices in increasing order of t (float32, rows x n), ties by
    index: argsort's stable result. The float's bits are made to sort as unsigned integers
    (negative values flip every bit, others the sign bit) and fill the high half of each
    key, the index the low half. t's -0.0 become 0.0 (they are equal); `out` (uint64,
    like t) holds the keys, and the result is a view of it."""
    rows, n = t.shape
    if n > 1 << 32 or t.dtype != np.float32:
        raise ValueError("orders() takes float32 rows of at most 2^32 values.")
    np.add(t, np.float32(0.0), out=t)
    keys = np.empty((rows, n), dtype=np.uint64) if out is None else out
    words = keys.view(np.uint32).reshape(rows, n, 2)
    top = 1 if sys.byteorder == "little" else 0  # which uint32 of a key is its high half
    high, low = words[..., top], words[..., 1 - top]
    np.right_shift(t.view(np.int32), 31, out=high.view(np.int32))  # all ones if negative
    high |= np.uint32(0x80000000)
    high ^= t.view(np.uint32)
    low[...] = np.arange(n, dtype=np.uint32)
    keys.sort(axis=-1)
    keys &= _LOW32
    return keys.view(np.intp)


def random_permutations(
    rng: np.random.Generator, rows: int, n: int, out: np.ndarray | None = None
) -> np.ndarray:
    """(rows, n) independent uniform permutations of 0..n-1: the order of random keys whose
    low bits are replaced by the index. The keys are random doubles in [0, 1), whose bit
    patterns order as their values; two tie only if they agree to within about
    2^-(53 - log2 n) (2^-40 at n = 5000), and then keep their index order: far below any
    effect a simulation can show. `out` (uint64, rows x n) holds the keys; the result is
    a view of it."""
    bits = max(int(n - 1).bit_length(), 1)
    mask = np.uint64((1 << bits) - 1)
    keys = np.empty((rows, n), dtype=np.uint64) if out is None else out
    rng.random(out=keys.view(np.float64))
    keys &= ~mask
    keys |= np.arange(n, dtype=np.uint64)
    keys.sort(axis=-1)
    keys &= mask
    return keys.view(np.intp)


def unit_score_orders(
    z: np.ndarray, out: np.ndarray | None = None, work: np.ndarray | None = None
) -> np.ndarray:
    """Per row, the column indices in increasing order of z (float32 scores of unit
    variance, rows x n), by sorting 32-bit keys: about a tenth of the 64-bit sort's time
    (numpy's vectorised 32-bit kernels). The score is read on an even grid over
    [-SCORE_SPAN, SCORE_SPAN] in the bits the index leaves free (2^23 steps for 500
    columns): scores closer than a step tie and keep their column order. Columns are
    exchangeable trials, so a tie is a random swap of neighbouring ranks, far below what a
    rank correlation can show; equal rows still get equal orders. `z` is overwritten; `out`
    (intp) and `work` (uint32), both rows x n, are work arrays."""
    rows, n = z.shape
    bits = max(int(n - 1).bit_length(), 1)
    if bits > 20 or z.dtype != np.float32:
        raise ValueError("unit_score_orders() takes float32 rows of at most 2^20 values.")
    levels = float(1 << (32 - bits))
    np.add(z, np.float32(SCORE_SPAN), out=z)
    np.multiply(z, np.float32(levels / (2 * SCORE_SPAN)), out=z)
    np.clip(z, 0, np.float32(levels - 256), out=z)  # float32 rounds near 2^31: stay below
    keys = np.empty((rows, n), dtype=np.uint32) if work is None else work
    keys[...] = z
    keys <<= np.uint32(bits)
    keys |= np.arange(n, dtype=np.uint32)
    keys.sort(axis=-1)
    positions = np.empty((rows, n), dtype=np.intp) if out is None else out
    np.bitwise_and(keys, np.uint32((1 << bits) - 1), out=positions)
    return positions


SCORE_SPAN = 8.0  # |z| beyond 8 has probability 1e-15 for a unit normal score
