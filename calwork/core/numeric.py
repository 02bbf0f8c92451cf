"""Small numerical helpers shared by every stage (no physics, no calwork imports)."""

from __future__ import annotations

import numpy as np


def median(values) -> float:
    """The median of ``values`` (flattened), exactly as :func:`numpy.median` gives it.

    One partition instead of ``numpy.median``'s general machinery: the same two middle
    values, averaged the same way, and NaN when any value is NaN — several times faster on
    the few-hundred-element arrays of a thermogram, where it is called many times per run.

    Examples
    --------
    >>> median([3.0, 1.0, 2.0]), median([4.0, 1.0, 2.0, 3.0])
    (2.0, 2.5)
    """
    a = np.asarray(values, dtype=float).ravel()
    n = a.size
    if n == 0:
        return float("nan")
    k = n // 2
    if n % 2:
        part = np.partition(a, (k, n - 1))
        middle = part[k]
    else:
        part = np.partition(a, (k - 1, k, n - 1))
        middle = (part[k - 1] + part[k]) / 2.0
    if np.isnan(part[-1]):  # NaN sorts last
        return float("nan")
    return float(middle)


def mean(values) -> float:
    """The mean of a float array, exactly as :func:`numpy.mean` gives it (the same pairwise
    sum divided by the count) without its general machinery — called many times per run.

    Examples
    --------
    >>> mean([1.0, 2.0, 4.0])
    2.3333333333333335
    """
    a = np.asarray(values, dtype=float)
    return float(a.sum() / a.size)
