"""Standard normal scores in single precision, fast, for the factor pairing's own terms.

A 10,000-item replicate needs five million own terms. numpy's float32 normal sampler (a
ziggurat with a table lookup and a branch per value) takes ~50 ms for them here; the
Box-Muller transform (Box & Muller 1958), r = sqrt(-2 ln u1) and angle 2 pi u2 giving the
two independent normals r cos and r sin, runs as six vectorised passes of single-precision
log, sqrt, sin and cos: ~25 ms. u1 is a float32 in (0, 1], so |z| is at most 5.77 (a tail of
1e-8, far below what a rank correlation can show).
"""

from __future__ import annotations

import numpy as np


def standard_normals(rng: np.random.Generator, out: np.ndarray, scratch: np.ndarray) -> None:
    """Fills `out` (float32, contiguous) with independent standard normal scores;
    `scratch` is a float32 work array of at least out.size + 1 values."""
    flat = out.reshape(-1)
    size = flat.size
    half = (size + 1) // 2
    uniform = scratch[: 2 * half]
    rng.random(out=uniform, dtype=np.float32)
    radius, angle = uniform[:half], uniform[half:]
    np.subtract(np.float32(1), radius, out=radius)  # (0, 1]: the log is finite
    np.log(radius, out=radius)
    radius *= np.float32(-2)
    np.sqrt(radius, out=radius)
    angle *= np.float32(2 * np.pi)
    np.cos(angle, out=flat[:half])
    flat[:half] *= radius
    rest = size - half  # half, or one fewer for an odd size
    np.sin(angle[:rest], out=flat[half:])
    flat[half:] *= radius[:rest]
