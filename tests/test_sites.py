"""Many sites at once: reading the table, bad rows, batch answers against single-site runs."""

import argparse
import csv
import io
import math
from dataclasses import replace

import numpy as np
import pytest

import rheology
from rheology.envelope import depth_grid
from rheology.errors import RheologyError
from rheology.scenario import scenario_from_mapping
from rheology.uncertainty.commands import ProgressLine, register
from rheology.uncertainty.sites import (
    RESULT_COLUMNS,
    process_sites,
    read_sites,
    run_sites,
    site_grid,
)

KM = 1e3
#: Transition depths of the batch are interpolated linearly between nodes; on the demo's
#: 50 m grid the error against the root-searched depth is below 0.1 m (test_montecarlo
#: derives the bound h^2 |g''| / (8 |g'|) = 0.04-0.06 m for these crossings), so 0.1 m.
INTERPOLATION_TOLERANCE = 0.1


def _gt95_column(step="0.01 km"):
    return scenario_from_mapping(
        {
            "title": "crossover check",
            "strain_rate": "1e-15 1/s",
            "faulting": "thrust",
            "pore_pressure_ratio": 0.0,
            "max_depth": "40 km",
            "depth_step": step,
            "geotherm": {"kind": "linear", "surface_temperature": "10 degC", "gradient": "25 K/km"},
            "layers": [
                {
                    "name": "crust",
                    "thickness": "40 km",
                    "density": "2700 kg/m^3",
                    "rock": "quartzite-wet",
                }
            ],
        }
    )


@pytest.fixture(scope="module")
def demo():
    return rheology.load_scenario(rheology.bundled_example("demo"))


def _read(text, scenario):
    return read_sites(io.StringIO(text), scenario)


def test_sites_reproduce_the_gleason_tullis_crossover_table():
    """Gleason & Tullis (1995) wet quartzite (from memory) under Byerlee (1978) friction,
    linear geotherm 10 degC + 25 K/km, rho 2700 kg/m^3, 1e-15 1/s, one site per regime
    and pore-pressure ratio. Crossover depths 9.44 / 9.92 (thrust), 10.57 / 11.30
    (strike-slip), 11.36 / 12.15 km (normal) at lambda = 0 / 0.37, and integrated strength
    0-40 km on a 10 m grid 5.160 / 3.968 (thrust), 1.902 / 1.372 TN/m (normal). Regression
    values of our own, computed outside this package (derived, not published); the
    tolerances are their rounding (0.005 km, 0.0005 TN/m)."""
    scenario = _gt95_column()
    table = _read(
        "id,faulting,pore_pressure_ratio\n"
        "T0,thrust,0\nT37,thrust,0.37\nS0,strike-slip,0\nS37,strike-slip,0.37\n"
        "N0,normal,0\nN37,normal,0.37\n",
        scenario,
    )
    results = run_sites(table, scenario)
    assert results.status == ["ok"] * 6
    assert results.first_down_depth / KM == pytest.approx(
        [9.44, 9.92, 10.57, 11.30, 11.36, 12.15], abs=0.005
    )
    assert results.integrated[[0, 1, 4, 5]] / 1e12 == pytest.approx(
        [5.160, 3.968, 1.902, 1.372], abs=0.0005
    )
    assert np.all(results.count == 1)


def _single_site(demo, row):
    """The site's scenario, built from the same text values through the scenario loader."""
    mapping = rheology.scenario_to_mapping(demo)
    mapping["geotherm"]["surface_heat_flow"] = f"{row['surface_heat_flow [mW/m^2]']} mW/m^2"
    if row["strain_rate"]:
        mapping["strain_rate"] = row["strain_rate"]
    if row["faulting"]:
        mapping["faulting"] = row["faulting"]
    if row["pore_pressure_ratio"]:
        mapping["pore_pressure_ratio"] = float(row["pore_pressure_ratio"])
    if row["thickness:upper crust [km]"]:
        mapping["layers"][0]["thickness"] = f"{row['thickness:upper crust [km]']} km"
    return scenario_from_mapping(mapping)


def test_each_site_equals_a_single_site_run(demo):
    """For a handful of rows of the bundled sites table, every answer equals a deterministic
    single-site analysis of the same values (rheology.analyse, the root-searched path):
    transitions within the interpolation tolerance, integrated strength and Te to rounding,
    the semi-brittle base like the transitions."""
    path = rheology.bundled_example("demo").parent / "sites_demo.csv"
    rows = list(csv.DictReader(path.open(encoding="utf-8")))
    results = process_sites(path, demo, io.StringIO())
    assert results.failed == []
    for index in (0, 3, 5, 6, 8, 9, 12):
        analysis = rheology.analyse(_single_site(demo, rows[index]))
        down = [t for t in analysis.transitions if t.kind == "brittle-to-ductile"]
        assert results.count[index] == len(analysis.transitions)
        assert results.first_down_depth[index] == pytest.approx(
            down[0].depth, abs=INTERPOLATION_TOLERANCE
        )
        # temperature follows with the local gradient (< 0.03 K/m) x the depth tolerance
        assert results.first_down_temperature[index] == pytest.approx(
            down[0].temperature, abs=0.03 * INTERPOLATION_TOLERANCE
        )
        deepest = (
            analysis.envelope.depth[-1]
            if analysis.transitions[-1].kind != ("brittle-to-ductile")
            else down[-1].depth
        )
        assert results.deepest_faulting[index] == pytest.approx(
            deepest, abs=INTERPOLATION_TOLERANCE
        )
        # rounding: a thickness change adds repeated nodes, so the sums run in another order
        assert results.integrated[index] == pytest.approx(analysis.integrated, rel=1e-12)
        assert results.elastic_thickness[index] == pytest.approx(analysis.elastic.te, rel=1e-12)
        base = next((z for z in analysis.goetze if z >= down[0].depth - 1.0), math.nan)
        assert results.semi_brittle_base[index] == pytest.approx(
            base, abs=INTERPOLATION_TOLERANCE, nan_ok=True
        )


def test_site_values_convert_like_the_scenario_loader(demo):
    """Units in the header or in the cell give the same SI floats as the scenario file
    reader (one pint conversion per unit), including an offset unit (degC)."""
    table = _read(
        "id,surface_heat_flow [mW/m^2],surface_temperature,strain_rate\n"
        "a,65.3,12.5 degC,3e-15 1/s\nb,0.0701 W/m^2,285.65 K,3e-15 s^-1\n",
        demo,
    )
    mapping = rheology.scenario_to_mapping(demo)
    mapping["geotherm"].update(surface_heat_flow="65.3 mW/m^2", surface_temperature="12.5 degC")
    mapping["strain_rate"] = "3e-15 1/s"
    loaded = scenario_from_mapping(mapping)
    assert table.values["surface_heat_flow"][0] == loaded.geotherm.surface_heat_flow
    assert table.values["surface_temperature"][0] == loaded.geotherm.surface_temperature
    assert table.values["strain_rate"][0] == loaded.strain_rate
    assert table.values["surface_heat_flow"][1] == pytest.approx(0.0701, rel=1e-15)
    assert table.values["surface_temperature"][1] == 285.65
    assert table.errors == {}


def test_bad_rows_are_reported_and_skipped_without_losing_the_others(demo):
    text = (
        "id,surface_heat_flow [mW/m^2],strain_rate,faulting,thickness:upper crust,"
        "pore_pressure_ratio\n"
        "good-1,65,1e-15 1/s,thrust,15 km,0.37\n"
        "bad-number,6x5,1e-15 1/s,thrust,15 km,0.37\n"
        "bad-dimension,65 km,1e-15 1/s,thrust,15 km,0.37\n"
        "bad-thickness,65,1e-15 1/s,thrust,-3 km,0.37\n"
        "bad-regime,65,1e-15 1/s,oblique,15 km,0.37\n"
        "no-units,65,1e-15,thrust,15 km,0.37\n"
        "too-cold,20,1e-15 1/s,thrust,15 km,0.37\n"
        "bad-ratio,65,1e-15 1/s,thrust,15 km,1.2\n"
        "short,65,1e-15 1/s\n"
        "good-1,66,1e-15 1/s,thrust,15 km,0.37\n"
        "good-2,70,1e-14 1/s,normal,18 km,0.4\n"
    )
    out = io.StringIO()
    results = process_sites(io.StringIO(text), demo, out)
    messages = dict(zip(results.table.ids[1:-2], results.messages[1:-2]))
    assert messages["bad-number"].startswith(
        "row 2 (line 3), column 'surface_heat_flow [mW/m^2]': '6x5': unknown unit 'x5'"
    )
    assert messages["bad-dimension"].startswith(
        "row 3 (line 4), column 'surface_heat_flow [mW/m^2]': '65 km': unit 'km' has the "
        "wrong dimension"
    )
    assert messages["bad-thickness"] == (
        "row 4 (line 5), column 'thickness:upper crust': '-3 km' must be greater than zero"
    )
    assert (
        "row 5 (line 6), column 'faulting': 'oblique' is not a faulting regime"
        in (messages["bad-regime"])
    )
    assert "row 6 (line 7), column 'strain_rate': '1e-15' has no units" in messages["no-units"]
    assert (
        "row 7 (line 8), column 'surface_heat_flow [mW/m^2]': 20 mW/m^2 is less than the "
        "heat produced in the column (23.9 mW/m^2)" in messages["too-cold"]
    )
    assert (
        "row 8 (line 9), column 'pore_pressure_ratio': '1.2' is out of range"
        in (messages["bad-ratio"])
    )
    assert messages["short"] == "row 9 (line 10): 3 cells, expected 6 (one per column)"
    assert results.messages[-2] == (
        "row 10 (line 11), column 'id': id 'good-1' is already used in row 1"
    )
    assert results.status == ["ok"] + ["error"] * 9 + ["ok"]
    # the good rows are computed as if alone
    alone = run_sites(_read(text.splitlines()[0] + "\n" + text.splitlines()[-1] + "\n", demo), demo)
    assert results.first_down_depth[-1] == alone.first_down_depth[0]
    assert results.integrated[-1] == alone.integrated[0]
    lines = out.getvalue().splitlines()
    assert lines[0] == "# " + " ".join(rheology.CAUTION.split())
    cells = list(csv.reader(lines[1:]))
    assert cells[0] == list(RESULT_COLUMNS)
    assert len(cells) == 12
    assert cells[2][:9] == ["bad-number", "error"] + [""] * 7


@pytest.mark.parametrize(
    "header, match",
    [
        ("name,surface_heat_flow", "no 'id' column"),
        ("id,heat_flow", "column 'heat_flow': unknown column; expected id, strain_rate"),
        ("id,age", "column 'age': it is not used by the base scenario's 'layered-steady' geotherm"),
        (
            "id,surface_heat_flow [km]",
            r"column 'surface_heat_flow \[km\]': unit 'km' has the wrong "
            "dimension",
        ),
        (
            "id,surface_heat_flow [parsnips]",
            "column 'surface_heat_flow \\[parsnips\\]': unknown unit 'parsnips'",
        ),
        (
            "id,thickness:crust",
            "column 'thickness:crust' names no layer of the base scenario; "
            "expected one of 'upper crust'",
        ),
        (
            "id,layers[5].thickness",
            r"column 'layers\[5\].thickness': the base scenario has 3 "
            "layers",
        ),
        ("id,pore_pressure_ratio [%]", "pore_pressure_ratio is a plain value and takes no unit"),
        ("id,layers[0].thickness,thickness:upper crust", "set the same value; keep one"),
    ],
)
def test_table_level_problems_stop_the_run(demo, header, match):
    with pytest.raises(RheologyError, match=match):
        _read(header + "\nx,1\n", demo)


def test_empty_table_and_missing_file_are_errors(demo, tmp_path):
    with pytest.raises(RheologyError, match="the sites table is empty"):
        _read("", demo)
    with pytest.raises(RheologyError, match="no such sites file"):
        read_sites(tmp_path / "none.csv", demo)


def test_a_site_the_physics_rejects_is_isolated():
    """A site whose mantle temperature is below its surface temperature is rejected by the
    half-space/plate geotherm; the chunk is split until that site alone is reported."""
    ocean = rheology.load_scenario(rheology.bundled_example("oceanic_plate"))
    rows = "".join(f"s{k},{40 + k} Myr,\n" for k in range(6))
    text = "id,age,mantle_temperature\n" + rows + "cold,40 Myr,1 degC\n"
    results = run_sites(_read(text, ocean), ocean, chunk=4)
    assert results.status == ["ok"] * 6 + ["error"]
    assert results.messages[-1].startswith("row 7 (line 8): ")
    assert "mantle_temperature" in results.messages[-1]
    assert np.all(np.isfinite(results.integrated[:6]))
    single = run_sites(_read("id,age\ns3,43 Myr\n", ocean), ocean)
    assert results.integrated[3] == single.integrated[0]


def test_site_grid_holds_each_boundary_twice(demo):
    """With the base thicknesses, the per-site grid has the same (depth, layer) nodes as
    rheology.envelope.depth_grid; a boundary below max_depth adds only repeats of the last
    node."""
    base = np.array([[ly.thickness for ly in demo.layers]])
    depth, layer = site_grid(demo, base)
    reference = set(zip(*depth_grid(demo)))
    assert set(zip(depth[0], layer[0])) == reference
    deep = site_grid(demo, np.array([[15e3, 70e3, 45e3]]))
    assert np.count_nonzero(deep[0][0] == demo.max_depth) == 3  # node + two repeats
    assert np.all(np.diff(deep[0][0]) >= 0)


def test_progress_reaches_the_total_and_stays_off_the_pipe(demo):
    text = "id,strain_rate\n" + "".join(f"p{k},{k + 1}e-15 1/s\n" for k in range(7))
    calls = []
    run_sites(
        _read(text, demo), demo, chunk=3, progress=lambda done, total: calls.append((done, total))
    )
    assert calls == [(3, 7), (6, 7), (7, 7)]
    stream = io.StringIO()  # not a terminal: the progress line stays silent
    line = ProgressLine(stream)
    line(3, 7)
    line.close()
    assert stream.getvalue() == ""


def _cli(argv):
    parser = argparse.ArgumentParser()
    register(parser.add_subparsers(dest="command", required=True))
    args = parser.parse_args(argv)
    out, err = io.StringIO(), io.StringIO()
    return args.handler(args, out, err), out.getvalue(), err.getvalue()


def test_cli_writes_results_and_lists_skipped_rows(tmp_path, demo):
    sites = tmp_path / "sites.csv"
    sites.write_text(
        "id,surface_heat_flow [mW/m^2]\nok-1,65\nbad,sixty\nok-2,70\n", encoding="utf-8"
    )
    out_path = tmp_path / "results.csv"
    code, out, err = _cli(
        [
            "sites",
            str(sites),
            "--scenario",
            str(rheology.bundled_example("demo")),
            "--out",
            str(out_path),
            "--quiet",
        ]
    )
    assert code == 0
    assert "2 of 3 sites computed, 1 skipped" in out and rheology.CAUTION in out
    assert err.startswith("skipped bad: row 2 (line 3), column 'surface_heat_flow")
    with out_path.open(encoding="utf-8") as handle:
        assert handle.readline() == "# " + " ".join(rheology.CAUTION.split()) + "\n"
        rows = list(csv.DictReader(handle))
    assert [r["status"] for r in rows] == ["ok", "error", "ok"]
    # site ok-1 is the demo column itself (65 mW/m^2): its depth is the single-site
    # analysis's, within the interpolation tolerance plus the file's 6 significant
    # digits (0.05 m at 10 km)
    first = next(t for t in rheology.analyse(demo).transitions if t.kind == "brittle-to-ductile")
    assert float(rows[0]["first_brittle_ductile_depth [km]"]) == pytest.approx(
        first.depth / KM, abs=(INTERPOLATION_TOLERANCE + 0.05) / KM
    )


def test_results_csv_reads_back_with_pandas_even_with_hash_signs(tmp_path, demo):
    """The caution line is a comment; a '#' in a site id or a message (e.g. a spreadsheet's
    '#N/A' cell) is quoted, so pandas' comment='#' drops no row and cuts no cell."""
    import pandas as pd

    text = "id,surface_heat_flow [mW/m^2]\n#1,65\nsite #2,#N/A\n"
    out_path = tmp_path / "results.csv"
    results = process_sites(io.StringIO(text), demo, out_path)
    frame = pd.read_csv(out_path, comment="#")
    assert frame["id"].tolist() == ["#1", "site #2"]
    assert frame["status"].tolist() == ["ok", "error"]
    assert frame["message"].tolist()[1] == results.messages[1] and "#N/A" in results.messages[1]
    assert frame["first_brittle_ductile_depth [km]"].tolist()[0] == pytest.approx(
        results.first_down_depth[0] / KM,
        rel=5e-6,  # 6 significant digits in the file
    )


def test_cli_table_errors_and_all_bad_rows_raise(tmp_path):
    scenario = str(rheology.bundled_example("demo"))
    sites = tmp_path / "sites.csv"
    sites.write_text("site,surface_heat_flow\nx,65 mW/m^2\n", encoding="utf-8")
    with pytest.raises(RheologyError, match="no 'id' column"):
        _cli(["sites", str(sites), "--scenario", scenario, "--out", str(tmp_path / "r.csv")])
    sites.write_text("id,surface_heat_flow\nx,65\n", encoding="utf-8")
    with pytest.raises(RheologyError, match="no site could be computed"):
        _cli(["sites", str(sites), "--scenario", scenario, "--out", str(tmp_path / "r.csv")])
    with pytest.raises(RheologyError, match="no such sites file"):
        _cli(
            [
                "sites",
                str(tmp_path / "none.csv"),
                "--scenario",
                scenario,
                "--out",
                str(tmp_path / "r.csv"),
            ]
        )


def test_workers_do_not_change_site_results(demo):
    text = "id,surface_heat_flow [mW/m^2],faulting\n" + "".join(
        f"w{k},{55 + 2 * k},{('thrust', 'normal', 'strike-slip')[k % 3]}\n" for k in range(9)
    )
    one = run_sites(_read(text, demo), demo, chunk=2)
    two = run_sites(_read(text, demo), demo, chunk=2, workers=2)
    assert np.array_equal(one.first_down_depth, two.first_down_depth)
    assert np.array_equal(one.elastic_thickness, two.elastic_thickness)


def test_base_pore_model_without_ratio_needs_every_ratio_cell():
    ocean = rheology.load_scenario(rheology.bundled_example("oceanic_plate"))
    results = run_sites(_read("id,pore_pressure_ratio\na,0.4\nb,\n", ocean), ocean)
    assert results.status == ["ok", "error"]
    assert "empty, and the base scenario's pore pressure is 'hydrostatic'" in results.messages[1]


def test_replaced_thickness_matches_a_thicker_layer(demo):
    """layers[i].thickness and thickness:<name> are the same column (the layer's
    thickness), and the site equals the single-site envelope with that layer changed."""
    a = run_sites(_read("id,layers[0].thickness\nx,20 km\n", demo), demo)
    b = run_sites(_read("id,thickness:upper crust\nx,20 km\n", demo), demo)
    assert a.integrated[0] == b.integrated[0]
    thicker = replace(demo, layers=(replace(demo.layers[0], thickness=20e3),) + demo.layers[1:])
    analysis = rheology.analyse(thicker)
    assert a.integrated[0] == pytest.approx(analysis.integrated, rel=1e-12)


def test_empty_optional_conductivity_takes_the_engine_default():
    """A plate geotherm without its own conductivity uses 3.3 W/m/K (heat flow only); a
    site leaving the cell empty gets that default, not a missing value."""
    mapping = rheology.scenario_to_mapping(
        rheology.load_scenario(rheology.bundled_example("oceanic_plate"))
    )
    del mapping["geotherm"]["conductivity"]
    mapping["depth_step"] = "0.2 km"
    scenario = scenario_from_mapping(mapping)
    results = run_sites(_read("id,conductivity\na,3.0 W/m/K\nb,\n", scenario), scenario)
    assert results.status == ["ok", "ok"]
    assert results.first_down_depth[0] == results.first_down_depth[1]  # T does not use k
    with pytest.raises(RheologyError, match="column 'conductivity': it is not used"):
        _read("id,conductivity\na,3 W/m/K\n", _gt95_column(step="0.2 km"))
