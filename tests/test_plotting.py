"""Tests of rheology.plotting: axes, labels with units, depth downward, the stress cap.

The PNG check uses the file signature and IHDR chunk of the PNG specification
(ISO/IEC 15948:2004 / W3C PNG 2nd ed., sections 5.2 and 11.2.2).
"""

import pathlib
import struct
import subprocess
import sys

import numpy as np
import pytest

import rheology
from rheology import plotting

REPO = pathlib.Path(__file__).resolve().parents[1]
PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"  # PNG spec sec. 5.2


@pytest.fixture(scope="module")
def scenario():
    return rheology.load_scenario(rheology.bundled_example("demo"))


@pytest.fixture(scope="module")
def demo(scenario):
    return rheology.analyse(scenario)


@pytest.fixture(scope="module")
def figure(demo):
    return plotting.strength_figure(demo)


def _texts(figure):
    found = [figure._suptitle.get_text()] if figure._suptitle is not None else []
    for ax in figure.axes:
        found += [t.get_text() for t in ax.texts]
    return found


def test_three_panels_share_a_downward_depth_axis(figure, scenario):
    assert len(figure.axes) == 3
    strength, strip, temperature = figure.axes
    top, bottom = strength.get_ylim()
    assert top > bottom  # inverted: depth increases downward
    assert top == pytest.approx(scenario.max_depth / 1e3) and bottom == 0.0
    for ax in (strip, temperature):
        assert ax.get_ylim() == strength.get_ylim()


def test_every_axis_label_carries_its_unit(figure):
    strength, strip, temperature = figure.axes
    assert "[km]" in strength.get_ylabel()
    assert "[MPa]" in strength.get_xlabel() and "σ1 − σ3" in strength.get_xlabel()
    assert "[°C]" in temperature.get_xlabel()
    assert "[km]" in temperature.get_ylabel()
    assert "nism" in strip.get_xlabel()  # the strip's quantity is the mechanism (no unit)


def test_title_names_scenario_strain_rate_and_regime(figure, scenario):
    title = figure._suptitle.get_text()
    assert scenario.title in title
    assert f"{scenario.strain_rate:.3g} 1/s" in title
    assert "thrust" in title


def test_transitions_and_layers_are_labelled(figure, demo):
    texts = "\n".join(_texts(figure))
    for t in demo.transitions:
        assert f"{t.depth / 1e3:.1f} km" in texts
        assert t.kind in texts
    for layer in demo.scenario.layers:
        assert layer.name in texts
    assert "stress axis ends at" in texts  # the cap is stated on the figure


@pytest.mark.parametrize("with_companion", [False, True])
def test_figure_carries_the_caution_in_a_footer_line(scenario, demo, with_companion):
    """Saved figures travel without the report, so the figure itself says it is a
    screening estimate (the project's caution rule)."""
    from matplotlib.legend import Legend
    from matplotlib.text import Text

    companion = rheology.analyse(scenario, faulting="normal") if with_companion else None
    fig = plotting.strength_figure(demo, companion=companion)
    texts = [t for t in fig.findobj(Text) if t.get_text() == plotting.FOOTER]
    assert len(texts) == 1
    assert "not for design" in plotting.FOOTER and "Screening estimate" in plotting.FOOTER
    # below every panel and the legend, overlapping neither (figure pixels, y up)
    fig.canvas.draw()
    footer_top = texts[0].get_window_extent().y1
    legends = fig.findobj(Legend)
    assert len(legends) == 1
    for artist in [*fig.axes, *legends]:
        assert footer_top < artist.get_window_extent().y0


def test_stress_axis_is_capped_at_a_multiple_of_the_peak_envelope_strength(figure, demo):
    """Common practice of our own: cap at 1.5 x the peak envelope strength."""
    left, right = figure.axes[0].get_xlim()
    assert left == 0.0
    peak = float(np.max(demo.envelope.strength)) / 1e6
    assert right == pytest.approx(plotting.STRESS_CAP_FACTOR * peak)
    # the creep strength near the surface is far above the cap (cold rock)
    assert demo.envelope.ductile[0] / 1e6 > 10 * right


def test_companion_is_drawn_on_the_negative_side(scenario, demo):
    """Extension (normal faulting) negative, compression positive."""
    normal = rheology.analyse(scenario, faulting="normal")
    fig = plotting.strength_figure(demo, companion=normal)
    left, right = fig.axes[0].get_xlim()
    assert left == -right and right > 0
    assert right == pytest.approx(plotting.stress_cap([demo, normal]))
    fills = [
        c for c in fig.axes[0].collections if c.get_paths() and len(c.get_paths()[0].vertices) > 10
    ]
    xs = np.concatenate([c.get_paths()[0].vertices[:, 0] for c in fills])
    assert xs.min() < -1.0 and xs.max() > 1.0  # both envelopes filled, one on each side
    assert "normal" in fig._suptitle.get_text()


def test_normal_regime_alone_is_drawn_on_the_negative_side(scenario):
    normal = rheology.analyse(scenario, faulting="normal")
    left, right = plotting.strength_figure(normal).axes[0].get_xlim()
    assert right == 0.0 and left < 0.0


def test_save_figure_writes_a_png_of_the_expected_size(figure, tmp_path):
    """PNG signature (sec. 5.2) and IHDR width/height (sec. 11.2.2) = inches x dpi."""
    path = tmp_path / "envelope.png"
    plotting.save_figure(figure, path, dpi=100)
    data = path.read_bytes()
    assert data[:8] == PNG_SIGNATURE
    assert data[12:16] == b"IHDR"
    width, height = struct.unpack(">II", data[16:24])
    inches = figure.get_size_inches()
    assert (width, height) == (round(inches[0] * 100), round(inches[1] * 100))
    assert 20_000 < len(data) < 5_000_000  # a real drawing, not a blank or runaway image


def test_physics_does_not_load_matplotlib_and_plotting_avoids_pyplot():
    """Physics modules import no plotting (project layout rule); plotting uses no pyplot."""
    code = (
        "import sys\n"
        "import rheology, rheology.envelope, rheology.answers.report, rheology.scenario\n"
        "s = rheology.load_scenario(rheology.bundled_example('demo'))\n"
        "a = rheology.analyse(s)\n"
        "assert 'matplotlib' not in sys.modules, 'physics imported matplotlib'\n"
        "import rheology.plotting as p\n"
        "p.strength_figure(a)\n"
        "assert 'matplotlib.pyplot' not in sys.modules, 'plotting imported pyplot'\n"
    )
    result = subprocess.run(
        [sys.executable, "-c", code], capture_output=True, text=True, check=False, cwd=REPO
    )
    assert result.returncode == 0, result.stderr
