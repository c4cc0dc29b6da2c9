"""Plain scalar Python versions of the envelope arithmetic, for speed comparisons only.

What a user would write by hand: one depth node (or one creep point) at a time, with
``math.exp`` and float arithmetic, a closed-form inverse for a single power law and a
safeguarded Newton iteration in ln(stress) for mechanisms in parallel. The benchmark
runs these on a small subset and scales the time up; it also checks on that subset that
they give the same numbers as the vectorised engine, so the comparison is like for like.

Supports what the benchmark cases use: a layered steady geotherm, a pore-pressure ratio,
Byerlee friction in one Andersonian regime, power-law creep and low-temperature
plasticity (Mei et al. 2010 form) in parallel.
"""

from __future__ import annotations

import math

from rheology.constants import GAS_CONSTANT, GRAVITY

_BYERLEE = ((0.85, 0.0), (0.6, 50e6))


def column_constants(scenario):
    """Per-layer constants of the scenario's column (tops, fluxes, pressures, laws)."""
    g = scenario.geotherm
    layers = []
    top = t_top = sv_top = 0.0
    t_top = g.surface_temperature
    q_top = g.surface_heat_flow
    for index, layer in enumerate(scenario.layers):
        laws = []
        for law in layer.rock.laws:
            factor = law.prefactor(layer.grain_size, layer.water)
            laws.append(
                (
                    law.mechanism == "peierls",
                    float(factor),
                    law.n,
                    law.Q,
                    law.V,
                    law.peierls_stress,
                    law.peierls_p,
                    law.peierls_q,
                    law.min_stress,
                )
            )
        last = index == len(scenario.layers) - 1
        layers.append(
            dict(
                top=top,
                base=math.inf if last else top + layer.thickness,
                t=t_top,
                q=q_top,
                sv=sv_top,
                k=layer.conductivity,
                h=layer.heat_production,
                rho=layer.density,
                laws=laws,
            )
        )
        dz = layer.thickness
        t_top = (
            t_top
            + q_top * dz / layer.conductivity
            - layer.heat_production * dz * dz / (2.0 * layer.conductivity)
        )
        q_top = q_top - layer.heat_production * dz
        sv_top = sv_top + layer.density * GRAVITY * dz
        top += dz
    return layers


def _log_rate(law, s, temperature, pressure):
    """ln(strain rate) and its slope d ln rate / d ln stress of one law at ln stress s."""
    peierls, a, n, q_act, v, sp, p, q, floor = law
    h = (q_act + pressure * v) / (GAS_CONSTANT * temperature)
    if not peierls:
        return math.log(a) + n * s - h, n
    if floor > 0 and s < math.log(floor):  # below the law's lowest applicable stress
        return -math.inf, n
    x = math.exp(p * (min(s, math.log(sp)) - math.log(sp)))
    bracket = 1.0 - x
    value = math.log(a) + n * s - h * bracket**q
    slope = n + h * q * (bracket ** (q - 1.0) if bracket > 0 else 0.0) * p * x
    return value, slope


def creep_stress(laws, strain_rate, temperature, pressure):
    """Composite creep stress [Pa]: closed form for one power law, else Newton in ln stress."""
    target = math.log(strain_rate)
    if len(laws) == 1 and not laws[0][0]:
        _, a, n, q_act, v, *_ = laws[0]
        return (strain_rate / a) ** (1.0 / n) * math.exp(
            (q_act + pressure * v) / (n * GAS_CONSTANT * temperature)
        )
    hi = math.inf
    for law in laws:
        peierls, a, n, q_act, v, sp, *_ = law
        if peierls:
            hi = min(hi, max(math.log(sp), (target - math.log(a)) / n if n > 0 else math.inf))
        else:
            hi = min(
                hi,
                (target - math.log(a) + (q_act + pressure * v) / (GAS_CONSTANT * temperature)) / n,
            )
    lo, s = math.log(1e-6), hi
    for _ in range(100):
        values = [_log_rate(law, s, temperature, pressure) for law in laws]
        peak = max(v for v, _ in values)
        weights = [math.exp(v - peak) for v, _ in values]
        total = sum(weights)
        residual = peak + math.log(total) - target
        if abs(residual) < 1e-9 or hi - lo < 1e-12:
            break
        slope = sum(w * d for w, (_, d) in zip(weights, values) if w > 0) / total
        if residual > 0:
            hi = s
        else:
            lo = s
        step = s - residual / slope
        s = step if lo < step < hi else 0.5 * (lo + hi)
    return math.exp(s)


def envelope_node(layers, z, strain_rate, ratio, regime="thrust"):
    """(temperature [K], frictional [Pa], creep [Pa]) at depth z [m], one node by hand."""
    layer = layers[-1]
    for ly in layers:
        if ly["top"] <= z < ly["base"]:
            layer = ly
            break
    dz = z - layer["top"]
    temperature = (
        layer["t"] + layer["q"] * dz / layer["k"] - layer["h"] * dz * dz / (2.0 * layer["k"])
    )
    sv = layer["sv"] + layer["rho"] * GRAVITY * dz
    effective = sv * (1.0 - ratio)
    brittle = math.inf
    for mu, cohesion in _BYERLEE:
        r = (math.sqrt(1.0 + mu * mu) + mu) ** 2
        if regime == "thrust":
            value = (r - 1.0) * effective + 2.0 * cohesion * math.sqrt(r)
        elif regime == "normal":
            value = (1.0 - 1.0 / r) * effective + 2.0 * cohesion / math.sqrt(r)
        else:
            value = 2.0 * (r - 1.0) / (r + 1.0) * effective + 4.0 * cohesion * math.sqrt(r) / (
                r + 1.0
            )
        brittle = min(brittle, value)
    ductile = creep_stress(layer["laws"], strain_rate, temperature, sv)
    return temperature, brittle, ductile
