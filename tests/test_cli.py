"""Tests of the command line (rheology.cli): outputs, the JSON contract, errors, exit codes.

External references used here:

* JSON, RFC 8259 (2017) sec. 6 (no NaN/Infinity), parsed with the standard library;
* PNG signature and IHDR chunk, ISO/IEC 15948:2004 (W3C PNG 2nd ed.) sec. 5.2 and 11.2.2;
* the triaxial-to-invariant conversion A_II = 0.5 * 3^((n+1)/2) * A and
  F2 = 2^((1-n)/n) / 3^((n+1)/(2n)) = 0.3029 for n = 3 (standard result; Gerya 2019
  ch. 6 and Ranalli 1995, from memory), worked by hand: with tau_II = sigma_d/sqrt(3)
  and edot_II = (sqrt(3)/2) edot_ax, the law edot_ax = A sigma_d^n becomes
  edot_II = (sqrt(3)/2) A (sqrt(3) tau_II)^n = 0.5 * 3^((n+1)/2) A tau_II^n; then
  eta = tau_II / (2 edot_II) = 0.5 A_II^(-1/n) edot_II^((1-n)/n)
  = F2 A^(-1/n) edot_II^((1-n)/n), so F2 = 0.5 * 2^(1/n) / 3^((n+1)/(2n));
* the Maxwell time t_M = eta / G (Turcotte & Schubert 2002, *Geodynamics*, 2nd ed.,
  sec. 7.10, from memory) for the direction of the point command's verdicts;
* Byerlee (1978) friction for the "breaks" case (a load far above the frictional
  strength of the demo column at 12 km).
"""

import argparse
import json
import math
import os
import pathlib
import re
import struct
import subprocess
import sys
from dataclasses import replace

import numpy as np
import pandas as pd
import pytest

import rheology
from rheology import cli
from rheology.library.tables import load_flow_laws, load_rocks
from rheology.scenario import bundled_example, list_examples

REPO = pathlib.Path(__file__).resolve().parents[1]
DEMO = bundled_example("demo")
PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"


def _strict_json(text):
    def refuse(name):
        raise AssertionError(f"non-standard JSON constant {name}")

    return json.loads(text, parse_constant=refuse)


def run(capsys, *argv):
    code = cli.main([str(a) for a in argv])
    captured = capsys.readouterr()
    assert "Traceback" not in captured.out + captured.err
    return code, captured.out, captured.err


def _check_contract(data):
    """The fixed JSON contract of `rheology envelope --json`."""
    for key in ("transitions", "integrated_strength_TN_per_m", "profile"):
        assert key in data, key
    profile = data["profile"]
    required = (
        "depth_km",
        "temperature_C",
        "pressure_MPa",
        "brittle_MPa",
        "ductile_MPa",
        "strength_MPa",
        "mechanism",
    )
    for key in required:
        assert key in profile, key
    lengths = {len(values) for values in profile.values()}
    assert len(lengths) == 1 and lengths.pop() > 1
    depth = np.array(profile["depth_km"], float)
    assert np.all(np.diff(depth) >= 0), "depth_km must be non-decreasing"
    assert set(profile["mechanism"]) <= set(rheology.MECHANISMS)
    for brittle, ductile, strength in zip(
        profile["brittle_MPa"], profile["ductile_MPa"], profile["strength_MPa"]
    ):
        b = math.inf if brittle is None else brittle
        d = math.inf if ductile is None else ductile
        assert strength == min(b, d)
    depths = [t["depth_km"] for t in data["transitions"]]
    assert depths == sorted(depths), "transitions must be shallow first"
    for t in data["transitions"]:
        for key in (
            "depth_km",
            "temperature_C",
            "kind",
            "stress_MPa",
            "layer_above",
            "layer_below",
            "at_boundary",
        ):
            assert key in t, key
    assert isinstance(data["integrated_strength_TN_per_m"], float)


# ------------------------------------------------------------------ envelope --json


def test_envelope_json_in_a_real_subprocess():
    """`python -m rheology envelope examples/demo.toml --json` prints one JSON object."""
    env = dict(os.environ, PYTHONPATH=str(REPO))
    result = subprocess.run(
        [sys.executable, "-m", "rheology", "envelope", "examples/demo.toml", "--json"],
        capture_output=True,
        text=True,
        cwd=REPO,
        env=env,
        check=False,
    )
    assert result.returncode == 0, result.stderr
    assert "Traceback" not in result.stderr
    data = _strict_json(result.stdout)  # the whole of stdout is one JSON object
    _check_contract(data)
    assert data["title"] == rheology.load_scenario(DEMO).title


@pytest.mark.parametrize("name", list_examples())
def test_json_contract_holds_for_every_example(capsys, name):
    code, out, err = run(capsys, "envelope", bundled_example(name), "--json")
    assert code == 0, err
    _check_contract(_strict_json(out))


def test_envelope_text_report_has_every_part(capsys):
    code, out, err = run(capsys, "envelope", DEMO)
    assert code == 0, err
    analysis = rheology.analyse(rheology.load_scenario(DEMO))
    assert out.startswith(analysis.scenario.title)
    assert "inputs: thrust faulting, strain rate 1e-15 1/s" in out
    assert "depth km" in out and "T degC" in out and "stress MPa" in out
    for t in analysis.transitions:
        assert f"{t.depth / 1e3:.2f}" in out and t.kind in out
    assert "semi-brittle band" in out
    assert f"{analysis.integrated / 1e12:.3g} TN/m" in out
    for name in analysis.integrated_by_layer:
        assert name in out
    assert f"Te: {analysis.elastic.te / 1e3:.1f} km" in out
    assert "Faults expected down to about" in out
    assert out.count(rheology.CAUTION) == 1
    assert "caution: " + rheology.CAUTION in out


def test_strain_rate_and_faulting_options_replace_the_scenario_values(capsys):
    code, out, _ = run(
        capsys, "envelope", DEMO, "--json", "--faulting", "normal", "--strain-rate", "1e-13 1/s"
    )
    assert code == 0
    data = _strict_json(out)
    assert data["faulting"] == "normal"
    assert data["strain_rate_per_s"] == pytest.approx(1e-13, rel=1e-15)
    # a bare number is taken in 1/s
    code, out, _ = run(capsys, "envelope", DEMO, "--json", "--strain-rate", "1e-13")
    assert _strict_json(out)["strain_rate_per_s"] == pytest.approx(1e-13, rel=1e-15)


def test_faster_strain_rate_deepens_the_first_transition(capsys):
    """Creep strength rises with strain rate (power law, Brace & Kohlstedt 1980), so the
    first brittle-to-ductile transition moves deeper."""
    depths = []
    for rate in ("1e-17 1/s", "1e-12 1/s"):
        code, out, _ = run(capsys, "envelope", DEMO, "--json", "--strain-rate", rate)
        first = next(
            t for t in _strict_json(out)["transitions"] if t["kind"] == "brittle-to-ductile"
        )
        depths.append(first["depth_km"])
    assert depths[1] > depths[0]


def test_both_regimes_adds_the_opposite_regime(capsys, tmp_path):
    png = tmp_path / "both.png"
    code, out, err = run(capsys, "envelope", DEMO, "--json", "--both-regimes", "--plot", png)
    assert code == 0, err
    data = _strict_json(out)
    assert data["faulting"] == "thrust"
    assert data["opposite_regime"]["faulting"] == "normal"
    _check_contract(data["opposite_regime"])
    assert png.read_bytes()[:8] == PNG_SIGNATURE
    assert "figure written to" in err  # notices go to stderr when stdout is JSON


def test_csv_reads_back_with_the_numbers_of_the_json(capsys, tmp_path):
    path = tmp_path / "profile.csv"
    code, out, err = run(capsys, "envelope", DEMO, "--json", "--csv", path)
    assert code == 0, err
    data = _strict_json(out)
    frame = pd.read_csv(path, comment="#")
    pairs = {
        "depth [km]": "depth_km",
        "temperature [degC]": "temperature_C",
        "lithostatic pressure [MPa]": "pressure_MPa",
        "brittle strength [MPa]": "brittle_MPa",
        "ductile strength [MPa]": "ductile_MPa",
        "strength [MPa]": "strength_MPa",
    }
    for column, key in pairs.items():
        # both are full-precision decimal renderings of the same floats: allow one ulp
        np.testing.assert_allclose(
            frame[column].to_numpy(), data["profile"][key], rtol=2e-16, err_msg=column
        )
    assert frame["mechanism"].tolist() == data["profile"]["mechanism"]


def test_plot_writes_a_png(capsys, tmp_path):
    """PNG signature (sec. 5.2); IHDR size = 11 x 7.6 in at 150 dpi (sec. 11.2.2)."""
    path = tmp_path / "envelope.png"
    code, out, err = run(capsys, "envelope", DEMO, "--plot", path)
    assert code == 0, err
    data = path.read_bytes()
    assert data[:8] == PNG_SIGNATURE and data[12:16] == b"IHDR"
    width, height = struct.unpack(">II", data[16:24])
    assert (width, height) == (1650, 1140)
    assert 20_000 < len(data) < 5_000_000
    assert f"figure written to {path}" in out


# ------------------------------------------------------------------------- errors


def _demo_text():
    return DEMO.read_text(encoding="utf-8")


BAD_SCENARIOS = {
    "missing key": (lambda t: re.sub(r"(?m)^strain_rate = .*\n", "", t), "strain_rate"),
    "unknown geotherm kind": (
        lambda t: t.replace('kind = "layered-steady"', 'kind = "lukewarm"'),
        "geotherm.kind",
    ),
    "wrong units": (
        lambda t: t.replace('thickness = "15 km"', 'thickness = "15 kg"', 1),
        r"layers\[0\]\.thickness",
    ),
    "negative thickness": (
        lambda t: t.replace('thickness = "15 km"', 'thickness = "-15 km"', 1),
        r"layers\[0\]\.thickness",
    ),
    "malformed TOML": (
        lambda t: t.replace('faulting = "thrust"', 'faulting = "thrust'),
        "malformed TOML",
    ),
    "unknown rock": (lambda t: t.replace('rock = "quartzite-wet"', 'rock = "cheese"'), "cheese"),
}


@pytest.mark.parametrize("case", sorted(BAD_SCENARIOS))
def test_bad_scenario_file_gives_one_error_line_and_exit_2(capsys, tmp_path, case):
    edit, expected = BAD_SCENARIOS[case]
    path = tmp_path / "bad.toml"
    text = edit(_demo_text())
    assert text != _demo_text()
    path.write_text(text, encoding="utf-8")
    code, out, err = run(capsys, "envelope", path)
    assert code == 2
    assert out == ""
    assert err.startswith("error: ") and err.count("\n") == 1
    assert re.search(expected, err), err


def test_implausible_values_are_one_warning_line_each(capsys, tmp_path):
    """Ranges of rheology/plausibility.py (common practice); the run still completes."""
    path = tmp_path / "slip.toml"
    text = _demo_text().replace('density = "2700 kg/m^3"', 'density = "2.7 kg/m^3"')
    assert text != _demo_text()
    path.write_text(text, encoding="utf-8")
    code, out, err = run(capsys, "envelope", path, "--strain-rate", "1e-40")
    assert code == 0 and out
    assert err.splitlines() == [
        "warning: layers[0].density: 2.7 kg/m^3 is far below rock densities "
        "(1000-4500 kg/m^3); was it g/cm^3?",
        "warning: --strain-rate: 1e-40 is far below geological and laboratory strain rates "
        "(1e-20 to 1e-2 1/s)",
    ]


def test_missing_file_is_an_error_line(capsys, tmp_path):
    missing = tmp_path / "SCENARIO.toml"
    code, out, err = run(capsys, "envelope", missing)
    assert code == 2
    assert err == f"error: {missing}: no such file\n"


USAGE_ERRORS = {
    "missing scenario": (["envelope"], "envelope", r"required: SCENARIO\.toml"),
    "unknown command": (["nonsense"], "", r"invalid choice: 'nonsense'"),
    "bad choice": (
        ["envelope", DEMO, "--faulting", "sideways"],
        "envelope",
        r"argument --faulting: invalid choice: 'sideways'",
    ),
    "no command": ([], "", r"required: COMMAND"),
    "bad number in a subcommand of rheology.uncertainty": (
        ["uncertainty", DEMO, "--samples", "many"],
        "uncertainty",
        r"argument --samples: 'many' is not a whole number",
    ),
    "fraction where a whole number is expected": (
        ["sites", "s.csv", "--scenario", DEMO, "--out", "o.csv", "--chunk", "1.5"],
        "sites",
        r"argument --chunk: '1\.5' is not a whole number",
    ),
}


@pytest.mark.parametrize("case", sorted(USAGE_ERRORS))
def test_usage_errors_are_one_error_line_and_exit_2(capsys, case):
    """No usage block: one `error:` line, then one line pointing to --help."""
    argv, command, expected = USAGE_ERRORS[case]
    code, out, err = run(capsys, *argv)
    assert code == 2 and out == ""
    first, second = err.splitlines()
    assert first.startswith("error: ") and re.search(expected, first), err
    assert second == f"try '{' '.join(['rheology', command]).strip()} --help'"
    assert "usage:" not in err


def test_api_checks_are_reported_with_the_option_names(capsys):
    """The Monte Carlo API says 'samples: ...'; the command line says '--samples: ...'."""
    code, _, err = run(capsys, "uncertainty", DEMO, "--samples", "1")
    assert code == 2 and err == "error: --samples: got 1; expected a whole number >= 2\n"
    code, _, err = run(capsys, "uncertainty", DEMO, "--samples", "2", "--workers", "0")
    assert code == 2 and err.startswith("error: --workers: got 0;")


def test_whole_numbers_may_be_written_in_float_notation():
    from rheology.textout import whole_number

    assert whole_number("1000") == 1000
    assert whole_number("1e3") == 1000 and isinstance(whole_number("1e3"), int)
    assert whole_number("1.5e3") == 1500
    for text in ("1.5", "1e-3", "nan", "inf", "1e400", "ten"):
        with pytest.raises(argparse.ArgumentTypeError, match=f"{re.escape(repr(text))} is not"):
            whole_number(text)


def test_help_exits_0(capsys):
    code, out, _ = run(capsys, "--help")
    assert code == 0 and "envelope" in out and "point" in out


def test_bad_option_value_is_an_error_line(capsys):
    code, _, err = run(capsys, "envelope", DEMO, "--strain-rate", "5 km")
    assert code == 2 and err.startswith("error: --strain-rate:")
    code, _, err = run(capsys, "point", DEMO, "--depth", "12")
    assert code == 2 and re.match(r"error: --depth: '12' has no units", err)


def test_unexpected_exception_is_an_internal_error_without_traceback(capsys, monkeypatch):
    from rheology.answers import report

    def broken(*args, **kwargs):
        raise ZeroDivisionError("simulated fault")

    monkeypatch.setattr(report, "analyse", broken)
    code, out, err = run(capsys, "envelope", DEMO)
    assert code == 1
    assert err == "internal error: ZeroDivisionError: simulated fault (please report it)\n"


@pytest.mark.parametrize(
    "argv",
    [
        ["envelope", DEMO],
        ["envelope", DEMO, "--both-regimes"],
        ["demo"],
        ["uncertainty", DEMO, "--samples", "2", "--seed", "1"],
    ],
)
def test_unknown_figure_format_is_an_error_line_before_any_work(capsys, tmp_path, argv):
    target = tmp_path / "figure.xyz"
    code, out, err = run(capsys, *argv, "--plot", target)
    assert code == 2 and out == ""
    assert err.startswith(f"error: --plot: '{target}': '.xyz' is not a figure format")
    assert "png" in err and "svg" in err and err.count("\n") == 1
    assert not target.exists()


def test_figure_format_is_recognised_whatever_the_case_of_the_suffix(capsys, tmp_path):
    path = tmp_path / "envelope.PNG"
    code, _, err = run(capsys, "envelope", DEMO, "--plot", path)
    assert code == 0, err
    assert path.read_bytes()[:8] == PNG_SIGNATURE


def test_unwritable_output_is_an_error_line(capsys, tmp_path):
    target = tmp_path / "no-such-dir" / "profile.csv"
    code, _, err = run(capsys, "envelope", DEMO, "--csv", target)
    assert code == 2 and err.startswith("error: ") and "no-such-dir" in err


# -------------------------------------------------------------------------- point


def _verdict(capsys, depth, stress, duration):
    code, out, err = run(
        capsys,
        "point",
        DEMO,
        "--depth",
        depth,
        "--stress",
        stress,
        "--duration",
        duration,
        "--json",
    )
    assert code == 0, err
    return _strict_json(out)


def test_point_reports_mechanism_and_strengths(capsys):
    code, out, err = run(capsys, "point", DEMO, "--depth", "12 km")
    assert code == 0, err
    answer = rheology.point_answer(rheology.load_scenario(DEMO), 12e3)
    assert answer.mechanism in out and answer.layer in out
    assert "caution: " in out
    code, out, _ = run(capsys, "point", DEMO, "--depth", "12 km", "--json")
    data = _strict_json(out)
    assert data["depth_km"] == pytest.approx(12.0, rel=1e-15)
    assert data["load"] is None


def test_point_load_outcome_changes_in_the_expected_direction(capsys):
    """Maxwell-time reasoning (Turcotte & Schubert 2002, sec. 7.10, from memory): a load
    much shorter than t_M stays elastic, a long one flows; a stress above the frictional
    strength (Byerlee 1978) breaks the rock."""
    outcomes = {"stays elastic", "breaks (frictional failure)", "flows (creep)"}
    short = _verdict(capsys, "12 km", "150 MPa", "1 yr")
    assert short["load"]["outcome"] == "stays elastic"
    maxwell = short["load"]["maxwell_time_yr"]
    assert maxwell > 10.0  # the elastic case is short against t_M
    long = _verdict(capsys, "12 km", "150 MPa", f"{100 * maxwell:g} yr")
    assert long["load"]["outcome"] == "flows (creep)"
    huge = _verdict(capsys, "12 km", "5000 MPa", "1 yr")
    assert huge["brittle_MPa"] < 5000
    assert huge["load"]["outcome"] == "breaks (frictional failure)"
    hot = _verdict(capsys, "60 km", "5 MPa", "1e6 yr")
    assert hot["temperature_C"] > 900  # deep in the mantle of the demo column
    assert hot["load"]["outcome"] == "flows (creep)"
    assert {short["load"]["outcome"], long["load"]["outcome"], huge["load"]["outcome"]} <= outcomes


def test_point_needs_both_stress_and_duration(capsys):
    code, _, err = run(capsys, "point", DEMO, "--depth", "12 km", "--stress", "10 MPa")
    assert code == 2 and "--stress and --duration" in err


def test_point_depth_outside_the_column_is_reported_in_km(capsys):
    code, _, err = run(capsys, "point", DEMO, "--depth", "500 km")
    max_km = rheology.load_scenario(DEMO).max_depth / 1e3
    assert code == 2
    assert err == f"error: --depth: 500 km is outside the column; expected 0 to {max_km:g} km\n"


@pytest.mark.parametrize(
    "option, value",
    [
        ("--rock", "olivine-wet"),
        ("--temperature", "450 degC"),
        ("--pressure", "300 MPa"),
        ("--pore-pressure-ratio", "0.4"),
        ("--grain-size", "1 mm"),
        ("--water-fugacity", "500 MPa"),
        ("--water-content", "1000"),
    ],
)
def test_point_with_a_scenario_rejects_the_options_for_given_conditions(capsys, option, value):
    """These options used to be ignored silently when a scenario file was given."""
    code, out, err = run(capsys, "point", DEMO, "--depth", "12 km", option, value)
    assert code == 2 and out == ""
    assert err.startswith(f"error: {option}: only without a scenario file; ")
    assert err.count("\n") == 1


def test_point_faulting_replaces_the_regime_of_the_scenario(capsys):
    """Normal faulting needs less differential stress than thrusting at the same depth
    (Sibson 1974, Nature 249, 542-544: Andersonian stress ratios), so --faulting must
    reach the answer rather than being ignored."""
    scenario = rheology.load_scenario(DEMO)
    assert scenario.faulting == "thrust"
    brittle = {}
    for regime in ("thrust", "normal"):
        code, out, err = run(
            capsys, "point", DEMO, "--depth", "5 km", "--faulting", regime, "--json"
        )
        assert code == 0, err
        brittle[regime] = _strict_json(out)["brittle_MPa"]
        expected = rheology.point_answer(replace(scenario, faulting=regime), 5e3).brittle
        assert brittle[regime] == pytest.approx(expected / 1e6, rel=1e-12)  # rounding only
    assert brittle["normal"] < brittle["thrust"]


CONDITIONS = ("--temperature", "900 degC", "--pressure", "1 GPa", "--strain-rate", "1e-15")


@pytest.mark.parametrize(
    "extra, expected",
    [
        (
            ["--rock", "olivine-wet"],
            "error: --grain-size: needed by rock 'olivine-wet' (diffusion creep depends on "
            'grain size); give e.g. --grain-size "1 mm"',
        ),
        (
            ["--rock", "olivine-wet", "--grain-size", "1 mm"],
            "error: --water-fugacity: needed by rock 'olivine-wet' (its creep depends on the "
            'water fugacity); give e.g. --water-fugacity "500 MPa"',
        ),
        (
            ["--rock", "olivine-wet-coh", "--grain-size", "1 mm"],
            "error: --water-content: needed by rock 'olivine-wet-coh' (its creep depends on "
            "the OH content); give e.g. --water-content 1000",
        ),
        (
            ["--rock", "olivine-wet-coh", "--grain-size", "1 mm", "--water-fugacity", "1 GPa"],
            "error: --water-fugacity: rock 'olivine-wet-coh' takes water as its OH content; "
            "give --water-content instead",
        ),
        (
            ["--rock", "quartzite-wet", "--grain-size", "1 mm"],
            "error: --grain-size: rock 'quartzite-wet' has no grain-size-sensitive law; "
            "leave it out",
        ),
        (
            ["--rock", "olivine-dry", "--water-content", "1000"],
            "error: --water-content: rock 'olivine-dry' has no explicit water term",
        ),
        (
            ["--rock", "quartzite-wet", "--pore-pressure-ratio", "1.5"],
            "error: --pore-pressure-ratio: got 1.5; expected a number from 0 (dry) up to, "
            "not including, 1 (lithostatic)",
        ),
        (["--rock", "cheese"], "error: --rock: unknown rock 'cheese'"),
        (
            ["--rock", "quartzite-wet", "--depth", "3 km"],
            "error: --depth: only with a scenario file",
        ),
    ],
)
def test_point_at_conditions_names_the_option_to_give(capsys, extra, expected):
    code, out, err = run(capsys, "point", *CONDITIONS, *extra)
    assert code == 2 and out == ""
    assert err.startswith(expected) and err.count("\n") == 1, err


def test_point_at_conditions_takes_an_oh_content(capsys):
    """The OH-content form of a wet olivine law (C_OH in H/10^6 Si) is reachable from the
    command line, and the answer is the API's."""
    from rheology.answers.point import conditions_answer

    code, out, err = run(
        capsys,
        "point",
        *CONDITIONS,
        "--rock",
        "olivine-wet-coh",
        "--grain-size",
        "1 mm",
        "--water-content",
        "1000",
        "--json",
    )
    assert code == 0, err
    expected = conditions_answer(
        rheology.get_rock("olivine-wet-coh"),
        1173.15,
        1e9,
        1e-15,
        grain_size=1e-3,
        water=1000.0,
    )
    assert _strict_json(out)["ductile_MPa"] == pytest.approx(expected.ductile / 1e6, rel=1e-9)


# ---------------------------------------------------------------------- rocks, law


def test_rocks_json_lists_every_rock_of_the_library(capsys):
    code, out, err = run(capsys, "rocks", "--json")
    assert code == 0, err
    data = _strict_json(out)
    assert [rock["id"] for rock in data["rocks"]] == list(load_rocks())
    assert "flow_laws" not in data
    code, out, _ = run(capsys, "rocks", "--laws", "--json")
    data = _strict_json(out)
    assert [law["id"] for law in data["flow_laws"]] == list(load_flow_laws())
    for law in data["flow_laws"]:
        assert law["citation"] and law["status"] in ("checked", "from memory")


def test_rocks_text_lists_ids_and_laws(capsys):
    code, out, _ = run(capsys, "rocks", "--laws")
    assert code == 0
    for rock_id in load_rocks():
        assert rock_id in out
    for law in load_flow_laws().values():
        assert law.id in out and law.A_published in out


def _published_line(out, law_id):
    lines = out.splitlines()
    index = next(i for i, line in enumerate(lines) if line.startswith(law_id))
    return lines[index + 1]


def test_grain_size_exponent_is_m_and_peierls_exponents_are_p_q(capsys):
    """One symbol per quantity: d^-m for grain size, p and q only for the shape of a
    Peierls law (a format check; the values shown are those of the reference tables)."""
    code, out, _ = run(capsys, "rocks", "--laws")
    assert code == 0
    peierls = _published_line(out, "ol-peierls-mei10")
    law = rheology.get_flow_law("ol-peierls-mei10")
    assert f", m = {law.grain_size_exponent:g}," in peierls
    assert f"p = {law.peierls_p:g}, q = {law.peierls_q:g}" in peierls
    assert peierls.count("p = ") == 1
    diffusion = _published_line(out, "an-wet-diff-rd00")
    exponent = rheology.get_flow_law("an-wet-diff-rd00").grain_size_exponent
    assert exponent > 0 and f", m = {exponent:g}," in diffusion and "p = " not in diffusion
    code, out, _ = run(capsys, "law", "an-wet-diff-rd00")
    assert "d^-m" in out and "d^-p" not in out
    assert "m grain-size exponent (d^-m)" in out


def test_law_invariant_prefactor_follows_the_second_invariant_conversion(capsys):
    """A_II = 0.5 * 3^((n+1)/2) * A and F2 = 0.3029 for n = 3 (standard conversion, worked
    by hand in the module docstring; Gerya 2019 ch. 6, from memory)."""
    law = rheology.get_flow_law("an-wet-disl-rd00")
    assert law.n == 3.0
    code, out, err = run(capsys, "law", law.id, "--json")
    assert code == 0, err
    data = _strict_json(out)
    expected = 0.5 * 3 ** ((3 + 1) / 2) * law.A  # = 4.5 A for n = 3
    assert data["invariant"]["A_II"] == pytest.approx(expected, rel=1e-12)  # rounding only
    assert data["invariant"]["viscosity_factor_F2"] == pytest.approx(0.3029, abs=5e-5)
    code, out, _ = run(capsys, "law", law.id)
    assert f"{expected:.6g}" in out
    assert "F2 = 2^((1-n)/n) / 3^((n+1)/(2n)) = 0.3029" in out
    assert "tau_II = sqrt(tau_ij tau_ij / 2) = sigma_d / sqrt(3)" in out
    assert law.A_published in out and law.citation in out


def test_law_unknown_id_is_an_error_line(capsys):
    code, _, err = run(capsys, "law", "qtz-wet-gt59")
    assert code == 2 and err.startswith("error: unknown flow law 'qtz-wet-gt59'")
    assert "`rheology rocks --laws`" in err and err.count("\n") == 1


# --------------------------------------------------------------------- demo, app


def test_demo_writes_its_figure_in_the_current_directory(capsys, tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    code, out, err = run(capsys, "demo")
    assert code == 0, err
    figure = tmp_path / cli.DEMO_FIGURE
    assert figure.read_bytes()[:8] == PNG_SIGNATURE
    assert f"figure written to {figure.resolve()}" in out
    assert "Faults expected" in out


def test_demo_json_keeps_stdout_pure(capsys, tmp_path):
    code, out, err = run(capsys, "demo", "--json", "--plot", tmp_path / "d.png")
    assert code == 0
    _check_contract(_strict_json(out))
    assert "figure written to" in err


def test_app_launches_streamlit_on_the_front_end(capsys, tmp_path, monkeypatch):
    app = tmp_path / "app.py"
    app.write_text("", encoding="utf-8")
    calls = []
    monkeypatch.setattr(cli, "find_app", lambda: app)
    monkeypatch.setattr(cli.subprocess, "call", lambda command: calls.append(command) or 0)
    code, _, _ = run(capsys, "app")
    assert code == 0
    assert calls[0][:5] == [sys.executable, "-m", "streamlit", "run", str(app)]


def test_app_missing_front_end_is_an_error_line(capsys, monkeypatch):
    monkeypatch.setattr(cli, "find_app", lambda: None)
    code, _, err = run(capsys, "app")
    assert code == 2 and err.startswith("error: app:")


def test_every_command_is_registered():
    parser = cli.build_parser()
    choices = parser._subparsers._group_actions[0].choices
    assert {"envelope", "point", "rocks", "law", "demo", "app"} <= set(choices)


def test_command_line_helpers_raise_named_errors(tmp_path):
    """Each error path of the helpers names the file or option and what was expected."""
    from rheology.errors import RheologyError
    from rheology.textout import read_scenario_file

    with pytest.raises(RheologyError, match=r"nothing\.toml: no such file"):
        read_scenario_file(str(tmp_path / "nothing.toml"))
    with pytest.raises(RheologyError, match=r"is a directory, expected a scenario file"):
        read_scenario_file(str(tmp_path))
    with pytest.raises(cli.CommandError, match=r"--depth: '12' has no units; give e.g. '12 km'"):
        cli._quantity("12", "km", "--depth")
    with pytest.raises(rheology.RheologyError, match=r"--duration: .*wrong dimension"):
        cli._quantity("3 km", "yr", "--duration", positive=True)
    with pytest.raises(rheology.RheologyError, match=r"--strain-rate: .*must be greater than"):
        cli._strain_rate("-1e-15 1/s")
    analysis = rheology.analyse(rheology.load_scenario(DEMO))
    with pytest.raises(rheology.RheologyError, match=r"--plot: 'figure' has no file suffix"):
        cli._save_plot(analysis, "figure")


def test_directory_given_as_scenario_is_an_error_line(capsys, tmp_path):
    code, _, err = run(capsys, "envelope", tmp_path)
    assert (
        code == 2
        and err == f"error: {tmp_path}: is a directory, expected a scenario file (.toml)\n"
    )


def test_duration_in_years_is_read_with_the_julian_year(capsys):
    """pint's 'yr' is the Julian year, 365.25 d (IAU convention): 1000 yr = 3.15576e10 s."""
    data = _verdict(capsys, "12 km", "150 MPa", "1000 yr")
    assert data["load"]["duration_yr"] == pytest.approx(1000.0, rel=1e-12)  # rounding only
