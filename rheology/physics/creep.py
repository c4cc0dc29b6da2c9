"""Creep strength: power-law creep, low-temperature plasticity, mechanisms in parallel.

Convention (used by every laboratory law in ``reference_tables``): ``stress`` is the
differential stress sigma1 - sigma3 [Pa] and ``strain_rate`` the axial strain rate
[1/s] of a triaxial (or uniaxial) test. The conversion to second invariants, needed
for viscosities, lives in :mod:`rheology.physics.viscosity`.

All functions broadcast over their arguments (depth, realisation...). Temperatures
are kelvin, pressures pascals, grain sizes metres.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from rheology.constants import GAS_CONSTANT
from rheology.errors import RheologyError
from rheology.physics.compiled import compiled


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
    return np.exp(term.log_rate(log_stress, temperature, pressure))


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

    def log_rate(self, log_stress, temperature, pressure):
        """ln(axial strain rate) at ln(stress) [ln Pa], temperature [K] and pressure [Pa]."""
        exponent = arrhenius_exponent(temperature, pressure, self.Q, self.V)
        log_stress = np.asarray(log_stress, float)
        if self.kind == "power":
            return np.log(self.A) + self.n * log_stress - exponent
        log_sp = np.log(self.peierls_stress)
        with np.errstate(over="ignore", invalid="ignore", divide="ignore"):
            x = np.exp(self.p * (np.minimum(log_stress, log_sp) - log_sp))
            value = np.log(self.A) + self.n * log_stress - exponent * (1.0 - x) ** self.q
            floor = np.log(self.min_stress)
        return np.where(log_stress < floor, -np.inf, value)


@dataclass(frozen=True)
class CompositeResult:
    """Stress [Pa] of mechanisms in parallel and the index of the dominant one."""

    stress: np.ndarray
    dominant: np.ndarray


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
        ``stress`` [Pa] and ``dominant``, the index into ``terms`` of the mechanism
        carrying the largest share of the strain rate.

    Notes
    -----
    Mechanisms in parallel share the stress and add strain rates (e.g. Frost & Ashby
    1982; Hirth & Kohlstedt 2003):

    .. math:: \\dot\\varepsilon = \\sum_i \\dot\\varepsilon_i(\\sigma)

    Each point is solved by the compiled :func:`solve_log_stress`. Stress is infinite
    where no term can reach the rate, and 0 below 1e-6 Pa.

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
        strain_rate.shape,
        temperature.shape,
        pressure.shape,
        *(np.shape(getattr(t, name)) for t in terms for name in TERM_FIELDS),
    )
    size = int(np.prod(shape))
    table = term_table(terms, shape)
    log_stress, dominant = _solve_points(
        np.broadcast_to(np.log(strain_rate), shape).ravel(),
        np.broadcast_to(temperature, shape).ravel(),
        np.broadcast_to(pressure, shape).ravel(),
        size,
        *table,
    )
    return CompositeResult(stress_from_log(log_stress).reshape(shape), dominant.reshape(shape))


#: Fields of a :class:`CreepTerm`, in the order of :func:`term_table`.
TERM_FIELDS = ("A", "n", "Q", "V", "peierls_stress", "p", "q", "min_stress")
_POWER, _PEIERLS = 0, 1


def term_table(terms, shape=()):
    """Pack creep terms for the compiled solver.

    Returns ``(kind, log_A, n, Q, V, log_peierls, p, q, log_min)``: ``kind`` (K,) int64
    (0 power law, 1 Peierls) and eight float arrays (K, M), M = 1 when every term's
    value is one number, else the flattened ``shape`` (values broadcast to it).
    """
    kind = np.array([_POWER if t.kind == "power" else _PEIERLS for t in terms], np.int64)
    size = int(np.prod(shape))
    columns = []
    with np.errstate(divide="ignore"):
        for name in TERM_FIELDS:
            values = [np.asarray(getattr(t, name), float) for t in terms]
            if name in ("A", "peierls_stress", "min_stress"):
                values = [np.log(v) for v in values]
            if all(v.ndim == 0 for v in values):
                columns.append(np.array(values, float).reshape(-1, 1))
            else:
                columns.append(np.stack([np.broadcast_to(v, shape).ravel() for v in values]))
    if any(c.shape[1] not in (1, size) for c in columns):
        raise RheologyError("terms: parameters do not broadcast against the grid")
    return (kind, *columns)


def stress_from_log(log_stress):
    """Stress [Pa] from ln(stress): 0 at or below the solver floor, inf above the range."""
    with np.errstate(over="ignore"):
        stress = np.exp(log_stress)
    return np.where(log_stress <= LOG_STRESS_FLOOR, 0.0, stress)


# ------------------------------------------------------------------ compiled solver
#
# Scalar functions compiled with numba: one point at a time, called in a loop over points
# by composite_stress and, node by node, by the column scans of rheology.columns. The
# one solver serves both, so a batch of columns gives the single column's numbers.

#: Solver tolerance on ln(strain rate): 1e-9 means a relative stress error below 1e-9.
LOG_RATE_TOLERANCE = 1e-9
MAX_ITERATIONS = 100
#: Lowest stress the solver reports [Pa]: below it a rock is, for envelopes, strengthless.
LOG_STRESS_FLOOR = math.log(1e-6)
#: A term whose rate is below exp(-40) of the largest one adds nothing in double precision.
NEGLIGIBLE = 40.0


@compiled
def arrhenius(Q, V, pressure, temperature):
    """(Q + P V) / (R T) for one point (compiled; see :func:`arrhenius_exponent`)."""
    return (Q + pressure * V) / (GAS_CONSTANT * temperature)


@compiled
def term_log_rate(kind, s, a, H, n, log_sp, p, q, log_min):
    """ln(rate) of one term at ln(stress) ``s``, and its slope d ln(rate) / d ln(stress).

    ``a`` is ln A - H for a power law and ln A for a Peierls term, H = (Q + PV)/RT.
    """
    if kind == _POWER:
        return a + n * s, n  # ln of A sigma^n exp(-H)
    if s < log_min:
        return -np.inf, n  # below the stress where the law applies
    if s >= log_sp:
        return a + n * s, n  # above sigma_P the bracket is zero
    x = math.exp(p * (s - log_sp))  # (sigma / sigma_P)^p
    bracket = 1.0 - x
    if q == 1.0:
        power, slope = bracket, 1.0
    elif q == 2.0:
        power, slope = bracket * bracket, 2.0 * bracket
    else:
        power, slope = bracket**q, q * bracket ** (q - 1.0)
    return a + n * s - H * power, n + H * slope * p * x  # Goetze 1978; Mei et al. 2010


@compiled
def power_law_log_stress(target, a, n):
    """ln(stress) of one power law at ln(rate) ``target``; ``a`` = ln A - H (closed form)."""
    return (target - a) / n  # Brace & Kohlstedt (1980)


#: Columns of the work array of :func:`solve_log_stress` (one row per term).
KIND, A_TERM, H_TERM, N_TERM, LOG_SP, P_TERM, Q_TERM, LOG_MIN, VALUE, SLOPE = range(10)
WORK_COLUMNS = 10


@compiled
def _upper_bound(kind, target, a, n, log_sp):
    """ln(stress) at which a term alone reaches ln(rate) ``target``: no root lies above."""
    if kind == _POWER:
        return power_law_log_stress(target, a, n)
    if n > 0:  # at and above sigma_P the rate is A sigma^n
        return max(log_sp, (target - a) / n)
    return log_sp if a >= target else np.inf  # the rate never exceeds A


@compiled
def _lower_bound(kind, target, a, n, log_min):
    """ln(stress) below which a term alone cannot reach ln(rate) ``target``."""
    if kind == _POWER:
        return power_law_log_stress(target, a, n)
    if n > 0:  # the Arrhenius bracket is at most 1: rate <= A sigma^n
        return max((target - a) / n, log_min)
    return log_min


@compiled(inline="always")
def solve_log_stress(target, work, first, count):
    """ln(stress) at which terms ``first .. first+count-1`` add up to the rate exp(target).

    ``work`` holds one row per term (columns :data:`KIND` ... :data:`SLOPE`: kind, a, H,
    n, ln sigma_P, p, q, ln lowest stress, then two scratch columns; a and H as in
    :func:`term_log_rate`). Returns ln(stress) and the row of the dominant term.

    The root is found in s = ln(stress), where ln(sum of rates) is monotonic (and convex
    for power laws), by Newton steps kept inside a bracket [lo, hi]: hi is the lowest
    stress at which one term alone reaches the rate, lo the lowest at which one term
    alone reaches rate / count. Newton steps that leave the bracket are replaced by
    bisection. Where a Peierls term switches on (its lowest stress) the total rate jumps:
    that stress is tried first, and a target rate inside the jump gives that stress. A
    single power law is its closed form (Brace & Kohlstedt 1980).
    """
    if count == 1 and work[first, KIND] == _POWER:
        return power_law_log_stress(target, work[first, A_TERM], work[first, N_TERM]), first
    hi = np.inf
    for t in range(first, first + count):
        upper = _upper_bound(
            int(work[t, KIND]), target, work[t, A_TERM], work[t, N_TERM], work[t, LOG_SP]
        )
        hi = min(hi, upper)
    lo, s, hi_top, tested = -np.inf, hi, first, 0
    at_edge = below_edge = False
    for iteration in range(MAX_ITERATIONS):
        # ln(sum of the rates) at s, its slope and the largest term (one place, no calls
        # with arrays: this loop is the hot path of every envelope)
        peak, top = -np.inf, first
        for t in range(first, first + count):
            value, slope = term_log_rate(
                int(work[t, KIND]),
                s,
                work[t, A_TERM],
                work[t, H_TERM],
                work[t, N_TERM],
                work[t, LOG_SP],
                work[t, P_TERM],
                work[t, Q_TERM],
                work[t, LOG_MIN],
            )
            work[t, VALUE], work[t, SLOPE] = value, slope
            if value > peak:
                peak, top = value, t
        total, slope = -np.inf, np.nan
        if peak > -np.inf:
            weight, weighted = 1.0, work[top, SLOPE]  # rates relative to the largest
            for t in range(first, first + count):
                if t != top and work[t, VALUE] >= peak - NEGLIGIBLE:
                    w = math.exp(work[t, VALUE] - peak)
                    weight += w
                    weighted += w * work[t, SLOPE]
            total, slope = peak, weighted
            if weight != 1.0:
                total, slope = peak + math.log(weight), weighted / weight
        residual = total - target  # ln(sum of rates) - ln(target)
        if below_edge:  # just below an edge where the total rate passed the target
            if residual < 0:
                return hi, hi_top  # the target lies inside the jump
            below_edge = False
        if abs(residual) < LOG_RATE_TOLERANCE:
            return s, top
        if iteration == 0:  # at hi
            if not hi < np.inf:
                return s, top  # no term reaches the rate
            hi_top, low = top, np.inf
            for t in range(first, first + count):
                lower = _lower_bound(
                    int(work[t, KIND]),
                    target - math.log(count),
                    work[t, A_TERM],
                    work[t, N_TERM],
                    work[t, LOG_MIN],
                )
                low = min(low, lower)
            lo = max(min(low, hi), LOG_STRESS_FLOOR)
            if not hi > lo:
                return s, top
        if residual > 0:
            hi, hi_top = s, top
        elif residual < 0:
            lo = s
        if hi - lo < 1e-12:
            return s, top
        if at_edge and residual > 0:  # the rate passed the target at an edge: look below
            at_edge, below_edge = False, True
            s = np.nextafter(s, -np.inf)
            continue
        at_edge = False
        for t in range(first, first + count):  # an untested edge inside the bracket first
            edge, bit = work[t, LOG_MIN], 1 << (t - first)
            if work[t, KIND] != _POWER and not tested & bit and lo <= edge < hi:
                tested |= bit
                at_edge = True
                s = edge
                break
        if not at_edge:
            step = s - residual / slope
            s = step if lo < step < hi else 0.5 * (lo + hi)
    return s, top


@compiled
def set_law(work, t, kind, n, log_sp, p, q, log_min):
    """Fill the parts of row ``t`` of a solver work array that do not depend on (P, T)."""
    work[t, KIND] = kind
    work[t, N_TERM] = n
    work[t, LOG_SP] = log_sp
    work[t, P_TERM] = p
    work[t, Q_TERM] = q
    work[t, LOG_MIN] = log_min


@compiled
def set_term(work, t, kind, log_A, n, Q, V, log_sp, p, q, log_min, pressure, temperature):
    """Fill row ``t`` of a solver work array for one term at (pressure [Pa], T [K])."""
    set_law(work, t, kind, n, log_sp, p, q, log_min)
    H = arrhenius(Q, V, pressure, temperature)
    work[t, A_TERM] = log_A - H if kind == _POWER else log_A
    work[t, H_TERM] = H


@compiled
def _solve_points(
    log_target, temperature, pressure, size, kind, log_A, n, Q, V, log_sp, p, q, log_min
):
    """solve_log_stress at every point; term parameters (K, 1) or (K, size)."""
    count = kind.size
    work = np.empty((count, WORK_COLUMNS))
    out = np.empty(size)
    dominant = np.empty(size, np.int64)
    for i in range(size):
        for t in range(count):
            set_term(
                work,
                t,
                kind[t],
                log_A[t, min(i, log_A.shape[1] - 1)],
                n[t, min(i, n.shape[1] - 1)],
                Q[t, min(i, Q.shape[1] - 1)],
                V[t, min(i, V.shape[1] - 1)],
                log_sp[t, min(i, log_sp.shape[1] - 1)],
                p[t, min(i, p.shape[1] - 1)],
                q[t, min(i, q.shape[1] - 1)],
                log_min[t, min(i, log_min.shape[1] - 1)],
                pressure[i],
                temperature[i],
            )
        out[i], dominant[i] = solve_log_stress(log_target[i], work, 0, count)
    return out, dominant
