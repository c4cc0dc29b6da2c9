"""Uncertainty of strength envelopes: Monte Carlo over inputs, and many sites at once.

Both build on the engine of single envelopes: per-realisation inputs
(:class:`rheology.envelope.Variation`) go through the numpy physics and the compiled
column scan of :mod:`rheology.columns`, which reduces each realisation to its answers:

* :func:`run_monte_carlo` samples heat flow (or plate age, or gradient), strain rate,
  friction, pore-pressure ratio and each flow law's A, n, Q, V, and returns percentiles
  of every answer, strength bands, the chance of frictional sliding at each depth and a
  sensitivity ranking of the inputs;
* :func:`rheology.uncertainty.sites.process_sites` runs a table of sites over a base
  scenario and writes one row of answers per site.

Results are screening estimates (see :data:`rheology.CAUTION`).
"""

from rheology.uncertainty.montecarlo import (
    ColumnAnswers,
    MatchedTransition,
    MonteCarloResult,
    Quantiles,
    SampledInput,
    Sensitivity,
    SpreadSpec,
    column_answers,
    load_spread,
    run_monte_carlo,
    sample_inputs,
    spread_from_mapping,
    variation_from_columns,
)

__all__ = [
    "ColumnAnswers",
    "MatchedTransition",
    "MonteCarloResult",
    "Quantiles",
    "SampledInput",
    "Sensitivity",
    "SpreadSpec",
    "column_answers",
    "load_spread",
    "run_monte_carlo",
    "sample_inputs",
    "spread_from_mapping",
    "variation_from_columns",
]
