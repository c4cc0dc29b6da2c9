"""Tests of what `rheology uncertainty` shows: shares in the table and the figure.

No physics is checked here (tests/test_montecarlo.py does that); these are format checks
of our own on small seeded runs of the bundled demo column at a coarse depth step.
"""

import dataclasses

import pytest

import rheology
from rheology.textout import share_text
from rheology.uncertainty.commands import summary_text
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
