"""Prototype of a faster composite-creep iteration, to measure a change proposed for creep.py.

Not used by the package. ``rheology.physics.creep._solve`` re-gathers every term's
parameters and prepared constants for the unconverged points on every Newton step
(``_subset`` with fancy indexing, a copy per array per step), including the first step,
where all points are active. :func:`solve_lazy` keeps a working set and compacts it only
when fewer than half of its points are still iterating; the arithmetic of each point is
unchanged, so the stresses are bit-for-bit those of the original (checked by the
benchmark). :func:`patched` swaps it in for a timing run.
"""

from __future__ import annotations

import contextlib

import numpy as np

from rheology.physics import creep

_TOLERANCE = 1e-9


def solve_lazy(s, lo, hi, log_target, terms, prepared, accept=0.0):
    """Drop-in replacement of ``creep._solve`` with lazy compaction of the working set.

    With ``accept`` > 0, a Newton step taken from a point whose residual is below
    ``accept`` is kept without evaluating it again: Newton converges quadratically, so its
    residual is of order residual^2 x (curvature / slope), below the 1e-9 tolerance for
    ``accept`` = 1e-5 (this variant changes results at the 1e-10 level, not bit for bit).
    """
    work = np.flatnonzero(np.isfinite(hi) & (hi > lo))
    s[np.isinf(hi)] = np.inf
    if work.size == s.size:
        sub_terms, sub_prepared = list(terms), [tuple(pre) for pre in prepared]
        sa, la, ha, target = s.copy(), lo.copy(), hi.copy(), log_target
    else:
        sub_terms = [creep._subset(t, work) for t in terms]
        sub_prepared = [tuple(c[work] for c in pre) for pre in prepared]
        sa, la, ha, target = s[work], lo[work], hi[work], log_target[work]
    live = np.ones(work.size, bool)
    for _ in range(creep._MAX_ITERATIONS):
        count = int(np.count_nonzero(live))
        if count == 0:
            break
        if count < live.size // 2:  # compact: write back the finished points first
            s[work[~live]] = sa[~live]
            keep = np.flatnonzero(live)
            work = work[keep]
            sub_terms = [creep._subset(t, keep) for t in sub_terms]
            sub_prepared = [tuple(c[keep] for c in pre) for pre in sub_prepared]
            sa, la, ha, target = sa[keep], la[keep], ha[keep], target[keep]
            live = np.ones(work.size, bool)
        values, slopes = zip(
            *(t.log_rate(sa, c, with_slope=True) for t, c in zip(sub_terms, sub_prepared))
        )
        values = np.array(values)
        peak = np.max(values, axis=0)
        weights = np.exp(values - peak)
        total = weights.sum(axis=0)
        residual = peak + np.log(total) - target
        slope = np.sum(weights * np.array(slopes), axis=0) / total
        done = np.abs(residual) < _TOLERANCE
        new_hi = np.where(residual > 0, sa, ha)
        new_lo = np.where(residual < 0, sa, la)
        with np.errstate(divide="ignore", invalid="ignore"):
            step = sa - residual / slope
        inside = (step > new_lo) & (step < new_hi) & np.isfinite(step)
        new = np.where(inside, step, 0.5 * (new_lo + new_hi))
        done |= (new_hi - new_lo) < 1e-12
        move = live & ~done
        sa = np.where(move, new, sa)
        if accept > 0:
            move &= ~(inside & (np.abs(residual) < accept))
        la = np.where(live, new_lo, la)
        ha = np.where(live, new_hi, ha)
        live = move
    s[work] = sa
    return s


def solve_accepting(s, lo, hi, log_target, terms, prepared):
    """:func:`solve_lazy` that also accepts a Newton step from a residual below 1e-5."""
    return solve_lazy(s, lo, hi, log_target, terms, prepared, accept=1e-5)


@contextlib.contextmanager
def patched(solver=solve_lazy):
    """Use ``solver`` inside ``creep.composite_stress`` for the duration."""
    original = creep._solve
    creep._solve = solver
    try:
        yield
    finally:
        creep._solve = original
