"""Percentile bands of many profiles: numpy's percentiles, column by column, compiled.

``column_percentiles(data, percentiles)`` equals ``numpy.percentile(data, percentiles,
axis=0)`` (the default "linear" method: linear interpolation between order statistics,
Hyndman & Fan 1996 definition 7) bit for bit, without sorting: each column is copied
once and the needed order statistics are found by selection (Hoare's FIND, 1961, with
branch-free Lomuto partitions).

References
----------
Hoare, C. A. R. (1961). Algorithm 65: Find. Communications of the ACM 4(7), 321-322.
Hyndman, R. J. & Fan, Y. (1996). Sample quantiles in statistical packages. The American
Statistician 50(4), 361-365.
"""

from __future__ import annotations

import math

import numpy as np

from rheology.errors import RheologyError
from rheology.physics.compiled import compiled

#: Columns copied together (eight doubles fill one cache line of a row).
_BLOCK = 8


@compiled
def _select(a, lo, hi, k):
    """Reorder a[lo:hi] around its order statistic at index k (Hoare's FIND).

    Afterwards a[k] holds the value a sorted a[lo:hi] would have there, with none larger
    before it and none smaller after it. Partitions are Lomuto's, written without
    branches (the comparison only moves the boundary); values equal to the pivot are
    gathered in a second pass, so ties cost no more than distinct values.
    """
    while hi - lo > 1:
        x, y, z = a[lo], a[(lo + hi) // 2], a[hi - 1]
        pivot = max(min(x, y), min(max(x, y), z))  # median of three
        j = lo
        for i in range(lo, hi):  # a[lo:j] < pivot <= a[j:i]
            value = a[i]
            a[i] = a[j]
            a[j] = value
            j += value < pivot
        if k < j:
            hi = j
            continue
        e = j
        for i in range(j, hi):  # a[j:e] == pivot < a[e:i]
            value = a[i]
            a[i] = a[e]
            a[e] = value
            e += value <= pivot
        if k < e:
            return
        lo = e


@compiled
def _select_all(a, targets):
    """Put the order statistic of every index in the sorted ``targets`` in place.

    The middle target is selected first, so each later selection works on a part only.
    """
    stack = np.empty((2 * targets.size + 2, 4), np.int64)  # lo, hi, first target, end
    stack[0] = (0, a.size, 0, targets.size)
    depth = 1
    while depth:
        depth -= 1
        lo, hi, first, end = stack[depth]
        if first >= end:
            continue
        middle = (first + end) // 2
        k = targets[middle]
        _select(a, lo, hi, k)
        stack[depth] = (lo, k, first, middle)
        stack[depth + 1] = (k + 1, hi, middle + 1, end)
        depth += 2


@compiled
def _percentile_block(data, fractions, start, stop, out):
    """Numpy's linear-method percentiles of the columns start..stop-1 of ``data``."""
    m = data.shape[0]
    block = np.empty((_BLOCK, m))
    below = np.empty(fractions.size, np.int64)
    for i in range(fractions.size):
        below[i] = min(int(math.floor((m - 1) * fractions[i])), m - 1)
    targets = np.unique(below)
    following = np.full(fractions.size, m, np.int64)  # the next placed index after each
    for i in range(fractions.size):
        for k in targets:
            if k > below[i]:
                following[i] = k + 1
                break
    for c0 in range(start, stop, _BLOCK):
        width = min(_BLOCK, stop - c0)
        for r in range(m):  # copy a block of columns, row by row
            for c in range(width):
                block[c, r] = data[r, c0 + c]
        for c in range(width):
            column = block[c]
            _select_all(column, targets)
            for i in range(fractions.size):
                virtual = (m - 1) * fractions[i]
                if virtual >= m - 1:
                    out[i, c0 + c] = column[m - 1]
                    continue
                k = below[i]
                a, b = column[k], np.inf
                for j in range(k + 1, following[i]):  # the next order statistic
                    b = min(b, column[j])
                t = virtual - math.floor(virtual)
                step = b - a
                out[i, c0 + c] = a + step * t if t < 0.5 else b - step * (1 - t)


def column_percentiles(data, percentiles, workers: int = 1) -> np.ndarray:
    """``numpy.percentile(data, percentiles, axis=0)`` for a 2-D array of finite values.

    Parameters
    ----------
    data : array_like (m, n)
        m samples of n quantities (e.g. m realisations of an n-node profile).
    percentiles : sequence of float
        In [0, 100].
    workers : int
        Threads sharing the columns.

    Returns
    -------
    numpy.ndarray (len(percentiles), n)
    """
    data = np.ascontiguousarray(data, dtype=float)
    fractions = np.true_divide(np.asarray(percentiles, float), 100)  # as numpy.percentile
    if data.ndim != 2 or data.shape[0] == 0:
        raise RheologyError(f"data: expected a non-empty 2-D array, got shape {data.shape}")
    if np.any((fractions < 0) | (fractions > 1)):
        raise RheologyError(f"percentiles: got {percentiles!r}; expected values in [0, 100]")
    out = np.empty((fractions.size, data.shape[1]))
    n = data.shape[1]
    bounds = np.linspace(0, n, max(1, min(workers, n)) + 1).astype(int)
    bounds[1:-1] -= bounds[1:-1] % _BLOCK
    parts = list(zip(bounds[:-1], bounds[1:]))
    if len(parts) == 1:
        _percentile_block(data, fractions, 0, n, out)
        return out
    from rheology.uncertainty.montecarlo import chunk_map

    with chunk_map(len(parts)) as mapper:
        list(mapper(lambda part: _percentile_block(data, fractions, *part, out), parts))
    return out
