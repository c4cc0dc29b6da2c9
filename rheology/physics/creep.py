"""Creep strength: power-law creep, low-temperature plasticity, mechanisms in parallel.

Convention (used by every laboratory law in ``reference_tables``): ``stress`` is the
differential stress sigma1 - sigma3 [Pa] and ``strain_rate`` the axial strain rate
[1/s] of a triaxial (or uniaxial) test. The conversion to second invariants, needed
for viscosities, lives in :mod:`rheology.physics.viscosity`.

All functions broadcast over their arguments (depth, realisation...). Temperatures
are kelvin, pressures pascals, grain sizes metres.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from rheology.constants import GAS_CONSTANT
from rheology.errors import RheologyError

#: Solver tolerance on ln(strain rate): 1e-9 means a relative stress error below 1e-9.
_LOG_RATE_TOLERANCE = 1e-9
_MAX_ITERATIONS = 100
#: Lowest stress the solver reports [Pa]: below it a rock is, for envelopes, strengthless.
_LOG_STRESS_FLOOR = np.log(1e-6)


def _check_temperature(temperature):
    temperature = np.asarray(temperature, dtype=float)
    if np.any(~(temperature > 0)):
        bad = temperature[~(temperature > 0)].ravel()[0]
        raise RheologyError(f"temperature: {bad} K is not above absolute zero; expected T > 0 K")
    return temperature


def _check_strain_rate(strain_rate):
    strain_rate = np.asarray(strain_rate, dtype=float)
    if np.any(~(strain_rate > 0)) or np.any(~np.isfinite(strain_rate)):
        bad = strain_rate[~((strain_rate > 0) & np.isfinite(strain_rate))].ravel()[0]
        raise RheologyError(f"strain_rate: {bad} 1/s is invalid; expected a finite rate > 0 1/s")
    return strain_rate


def arrhenius_exponent(temperature, pressure, Q, V):
    """Return (Q + P V) / (R T), the Arrhenius exponent of a thermally activated law.

    Parameters
    ----------
    temperature : array_like
        Temperature [K], > 0.
    pressure : array_like
        Pressure [Pa].
    Q : array_like
        Activation energy [J/mol].
    V : array_like
        Activation volume [m^3/mol].

    Returns
    -------
    numpy.ndarray
        Dimensionless exponent H / (R T) with H = Q + P V the activation enthalpy.
    """
    temperature = _check_temperature(temperature)
    return (np.asarray(Q, float) + np.asarray(pressure, float) * np.asarray(V, float)) / (
        GAS_CONSTANT * temperature
    )


def power_law_strain_rate(
    stress, temperature, pressure, A, n, Q, V=0.0, grain_size=1.0, p=0.0, water=1.0, r=0.0
):
    """Strain rate of power-law creep (dislocation or diffusion creep).

    Parameters
    ----------
    stress : array_like
        Differential stress sigma1 - sigma3 [Pa], >= 0.
    temperature : array_like
        Temperature [K].
    pressure : array_like
        Pressure [Pa] (for the P V term).
    A : array_like
        Pre-exponential factor [Pa^-(n+r) m^p s^-1].
    n : array_like
        Stress exponent (about 3-5 for dislocation creep, 1 for diffusion creep).
    Q : array_like
        Activation energy [J/mol].
    V : array_like, optional
        Activation volume [m^3/mol].
    grain_size : array_like, optional
        Grain size d [m]; used when ``p != 0``.
    p : array_like, optional
        Grain-size exponent (about 2-3 for diffusion creep, 0 for dislocation creep).
    water : array_like, optional
        Water fugacity [Pa] (or OH content) used when ``r != 0``.
    r : array_like, optional
        Water exponent.

    Returns
    -------
    numpy.ndarray
        Axial strain rate [1/s].

    Notes
    -----
    .. math:: \\dot\\varepsilon = A\\,\\sigma^n d^{-p} f_{H_2O}^r \\exp(-(Q + PV)/RT)

    in the triaxial convention (e.g. Hirth & Kohlstedt 2003, eq. 1).

    References
    ----------
    Hirth, G. & Kohlstedt, D. L. (2003). Rheology of the upper mantle and the mantle
    wedge: a view from the experimentalists. In *Inside the Subduction Factory*, AGU
    Geophysical Monograph 138, 83-105.
    """
    exponent = arrhenius_exponent(temperature, pressure, Q, V)
    with np.errstate(divide="ignore"):
        log_rate = (
            np.log(A)
            + np.asarray(n, float) * np.log(np.asarray(stress, float))
            - np.asarray(p, float) * np.log(grain_size)
            + np.asarray(r, float) * np.log(water)
            - exponent
        )
    return np.exp(log_rate)


def power_law_stress(
    strain_rate, temperature, pressure, A, n, Q, V=0.0, grain_size=1.0, p=0.0, water=1.0, r=0.0
):
    """Differential stress [Pa] at which power-law creep runs at ``strain_rate``.

    The inverse of :func:`power_law_strain_rate` (same parameters and units):

    .. math:: \\sigma = (\\dot\\varepsilon d^p / (A f^r))^{1/n} \\exp((Q + PV)/(nRT))

    Cold rock gives a very large stress, or ``inf`` past the float range, never NaN.

    References
    ----------
    Brace, W. F. & Kohlstedt, D. L. (1980). Limits on lithospheric stress imposed by
    laboratory experiments. J. Geophys. Res. 85(B11), 6248-6252.
    """
    strain_rate = _check_strain_rate(strain_rate)
    exponent = arrhenius_exponent(temperature, pressure, Q, V)
    log_prefactor = (
        np.log(A) - np.asarray(p, float) * np.log(grain_size) + np.asarray(r, float) * np.log(water)
    )
    log_stress = (np.log(strain_rate) - log_prefactor + exponent) / np.asarray(n, float)
    with np.errstate(over="ignore"):
        return np.exp(log_stress)


def peierls_strain_rate(
    stress, temperature, pressure, A, n, Q, V, peierls_stress, p, q, min_stress=0.0
):
    """Strain rate of low-temperature (Peierls) plasticity.

    Parameters
    ----------
    stress : array_like
        Differential stress [Pa].
    temperature, pressure : array_like
        [K], [Pa].
    A : array_like
        Pre-exponential factor [Pa^-n s^-1].
    n : array_like
        Stress exponent of the prefactor (0 in the Goetze 1978 form, 2 in Mei et al. 2010).
    Q, V : array_like
        Activation energy [J/mol] and volume [m^3/mol].
    peierls_stress : array_like
        Peierls stress sigma_P [Pa].
    p, q : array_like
        Shape exponents of the obstacle profile (1 and 2 for Goetze; 1/2 and 1 for Mei et al.).
    min_stress : array_like, optional
        Lowest stress at which the law is applied [Pa]; the rate is 0 below it.

    Returns
    -------
    numpy.ndarray
        Axial strain rate [1/s].

    Notes
    -----
    .. math:: \\dot\\varepsilon = A\\sigma^n \\exp[-((Q+PV)/RT)(1-(\\sigma/\\sigma_P)^p)^q]

    Above sigma_P the bracket is taken as zero (glide is no longer thermally activated).

    References
    ----------
    Goetze, C. (1978). The mechanisms of creep in olivine. Phil. Trans. R. Soc. Lond. A
    288, 99-119.
    Mei, S., Suzuki, A. M., Kohlstedt, D. L., Dixon, N. A. & Durham, W. B. (2010).
    Experimental constraints on the strength of the lithospheric mantle. J. Geophys.
    Res. 115, B08204.
    """
    term = CreepTerm.peierls(A, n, Q, V, peierls_stress, p, q, min_stress)
    temperature = _check_temperature(temperature)
    with np.errstate(divide="ignore"):
        log_stress = np.log(np.asarray(stress, float))
    return np.exp(term.log_rate(log_stress, term.prepare(temperature, pressure)))


def peierls_stress_goetze(strain_rate, temperature, pressure, A, Q, V, peierls_stress):
    """Closed-form stress of the Goetze (1978) Peierls law (n = 0, p = 1, q = 2).

    .. math:: \\sigma = \\sigma_P [1 - ((RT/H) \\ln(A/\\dot\\varepsilon))^{1/2}]

    Returns 0 where the law would flow at the given rate with no stress at all.

    References
    ----------
    Goetze, C. (1978), Phil. Trans. R. Soc. Lond. A 288, 99-119; the inverse as used by
    Brace & Kohlstedt (1980), J. Geophys. Res. 85, 6248-6252.
    """
    strain_rate = _check_strain_rate(strain_rate)
    exponent = arrhenius_exponent(temperature, pressure, Q, V)
    ratio = np.log(np.asarray(A, float) / strain_rate) / exponent
    with np.errstate(invalid="ignore"):
        root = np.sqrt(np.clip(ratio, 0.0, 1.0))
    stress = np.asarray(peierls_stress, float) * (1.0 - root)
    return np.where(ratio < 0, np.inf, stress)


@dataclass(frozen=True)
class CreepTerm:
    """One mechanism prepared for :func:`composite_stress`.

    Build with :meth:`power_law` or :meth:`peierls`. Parameters are SI arrays that
    broadcast against the evaluation grid; A already carries grain size and water.
    """

    kind: str
    A: np.ndarray
    n: np.ndarray
    Q: np.ndarray
    V: np.ndarray
    peierls_stress: np.ndarray = np.inf
    p: np.ndarray = 1.0
    q: np.ndarray = 2.0
    min_stress: np.ndarray = 0.0

    @classmethod
    def power_law(cls, A, n, Q, V=0.0):
        """A power-law term: rate = A sigma^n exp(-(Q+PV)/RT) [A in Pa^-n s^-1]."""
        A = np.asarray(A, float)
        if np.any(~(A > 0)) or np.any(~np.isfinite(A)):
            raise RheologyError(f"A: expected a finite pre-exponential factor > 0, got {A}")
        n = np.asarray(n, float)
        if np.any(~(n > 0)):
            raise RheologyError(f"n: expected a stress exponent > 0, got {n}")
        return cls("power", A, n, np.asarray(Q, float), np.asarray(V, float))

    @classmethod
    def peierls(cls, A, n, Q, V, peierls_stress, p, q, min_stress=0.0):
        """A low-temperature plasticity term (see :func:`peierls_strain_rate`)."""
        A = np.asarray(A, float)
        if np.any(~(A > 0)):
            raise RheologyError(f"A: expected a pre-exponential factor > 0, got {A}")
        return cls(
            "peierls",
            A,
            np.asarray(n, float),
            np.asarray(Q, float),
            np.asarray(V, float),
            np.asarray(peierls_stress, float),
            np.asarray(p, float),
            np.asarray(q, float),
            np.asarray(min_stress, float),
        )

    def prepare(self, temperature, pressure):
        """Per-point constants: (ln A - H/RT) for power laws; (ln A, H/RT) for Peierls."""
        exponent = arrhenius_exponent(temperature, pressure, self.Q, self.V)
        if self.kind == "power":
            return (np.log(self.A) - exponent,)
        return (np.log(self.A) + 0.0 * exponent, exponent)

    def log_rate(self, log_stress, prepared, with_slope=False):
        """ln(strain rate) at ln(stress) (and d ln rate / d ln stress if asked)."""
        if self.kind == "power":
            (a,) = prepared
            value = a + self.n * log_stress
            return (value, np.broadcast_to(self.n, value.shape)) if with_slope else value
        a, exponent = prepared
        log_sp = np.log(self.peierls_stress)
        with np.errstate(over="ignore", invalid="ignore"):
            x = np.exp(self.p * (np.minimum(log_stress, log_sp) - log_sp))
            bracket = 1.0 - x
            value = a + self.n * log_stress - exponent * bracket**self.q
            with np.errstate(divide="ignore"):
                floor = np.log(self.min_stress)
            value = np.where(log_stress < floor, -np.inf, value)
            if not with_slope:
                return value
            slope = self.n + exponent * self.q * bracket ** (self.q - 1.0) * self.p * x
        return value, np.where(np.isfinite(slope), slope, self.n)

    def upper_bound(self, log_target, prepared):
        """A ln(stress) at which this term alone reaches the target rate (inf if never)."""
        if self.kind == "power":
            return (log_target - prepared[0]) / self.n
        a = prepared[0]
        log_sp = np.log(self.peierls_stress) + 0.0 * a
        with np.errstate(divide="ignore", invalid="ignore"):
            # at and above sigma_P the rate is A sigma^n
            beyond = np.where(
                self.n > 0,
                (log_target - a) / np.where(self.n > 0, self.n, 1.0),
                np.where(a >= log_target, -np.inf, np.inf),
            )
        return np.maximum(log_sp, beyond)

    def lower_bound(self, log_target, prepared):
        """A ln(stress) below which this term alone cannot reach the target rate."""
        if self.kind == "power":
            return (log_target - prepared[0]) / self.n
        a, exponent = prepared
        with np.errstate(divide="ignore", invalid="ignore"):
            # the Arrhenius bracket is at most 1, so rate >= target needs A sigma^n >= target
            from_prefactor = np.where(
                self.n > 0, (log_target - a) / np.where(self.n > 0, self.n, 1.0), -np.inf
            )
            with np.errstate(divide="ignore"):
                floor = np.log(self.min_stress) + 0.0 * a
        return np.maximum(from_prefactor, floor)


@dataclass(frozen=True)
class CompositeResult:
    """Stress [Pa] of mechanisms in parallel, the dominant one's index, and each term's rate."""

    stress: np.ndarray
    dominant: np.ndarray
    log_rates: np.ndarray


def composite_stress(strain_rate, temperature, pressure, terms):
    """Stress at which mechanisms acting in parallel add up to ``strain_rate``.

    Parameters
    ----------
    strain_rate : array_like
        Total axial strain rate [1/s], > 0.
    temperature, pressure : array_like
        [K], [Pa].
    terms : sequence of CreepTerm
        Mechanisms in parallel; their parameters broadcast against the grid.

    Returns
    -------
    CompositeResult
        ``stress`` [Pa], ``dominant`` (index into ``terms`` of the mechanism carrying the
        largest share of the strain rate) and ``log_rates`` (ln rate of each term at the
        solution, leading axis = term).

    Notes
    -----
    Mechanisms in parallel share the stress and add strain rates (e.g. Frost & Ashby
    1982; Hirth & Kohlstedt 2003):

    .. math:: \\dot\\varepsilon = \\sum_i \\dot\\varepsilon_i(\\sigma)

    The root is found in s = ln sigma, where ln(sum of rates) is monotonic (and convex
    for power laws), by Newton steps kept inside a bracket [lo, hi]: hi is the lowest
    stress at which one term alone reaches the rate, lo the lowest at which one term
    alone reaches rate / N. The iteration works on the whole array at once and drops
    points as they converge. Stress is infinite where no term can reach the rate.

    References
    ----------
    Frost, H. J. & Ashby, M. F. (1982). *Deformation-Mechanism Maps*. Pergamon.
    """
    strain_rate = _check_strain_rate(strain_rate)
    temperature = _check_temperature(temperature)
    if not terms:
        raise RheologyError("terms: expected at least one creep mechanism, got none")
    pressure = np.asarray(pressure, float)
    shape = np.broadcast_shapes(
        strain_rate.shape, temperature.shape, pressure.shape, *(np.shape(t.A) for t in terms)
    )
    log_target = np.broadcast_to(np.log(strain_rate), shape).ravel()
    T = np.broadcast_to(temperature, shape).ravel()
    P = np.broadcast_to(pressure, shape).ravel()
    flat_terms = [_flatten(term, shape) for term in terms]
    prepared = [t.prepare(T, P) for t in flat_terms]
    log_n = np.log(len(terms))

    hi = np.min([t.upper_bound(log_target, c) for t, c in zip(flat_terms, prepared)], axis=0)
    lo = np.min(
        [t.lower_bound(log_target - log_n, c) for t, c in zip(flat_terms, prepared)], axis=0
    )
    lo = np.maximum(np.minimum(lo, hi), _LOG_STRESS_FLOOR)
    s = hi.copy()
    if len(terms) > 1 or flat_terms[0].kind != "power":
        s = _solve(s, lo, hi, log_target, flat_terms, prepared)
    log_rates = np.array([t.log_rate(s, c) for t, c in zip(flat_terms, prepared)])
    dominant = np.argmax(log_rates, axis=0)
    with np.errstate(over="ignore"):
        stress = np.exp(s)
    stress = np.where(s <= _LOG_STRESS_FLOOR, 0.0, stress)
    return CompositeResult(
        stress.reshape(shape), dominant.reshape(shape), log_rates.reshape((len(terms), *shape))
    )


_FIELDS = ("A", "n", "Q", "V", "peierls_stress", "p", "q", "min_stress")


def _flatten(term, shape):
    """Broadcast the term's array parameters to the grid, flattened; scalars stay scalars."""
    fields = {}
    for name in _FIELDS:
        value = np.asarray(getattr(term, name), float)
        fields[name] = value if value.ndim == 0 else np.broadcast_to(value, shape).ravel()
    return CreepTerm(term.kind, **fields)


def _subset(term, index):
    fields = {}
    for name in _FIELDS:
        value = getattr(term, name)
        fields[name] = value if value.ndim == 0 else value[index]
    return CreepTerm(term.kind, **fields)


def _solve(s, lo, hi, log_target, terms, prepared):
    """Bracketed Newton iteration in ln(stress) on the unconverged points.

    The working set (parameters gathered for the points still iterating) is compacted
    only when fewer than half of its points are still live, so each step does not copy
    every array again.
    """
    work = np.flatnonzero(np.isfinite(hi) & (hi > lo))
    s[np.isinf(hi)] = np.inf
    if work.size == s.size:
        sub_terms, sub_prepared = list(terms), [tuple(pre) for pre in prepared]
        sa, la, ha, target = s.copy(), lo.copy(), hi.copy(), log_target
    else:
        sub_terms = [_subset(t, work) for t in terms]
        sub_prepared = [tuple(c[work] for c in pre) for pre in prepared]
        sa, la, ha, target = s[work], lo[work], hi[work], log_target[work]
    live = np.ones(work.size, bool)
    for _ in range(_MAX_ITERATIONS):
        count = int(np.count_nonzero(live))
        if count == 0:
            break
        if count < live.size // 2:  # compact, writing the finished points back first
            s[work[~live]] = sa[~live]
            keep = np.flatnonzero(live)
            work = work[keep]
            sub_terms = [_subset(t, keep) for t in sub_terms]
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
        residual = peak + np.log(total) - target  # ln(sum of rates) - ln(target)
        slope = np.sum(weights * np.array(slopes), axis=0) / total
        done = np.abs(residual) < _LOG_RATE_TOLERANCE
        new_hi = np.where(residual > 0, sa, ha)
        new_lo = np.where(residual < 0, sa, la)
        with np.errstate(divide="ignore", invalid="ignore"):
            step = sa - residual / slope
        inside = (step > new_lo) & (step < new_hi) & np.isfinite(step)
        new = np.where(inside, step, 0.5 * (new_lo + new_hi))
        done |= (new_hi - new_lo) < 1e-12
        move = live & ~done
        sa = np.where(move, new, sa)
        la = np.where(live, new_lo, la)
        ha = np.where(live, new_hi, ha)
        live = move
    s[work] = sa
    return s
