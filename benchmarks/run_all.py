"""Speed and memory of the batch engine: plain timers, not tests. Prints one table.

Usage (from the repository root)::

    python benchmarks/run_all.py            # every case, medians of several runs
    python benchmarks/run_all.py --quick    # fewer repeats and smaller sizes

Cases (each runs in a fresh subprocess so its peak resident memory is its own):

* ``envelope``: one 3-layer envelope of the demo column on about 2000 depth nodes
  (``rheology.compute_envelope``), and the full ``rheology.analyse``;
* ``montecarlo``: 10,000 realisations x about 1000 depth nodes (heat flow, strain rate,
  friction, pore pressure and the flow laws varied), on 1 and on 2 threads;
* ``sites``: 100,000 sites read from a CSV, run and written (see ``--sites-step``);
* ``creep``: the composite creep law with three mechanisms at 10^6 points.

For each case: the median time, the tracemalloc peak of a separate run (numpy
allocations are traced) and the subprocess's peak resident memory; the time of a plain
scalar Python loop (``bench_scalar``: ``math.exp`` and float arithmetic per node, timed on
a small subset and scaled up, after checking it gives the engine's numbers); and the bare
numpy arithmetic lower bound (one ``exp`` and one ``power`` per node and mechanism).
Other processes may share the cores: run it on a quiet machine and read medians.
"""

from __future__ import annotations

import argparse
import json
import math
import os
import pathlib
import resource
import statistics
import subprocess
import sys
import tempfile
import time
import tracemalloc
from dataclasses import replace

HERE = pathlib.Path(__file__).resolve().parent
sys.path.insert(0, str(HERE))
sys.path.insert(0, str(HERE.parent))

import numpy as np  # noqa: E402

import rheology  # noqa: E402
from rheology.envelope import depth_grid, evaluate  # noqa: E402
from rheology.physics import creep  # noqa: E402

MW = 1e-3


def _median_time(function, repeats):
    times = []
    for _ in range(repeats):
        start = time.perf_counter()
        function()
        times.append(time.perf_counter() - start)
    return statistics.median(times), times


def _traced_peak(function) -> float:
    """Peak of traced (Python and numpy) allocations during one call [MB]."""
    tracemalloc.start()
    tracemalloc.reset_peak()
    function()
    peak = tracemalloc.get_traced_memory()[1]
    tracemalloc.stop()
    return peak / 2**20


def _rss_mb() -> float:
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0


def _bare_arithmetic(count: int, repeats: int) -> float:
    """Time of one exp and one power over ``count`` values (the arithmetic lower bound) [s]."""
    chunk = min(count, 2**18)
    x = np.linspace(-30.0, -1.0, chunk)  # an Arrhenius exponent per node
    y = np.linspace(1e-20, 1e-10, chunk)  # rate / A per node
    e = np.linspace(0.2, 0.35, chunk)  # 1/n per node (n varies between realisations)
    out = np.empty(chunk)

    def run():
        done = 0
        while done < count:
            n = min(chunk, count - done)
            np.exp(x[:n], out=out[:n])
            np.power(y[:n], e[:n], out=out[:n])
            done += n

    return _median_time(run, repeats)[0]


def _mechanism_nodes(scenario, depth, layer) -> int:
    """Sum over nodes of the number of creep mechanisms acting there."""
    laws = np.array([len(ly.rock.laws) for ly in scenario.layers])
    return int(np.sum(laws[layer]))


def _scalar_per_node(scenario, depth, layer, subset=600) -> float:
    """Seconds per node of the scalar loop, checked against the engine on the subset."""
    import bench_scalar

    constants = bench_scalar.column_constants(scenario)
    ratio = scenario.pore_pressure.ratio
    pick = np.linspace(1, depth.size - 2, subset).astype(int)
    pick = pick[np.diff(np.r_[-1, pick]) > 0]
    # nodes on a layer boundary are skipped: the scalar loop puts them in the lower layer
    inner = np.array([not np.any(np.isclose(depth[i], scenario.layer_tops)) for i in pick])
    pick = pick[inner]

    def loop():
        return [
            bench_scalar.envelope_node(
                constants, float(depth[i]), scenario.strain_rate, ratio, scenario.faulting
            )
            for i in pick
        ]

    values = loop()
    per_node = _median_time(loop, 5)[0] / pick.size
    fields = evaluate(scenario, depth[pick], layer[pick])
    ductile = np.array([v[2] for v in values])
    brittle = np.array([v[1] for v in values])
    assert np.allclose(ductile, fields["ductile"], rtol=1e-6), "scalar loop disagrees (creep)"
    assert np.allclose(brittle, fields["brittle"], rtol=1e-9), "scalar loop disagrees (friction)"
    return per_node


def _demo(step: float):
    scenario = rheology.load_scenario(rheology.bundled_example("demo"))
    return replace(scenario, depth_step=step)


# ---------------------------------------------------------------------------- cases


def case_envelope(quick: bool) -> dict:
    scenario = _demo(40.0)  # 80 km / 40 m: 2001 regular nodes + 2 boundary copies
    depth, layer = depth_grid(scenario)
    repeats = 20 if quick else 100
    rheology.compute_envelope(scenario)
    median, _ = _median_time(lambda: rheology.compute_envelope(scenario), repeats)
    analyse_median, _ = _median_time(lambda: rheology.analyse(scenario), max(5, repeats // 5))
    per_node = _scalar_per_node(scenario, depth, layer)
    return {
        "case": "envelope",
        "size": f"{depth.size} nodes, 3 layers",
        "time": median,
        "extra": f"analyse() {analyse_median * 1e3:.1f} ms",
        "traced_mb": _traced_peak(lambda: rheology.compute_envelope(scenario)),
        "rss_mb": _rss_mb(),
        "scalar": per_node * depth.size,
        "bare": _bare_arithmetic(_mechanism_nodes(scenario, depth, layer), repeats),
        "targets": {"time": 0.010},
    }


def _mc_spread():
    from rheology.uncertainty import SpreadSpec

    return SpreadSpec(
        heat_flow_sd=5 * MW,
        strain_rate_range=(1e-16, 1e-14),
        friction_sd=0.05,
        pore_ratio_range=(0.3, 0.45),
        law_spread=True,
    )


def case_montecarlo(quick: bool, workers: int = 1) -> dict:
    from rheology.uncertainty import run_monte_carlo

    scenario = _demo(80.0)  # 80 km / 80 m: 1001 regular nodes + 2 boundary copies
    depth, layer = depth_grid(scenario)
    samples = 2000 if quick else 10_000
    spread = _mc_spread()
    run_monte_carlo(scenario, spread, 200, seed=1, workers=workers)  # warm-up

    def run():
        return run_monte_carlo(scenario, spread, samples, seed=1, workers=workers)

    median, times = _median_time(run, 2 if quick else 5)
    per_node = _scalar_per_node(scenario, depth, layer)
    return {
        "case": f"montecarlo ({workers} thread{'s' if workers > 1 else ''})",
        "size": f"{samples:,} x {depth.size} nodes",
        "time": median,
        "extra": f"runs {', '.join(f'{t:.2f}' for t in times)} s",
        "traced_mb": _traced_peak(run),
        "rss_mb": _rss_mb(),
        "scalar": per_node * depth.size * samples,
        "bare": _bare_arithmetic(_mechanism_nodes(scenario, depth, layer) * samples, 3),
        "targets": {"time": 2.0, "speedup": 100.0, "over_bare": 4.0},
    }


def case_montecarlo2(quick: bool) -> dict:
    return case_montecarlo(quick, workers=2)


def _write_sites(path, count, rng):
    regimes = np.array(["thrust", "strike-slip", "normal"])
    heat = np.clip(rng.normal(65.0, 6.0, count), 40.0, 95.0)
    rate = 10.0 ** rng.uniform(-16.0, -14.0, count)
    ratio = rng.uniform(0.3, 0.45, count)
    regime = regimes[rng.integers(0, 3, count)]
    with open(path, "w", encoding="utf-8") as handle:
        handle.write("id,surface_heat_flow [mW/m^2],strain_rate,faulting,pore_pressure_ratio\n")
        for k in range(count):
            handle.write(f"S{k:06d},{heat[k]:.2f},{rate[k]:.3e} 1/s,{regime[k]},{ratio[k]:.3f}\n")


def case_sites(quick: bool, step: float = 250.0, workers: int = 1) -> dict:
    from rheology.uncertainty.sites import process_sites, read_sites

    scenario = _demo(step)
    depth, layer = depth_grid(scenario)
    count = 10_000 if quick else 100_000
    folder = pathlib.Path(tempfile.mkdtemp(prefix="rheology-bench-"))
    sites, out = folder / "sites.csv", folder / "results.csv"
    _write_sites(sites, count, np.random.default_rng(2))

    def run():
        return process_sites(sites, scenario, out, workers=workers)

    start = time.perf_counter()
    read_sites(sites, scenario)
    reading = time.perf_counter() - start
    median, times = _median_time(run, 1 if quick else 3)
    results = run()
    assert not results.failed, "benchmark sites must all compute"
    per_node = _scalar_per_node(scenario, depth, layer)
    traced = _traced_peak(run)
    for path in (sites, out):
        path.unlink()
    folder.rmdir()
    return {
        "case": f"sites ({workers} thread{'s' if workers > 1 else ''})",
        "size": f"{count:,} sites x {depth.size} nodes ({step:g} m)",
        "time": median,
        "extra": f"of which reading {reading:.2f} s; runs "
        + ", ".join(f"{t:.2f}" for t in times)
        + " s",
        "traced_mb": traced,
        "rss_mb": _rss_mb(),
        "scalar": per_node * depth.size * count,
        "bare": _bare_arithmetic(_mechanism_nodes(scenario, depth, layer) * count, 3),
        "targets": {"time": 10.0, "rss_mb": 1024.0},
    }


def case_sites2(quick: bool) -> dict:
    return case_sites(quick, workers=2)


def case_sites_coarse(quick: bool) -> dict:
    return case_sites(quick, step=500.0)


def case_creep(quick: bool) -> dict:
    import bench_scalar

    from rheology.library import get_rock

    rock = get_rock("olivine-dry-composite")  # dislocation + diffusion + Peierls
    grain = 1e-3
    terms = [law.term(grain, None) for law in rock.laws]
    count = 10**5 if quick else 10**6
    rng = np.random.default_rng(3)
    temperature = rng.uniform(873.0, 1673.0, count)
    pressure = rng.uniform(0.5e9, 3e9, count)
    rate = 10.0 ** rng.uniform(-17.0, -12.0, count)

    def run():
        return creep.composite_stress(rate, temperature, pressure, terms)

    run()
    median, times = _median_time(run, 3 if quick else 7)
    laws = [
        (
            law.mechanism == "peierls",
            float(law.prefactor(grain, None)),
            law.n,
            law.Q,
            law.V,
            law.peierls_stress,
            law.peierls_p,
            law.peierls_q,
            law.min_stress,
        )
        for law in rock.laws
    ]
    subset = 2000
    start = time.perf_counter()
    scalar = [
        bench_scalar.creep_stress(laws, rate[i], temperature[i], pressure[i]) for i in range(subset)
    ]
    per_point = (time.perf_counter() - start) / subset
    engine = run().stress[:subset]
    assert np.allclose(scalar, engine, rtol=1e-6), "scalar creep loop disagrees"
    return {
        "case": "creep (3 mechanisms)",
        "size": f"{count:,} points",
        "time": median,
        "extra": f"runs {', '.join(f'{t:.2f}' for t in times)} s",
        "traced_mb": _traced_peak(run),
        "rss_mb": _rss_mb(),
        "scalar": per_point * count,
        "bare": _bare_arithmetic(3 * count, 5),
        "targets": {"time": 1.0},
    }


CASES = {
    "envelope": case_envelope,
    "montecarlo": case_montecarlo,
    "montecarlo2": case_montecarlo2,
    "sites": case_sites,
    "sites2": case_sites2,
    "sites500": case_sites_coarse,
    "creep": case_creep,
}


# ---------------------------------------------------------------------------- table


def _show_time(seconds: float) -> str:
    if not math.isfinite(seconds):
        return "-"
    return f"{seconds * 1e3:.2f} ms" if seconds < 1.0 else f"{seconds:.2f} s"


#: How each target is written and whether the measured value must stay below it.
_TARGETS = {
    "time": (lambda t: f"<= {_show_time(t)}", True),
    "speedup": (lambda t: f">= {t:.0f}x scalar", False),
    "over_bare": (lambda t: f"<= {t:g}x bare", True),
    "rss_mb": (lambda t: f"peak < {t / 1024:g} GB", True),
}


def _measured(row) -> dict[str, float]:
    scalar, bare = row["scalar"], row["bare"]
    return {
        "time": row["time"],
        "speedup": scalar / row["time"] if math.isfinite(scalar) else math.nan,
        "over_bare": row["time"] / bare if math.isfinite(bare) else math.nan,
        "rss_mb": row["rss_mb"],
    }


def _verdict(row) -> tuple[str, str]:
    """The targets as text, and which of them the row meets."""
    measured = _measured(row)
    texts, misses = [], []
    for name, limit in row["targets"].items():
        text, below = _TARGETS[name]
        texts.append(text(limit))
        value = measured[name]
        if not (value <= limit if below else value >= limit):
            misses.append(text(limit))
    met = "yes" if not misses else "no: " + ", ".join(misses)
    return ", ".join(texts), met


def _print_table(rows) -> None:
    header = (
        "case",
        "size",
        "time",
        "traced peak",
        "peak RSS",
        "scalar loop",
        "speed-up",
        "bare bound",
        "x bare",
        "target",
        "met",
    )
    lines = []
    for r in rows:
        measured = _measured(r)
        targets, met = _verdict(r)
        lines.append(
            (
                r["case"],
                r["size"],
                _show_time(r["time"]),
                "-" if not math.isfinite(r["traced_mb"]) else f"{r['traced_mb']:.0f} MB",
                f"{r['rss_mb']:.0f} MB",
                _show_time(r["scalar"]),
                "-" if not math.isfinite(measured["speedup"]) else f"{measured['speedup']:.0f}x",
                _show_time(r["bare"]),
                "-" if not math.isfinite(measured["over_bare"]) else f"{measured['over_bare']:.1f}",
                targets,
                met,
            )
        )
    widths = [max(len(str(x)) for x in column) for column in zip(header, *lines)]
    print("  ".join(h.ljust(w) for h, w in zip(header, widths)))
    print("  ".join("-" * w for w in widths))
    for line in lines:
        print("  ".join(str(x).ljust(w) for x, w in zip(line, widths)))
    print()
    for r in rows:
        print(f"{r['case']}: {r['extra']}")


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help="fewer repeats, smaller sizes")
    parser.add_argument(
        "--case", choices=sorted(CASES), action="append", help="run only these cases (default: all)"
    )
    parser.add_argument("--json", action="store_true", help=argparse.SUPPRESS)
    args = parser.parse_args(argv)
    if args.json:  # child process: one case, JSON on stdout
        (name,) = args.case
        print(json.dumps(CASES[name](args.quick)))
        return 0
    rows = []
    for name in args.case or list(CASES):
        command = [
            sys.executable,
            str(pathlib.Path(__file__).resolve()),
            "--json",
            "--case",
            name,
        ] + (["--quick"] if args.quick else [])
        done = subprocess.run(
            command,
            capture_output=True,
            text=True,
            env=dict(os.environ, PYTHONPATH=str(HERE.parent)),
        )
        if done.returncode != 0:
            print(f"{name}: failed\n{done.stderr}", file=sys.stderr)
            continue
        rows.append(json.loads(done.stdout.strip().splitlines()[-1]))
    print(
        f"rheology {rheology.__version__}, numpy {np.__version__}, "
        f"{os.cpu_count()} cores, load {os.getloadavg()[0]:.2f}"
    )
    _print_table(rows)
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
