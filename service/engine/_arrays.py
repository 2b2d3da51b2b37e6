"""Small array helpers shared by the engine modules."""

from __future__ import annotations

import numpy as np


def as_slice(index: np.ndarray) -> slice | np.ndarray:
    """A contiguous run of row numbers as a slice (views instead of copies), else the index."""
    if index.size and int(index[-1]) - int(index[0]) + 1 == index.size:
        return slice(int(index[0]), int(index[-1]) + 1)
    return index
