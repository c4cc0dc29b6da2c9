"""The compiled column scan against the numpy physics it stands for.

The scan adds friction and creep node by node; these checks hold it to
friction.frictional_strength (Byerlee 1978 on Andersonian faults), to the per-point
composite solver creep.composite_stress, and to numpy for the answers it reduces on the
fly (transitions counted from the fields, numpy.trapezoid for the integrated strength).
"""

import numpy as np
import pytest

from rheology.columns import (
    CAPACITY,
    ColumnInputs,
    LawTable,
    node_rows,
    scan_answers,
    scan_fields,
    temperature_fields,
)
from rheology.errors import RheologyError
from rheology.library import get_rock
from rheology.physics import creep, friction

# Gleason & Tullis (1995) wet quartzite, 1.1e-4 MPa^-4 s^-1 = 1.1e-28 Pa^-4 s^-1, n = 4,
# 223 kJ/mol (from memory; the numbers only need to be a realistic power law here)
GT95 = creep.CreepTerm.power_law(1.1e-28, 4.0, 223e3)


def _column(temperature, depth, terms, *, ratio=0.37, regime="thrust", rate=1e-15):
    """One column of one layer on a hand-made grid (rho = 2700 kg/m^3, g = 9.81)."""
    lithostatic = 2700.0 * 9.81 * depth
    slope, intercept = friction.frictional_coefficients(regime)
    table = LawTable.from_terms([terms], [[2] * len(terms)])
    return ColumnInputs(
        size=1,
        depth=node_rows(depth, 1),
        layer=node_rows(np.zeros(depth.size), 1, np.int64),
        **temperature_fields(temperature, 1),
        lithostatic=node_rows(lithostatic, 1),
        pore_pressure=np.zeros((1, depth.size)),
        pore_ratio=np.array([ratio]),
        log_rate=np.array([np.log(rate)]),
        friction=np.array([[slope[0], intercept[0], slope[1], intercept[1]]]),
        laws=table,
    ), lithostatic


def test_fields_equal_the_numpy_friction_and_the_point_solver():
    """Byerlee (1978) friction from friction.frictional_strength and composite creep from
    creep.composite_stress (dry olivine, Hirth & Kohlstedt 2003 dislocation creep with
    Mei et al. 2010 low-temperature plasticity; parameters from memory) at every node."""
    depth = np.linspace(0.0, 80e3, 161)
    temperature = 283.0 + 0.018 * depth
    terms = [law.term(1e-3, None) for law in get_rock("olivine-dry").laws]
    inputs, lithostatic = _column(temperature, depth, terms)
    fields = scan_fields(inputs)
    fluid = 0.37 * lithostatic
    expected_brittle = friction.frictional_strength(lithostatic, fluid, "thrust")
    expected_ductile = creep.composite_stress(1e-15, temperature, lithostatic, terms).stress
    # same formulas in the same order: equal to rounding (1e-12 allows a last-bit change)
    np.testing.assert_allclose(fields["brittle"][0], expected_brittle, rtol=1e-12)
    np.testing.assert_allclose(fields["ductile"][0], expected_ductile, rtol=1e-12)


def test_many_transitions_are_all_found_beyond_the_first_capacity():
    """A temperature that swings up and down makes creep cross friction again and again:
    every switch of the weaker mechanism in the fields is a transition in the answers,
    also past the room the scan first keeps (CAPACITY) - it scans again with more."""
    depth = np.linspace(0.0, 30e3, 3001)
    temperature = 273.0 + 0.02 * depth + 150.0 * np.sin(depth / 150.0)
    inputs, lithostatic = _column(temperature, depth, [GT95])
    fields = scan_fields(inputs)
    wins = fields["brittle"][0] <= fields["ductile"][0]
    switches = int(np.count_nonzero(wins[1:] != wins[:-1]))
    assert switches > CAPACITY
    result = scan_answers(inputs, 10e6, 0.01)
    assert result.answers.count[0] == switches
    assert result.answers.transitions.depth.size == switches
    strength = np.minimum(fields["brittle"][0], fields["ductile"][0])
    # numpy.trapezoid sums pairwise, the scan in order: equal to 1e-12
    assert result.answers.integrated[0] == pytest.approx(np.trapezoid(strength, depth), 1e-12)


def test_a_temperature_not_above_zero_is_an_error_not_a_nan():
    depth = np.linspace(0.0, 10e3, 11)
    temperature = 300.0 - 0.04 * depth  # falls below 0 K at 7.5 km
    inputs, _ = _column(temperature, depth, [GT95])
    with pytest.raises(RheologyError, match="temperature: .* K is not above absolute zero"):
        scan_fields(inputs)


def test_rows_slice_the_per_column_inputs():
    """A chunk of columns equals the same columns of the whole batch."""
    depth = np.linspace(0.0, 40e3, 81)
    temperature = 283.0 + np.array([[0.015], [0.02], [0.025]]) * depth
    inputs, _ = _column(temperature[0], depth, [GT95])
    batch = ColumnInputs(
        **{**inputs.__dict__, "size": 3, **temperature_fields(temperature, 3)},
    )
    whole = scan_fields(batch)
    part = scan_fields(batch.rows(1, 3))
    assert np.array_equal(part["ductile"], whole["ductile"][1:])
