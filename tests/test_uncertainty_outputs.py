"""Tests of what `rheology uncertainty` shows: shares in the table and the figure, notices.

No physics is checked here (tests/test_montecarlo.py does that); these are format checks
of our own on small seeded runs of the bundled demo column at a coarse depth step.
"""

import argparse
import dataclasses
import io

import pytest

import rheology
from rheology.textout import share_text
from rheology.uncertainty.commands import register, summary_text
from rheology.uncertainty.figures import uncertainty_figure
from rheology.uncertainty.montecarlo import SpreadSpec, run_monte_carlo

DEMO = rheology.bundled_example("demo")


@pytest.fixture(scope="module")
def coarse():
    """The demo column on a 500 m grid (enough for format checks, and quick)."""
    return dataclasses.replace(rheology.load_scenario(DEMO), depth_step=500.0)


@pytest.mark.parametrize(
    "fraction, text",
    [
        (0.0, "0%"),
        (0.004, "<1%"),
        (0.005, "<1%"),  # 0.5 would round (half to even) to 0
        (0.006, "1%"),
        (0.37, "37%"),
        (0.994, "99%"),
        (0.995, ">99%"),
        (0.999, ">99%"),
        (1.0, "100%"),
    ],
)
def test_share_text_never_rounds_to_none_or_all(fraction, text):
    assert share_text(fraction) == text


def test_figure_labels_shares_as_the_text_table_does(coarse):
    """A transition found in 99.7 % of runs reads '>99%' in both, never '100%'."""
    result = run_monte_carlo(coarse, SpreadSpec(), samples=8, seed=3, sensitivity=False)
    assert result.transitions
    almost = dataclasses.replace(
        result,
        transitions=tuple(dataclasses.replace(t, fraction=0.997) for t in result.transitions),
    )
    labels = [
        text.get_text()
        for text in uncertainty_figure(almost).axes[0].texts
        if "of runs" in text.get_text()
    ]
    assert labels and all("(>99% of runs)" in label for label in labels)
    table = summary_text(almost)
    assert ">99%" in table
    assert "100%" not in " ".join(labels)


def _run_cli(argv):
    parser = argparse.ArgumentParser()
    register(parser.add_subparsers(dest="command", required=True))
    args = parser.parse_args(argv)
    out, err = io.StringIO(), io.StringIO()
    return args.handler(args, out, err), out.getvalue(), err.getvalue()


def test_no_law_spread_alone_gives_no_misleading_warning():
    """With --no-law-spread the user turned the law spread off: the notice that 'no flow
    law has a published uncertainty' would be wrong, so it is not printed."""
    argv = ["uncertainty", str(DEMO), "--samples", "2", "--seed", "1", "--no-law-spread"]
    code, out, err = _run_cli(argv)
    assert code == 0
    assert "no flow law with a published uncertainty" not in out + err
    assert "inputs varied: none" in out  # the table still says nothing varied


#: One layer with an inline law of invented values and no published uncertainty.
_INLINE = """
title = "Inline test column (invented values)"
strain_rate = "1e-15 1/s"
faulting = "thrust"
max_depth = "40 km"
depth_step = "0.5 km"
pore_pressure_ratio = 0.0

[geotherm]
kind = "linear"
surface_temperature = "10 degC"
gradient = "25 K/km"

[[layers]]
name = "crust"
thickness = "40 km"
density = "2700 kg/m^3"

[layers.dislocation]
A = "1e-4 MPa^-4 s^-1"
n = 4.0
Q = "220 kJ/mol"
"""


def test_law_spread_on_but_no_law_uncertainty_still_warns(tmp_path):
    path = tmp_path / "inline.toml"
    path.write_text(_INLINE, encoding="utf-8")
    argv = ["uncertainty", str(path), "--samples", "2", "--seed", "1"]
    code, out, _ = _run_cli(argv)
    assert code == 0
    assert "warning: no input varies (no spread given and no flow law with a published " in out
    code, out, _ = _run_cli(argv + ["--no-law-spread"])
    assert code == 0 and "warning: no input varies" not in out
