"""The one numba setting for the package's compiled functions.

``compiled`` is :func:`numba.njit` with on-disk caching (the first call compiles, later
processes load the cache), the interpreter lock released (chunks run on threads) and
numpy's floating-point error model (division by zero gives inf or NaN, as in numpy,
instead of raising). Compiled code runs on the CPU only.
"""

from __future__ import annotations

import functools

from numba import njit

compiled = functools.partial(njit, cache=True, nogil=True, error_model="numpy")
