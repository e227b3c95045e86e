"""Work arrays kept from one replicate to the next.

A correlated replicate makes a dozen (items, trials) temporaries. Allocated afresh each
time, the allocator hands many back to the system and the next replicate faults them in
again: about 60,000 page faults and 0.2 s of system time in a 200-item, 100k-trial run.
One workspace per engine thread keeps them.
"""

from __future__ import annotations

import numpy as np


class Workspace:
    def __init__(self) -> None:
        self._arrays: dict[str, np.ndarray] = {}

    def get(self, name: str, shape: tuple[int, ...], dtype: type) -> np.ndarray:
        """The array kept under `name`, made anew only when its shape or type changes;
        whatever it held before is left in it."""
        array = self._arrays.get(name)
        if array is None or array.shape != shape or array.dtype != dtype:
            array = self._arrays[name] = np.empty(shape, dtype=dtype)
        return array
