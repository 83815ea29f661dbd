"""Deterministic subsamples for statistics and figures that do not scale to every row.

The same inputs always give the same subsample (a fixed seed, indices returned in
their original order), so reruns stay byte-identical and a reviewer can redraw it.
"""

from __future__ import annotations

import numpy as np

SUBSAMPLE_SEED = 20260214


def subsample_indices(n: int, size: int, seed: int = SUBSAMPLE_SEED) -> np.ndarray:
    """Sorted indices of a simple random sample of `size` out of `n` (all when n <= size).

    >>> subsample_indices(5, 10).tolist()
    [0, 1, 2, 3, 4]
    >>> len(subsample_indices(10_000, 300)), subsample_indices(10_000, 3).tolist() == \\
    ...     subsample_indices(10_000, 3).tolist()
    (300, True)
    """
    if n <= size:
        return np.arange(n)
    chosen = np.random.default_rng(seed).choice(n, size=size, replace=False)
    return np.sort(chosen)
