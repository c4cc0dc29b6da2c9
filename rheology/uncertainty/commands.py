"""Command-line handlers of ``rheology uncertainty`` and ``rheology sites``.

:func:`register` adds both subcommands to an :mod:`argparse` subparsers object; each sets
``handler`` to a function ``handler(args, out, err) -> int`` (exit code). Bad input
raises :class:`rheology.errors.RheologyError`, which the main CLI reports as
``error: ...`` with exit code 2. No physics here: the handlers read options, call
:func:`rheology.uncertainty.run_monte_carlo` or
:func:`rheology.uncertainty.sites.process_sites`, and print what they return.
"""

from __future__ import annotations

import json
import math
import pathlib

from rheology.constants import ZERO_CELSIUS
from rheology.errors import RheologyError
from rheology.textout import (
    check_figure_path,
    option_names,
    read_scenario_file,
    share_text,
    text_table,
    whole_number,
)

_KM = 1e3
#: Skipped rows listed on stderr by ``sites`` (the rest are counted).
_LISTED_ERRORS = 20
#: Arguments of the Python API named by their options in error messages.
_RUN_OPTIONS = {
    "samples": "--samples",
    "seed": "--seed",
    "chunk": "--chunk",
    "workers": "--workers",
}


def register(subparsers) -> None:
    """Add the ``uncertainty`` and ``sites`` subcommands.

    Parameters
    ----------
    subparsers : argparse._SubParsersAction
        From ``parser.add_subparsers()``; each new subparser sets ``handler``.
    """
    _add_uncertainty(subparsers)
    _add_sites(subparsers)


# ---------------------------------------------------------------------- uncertainty


def _add_uncertainty(subparsers) -> None:
    parser = subparsers.add_parser(
        "uncertainty",
        help="Monte Carlo spread of transitions, strength and Te",
        description="Draw many realisations of a scenario's uncertain inputs and report "
        "P10/P50/P90 of the brittle-ductile transitions, integrated strength "
        "and elastic thickness, the chance that faults reach each depth, and "
        "which inputs matter most. By default only the flow laws vary (from "
        "their published one-sigma uncertainties); add spreads with the "
        "options below or --spread FILE.toml.",
    )
    parser.add_argument("scenario", metavar="SCENARIO.toml", help="scenario file (TOML)")
    parser.add_argument(
        "--samples", type=whole_number, default=1000, help="number of realisations (default 1000)"
    )
    parser.add_argument(
        "--seed",
        type=whole_number,
        default=None,
        help="random seed; the same seed repeats a run exactly (default: a "
        "fresh seed, printed with the results)",
    )
    parser.add_argument(
        "--spread",
        metavar="FILE.toml",
        help="TOML file with an [uncertainty] table of spreads; options "
        "given on the command line replace its values",
    )
    parser.add_argument(
        "--heat-flow-sd",
        metavar="SD",
        help="standard deviation of a normal surface heat flow, e.g. '5 mW/m^2'",
    )
    parser.add_argument(
        "--age-sd",
        metavar="SD",
        help="standard deviation of a normal plate age (oceanic geotherms), e.g. '5 Myr'",
    )
    parser.add_argument(
        "--gradient-sd",
        metavar="SD",
        help="standard deviation of a normal temperature gradient (linear geotherm), e.g. '2 K/km'",
    )
    parser.add_argument(
        "--strain-rate-range",
        nargs=2,
        metavar=("LOW", "HIGH"),
        help="bounds of a log-uniform strain rate, e.g. '1e-16 1/s' '1e-14 1/s'",
    )
    parser.add_argument(
        "--friction-sd",
        type=float,
        metavar="SD",
        help="standard deviation of a normal multiplier (mean 1) of the "
        "friction coefficients, e.g. 0.05",
    )
    parser.add_argument(
        "--pore-ratio-range",
        nargs=2,
        type=float,
        metavar=("LOW", "HIGH"),
        help="bounds of a uniform pore-pressure ratio, e.g. 0.3 0.45",
    )
    parser.add_argument(
        "--pore-ratio-sd",
        type=float,
        metavar="SD",
        help="standard deviation of a normal pore-pressure ratio about the "
        "scenario's, clipped to [0, 0.95]",
    )
    parser.add_argument(
        "--no-law-spread",
        action="store_true",
        help="keep every flow law at its published central values",
    )
    parser.add_argument(
        "--chunk",
        type=whole_number,
        default=None,
        help="realisations evaluated at once (bounds memory)",
    )
    _add_workers(parser)
    parser.add_argument(
        "--json",
        action="store_true",
        help="print the results as one JSON object on stdout, and nothing else",
    )
    parser.add_argument(
        "--plot",
        metavar="FILE.png",
        help="write the figure (strength bands and chance of faulting)",
    )
    parser.set_defaults(handler=run_uncertainty)


def _add_workers(parser) -> None:
    parser.add_argument(
        "--workers",
        type=whole_number,
        default=None,
        help="threads evaluating chunks at once (default: one per CPU core); the "
        "results do not depend on it",
    )


def _spread(args):
    """The SpreadSpec from --spread and the command-line options (options win)."""
    from dataclasses import replace

    from rheology.uncertainty.montecarlo import SpreadSpec, load_spread
    from rheology.units import to_si

    spread = load_spread(args.spread) if args.spread else SpreadSpec()
    changes = {}
    for option, key, unit in (
        ("--heat-flow-sd", "heat_flow_sd", "W/m^2"),
        ("--age-sd", "age_sd", "s"),
        ("--gradient-sd", "gradient_sd", "K/m"),
    ):
        text = getattr(args, key)
        if text is not None:
            changes[key] = to_si(_with_units(text, option, unit), unit, option, nonnegative=True)
    if args.strain_rate_range is not None:
        changes["strain_rate_range"] = tuple(
            to_si(
                _with_units(text, "--strain-rate-range", "1/s"),
                "1/s",
                "--strain-rate-range",
                positive=True,
            )
            for text in args.strain_rate_range
        )
    if args.friction_sd is not None:
        changes["friction_sd"] = args.friction_sd
    if args.pore_ratio_range is not None:
        changes["pore_ratio_range"] = tuple(args.pore_ratio_range)
        changes["pore_ratio_sd"] = None
    if args.pore_ratio_sd is not None:
        changes["pore_ratio_sd"] = args.pore_ratio_sd
        if args.pore_ratio_range is None:
            changes["pore_ratio_range"] = None
    if args.no_law_spread:
        changes["law_spread"] = False
    return replace(spread, **changes) if changes else spread


def _with_units(text: str, option: str, unit: str) -> str:
    try:
        float(text)
    except ValueError:
        return text
    raise RheologyError(f"{option}: {text!r} has no units; give e.g. '{text} {unit}'")


def run_uncertainty(args, out, err) -> int:
    """Handler of ``rheology uncertainty``: run, print the summary, write the figure."""
    from rheology.answers.report import CAUTION
    from rheology.uncertainty.montecarlo import run_monte_carlo

    if args.plot:
        check_figure_path(args.plot, "spread.png")
    scenario = read_scenario_file(args.scenario)
    spread = _spread(args)
    with option_names(_RUN_OPTIONS):
        result = run_monte_carlo(
            scenario, spread, args.samples, args.seed, chunk=args.chunk, workers=args.workers
        )
    notices = []
    if args.plot:
        from rheology.uncertainty.figures import uncertainty_figure

        figure = uncertainty_figure(result)
        figure.savefig(args.plot, dpi=150)
        notices.append(f"figure written to {args.plot}")
    if not result.inputs and spread.law_spread:  # with --no-law-spread the user knows
        notices.append(
            "warning: no input varies (no spread given and no flow law with a "
            "published uncertainty); every realisation is the same"
        )
    if args.json:
        data = result.as_dict()
        data["caution"] = CAUTION
        out.write(json.dumps(data, indent=2, allow_nan=False, ensure_ascii=False) + "\n")
        for notice in notices:
            err.write(notice + "\n")
    else:
        out.write(summary_text(result) + "\n")
        for notice in notices:
            out.write(notice + "\n")
    return 0


def _fmt(value: float, digits: int = 1) -> str:
    return "-" if not math.isfinite(value) else f"{value:.{digits}f}"


def _quantile_row(name, q, scale, offset=0.0, digits=1, samples=1):
    shown = [
        (x / scale - offset) if math.isfinite(x) else math.nan
        for x in (q.p10, q.p50, q.p90, q.mean)
    ]
    return (name, *(_fmt(x, digits) for x in shown), share_text(q.count / samples))


def summary_text(result) -> str:
    """The readable report of a Monte Carlo run (tables and the caution)."""
    from rheology.answers.report import CAUTION

    title = result.scenario.title
    n = result.samples
    lines = [
        title,
        "=" * len(title),
        f"Monte Carlo: {n} realisations, seed {result.seed} (run again with --seed "
        f"{result.seed} for the same numbers)",
        "",
    ]
    if result.inputs:
        rows = []
        for item in result.inputs:
            if item.values.size:
                p10, p50, p90 = (item.display(x) for x in _percentiles(item.values))
                rows.append(
                    (
                        item.label + (f" [{item.unit}]" if item.unit else ""),
                        f"{p10:.4g}",
                        f"{p50:.4g}",
                        f"{p90:.4g}",
                        item.distribution,
                    )
                )
        lines += [
            "inputs varied:",
            text_table(rows, ("input", "P10", "P50", "P90", "drawn as"), right={1, 2, 3}),
        ]
    else:
        lines.append("inputs varied: none (every realisation is the central scenario)")
    rows = [
        _quantile_row(
            "first brittle-to-ductile depth [km]", result.first_down_depth, _KM, samples=n
        ),
        _quantile_row(
            "  its temperature [degC]",
            result.first_down_temperature,
            1.0,
            ZERO_CELSIUS,
            0,
            samples=n,
        ),
        _quantile_row("deepest faulting depth [km]", result.deepest_faulting, _KM, samples=n),
        _quantile_row(
            "base of the semi-brittle band [km]", result.semi_brittle_base, _KM, samples=n
        ),
        _quantile_row("integrated strength [TN/m]", result.integrated, 1e12, digits=2, samples=n),
        _quantile_row(
            "effective elastic thickness Te [km]", result.elastic_thickness, _KM, samples=n
        ),
    ]
    lines += [
        "",
        "answers over the realisations (found in = share of realisations where the answer exists):",
        text_table(
            rows, ("answer", "P10", "P50", "P90", "mean", "found in"), right={1, 2, 3, 4, 5}
        ),
    ]
    if result.transitions:
        rows = [
            (
                t.kind,
                t.layer,
                str(t.occurrence),
                share_text(t.fraction),
                _fmt(t.depth.p10 / _KM, 2),
                _fmt(t.depth.p50 / _KM, 2),
                _fmt(t.depth.p90 / _KM, 2),
                _fmt(t.temperature.p50 - ZERO_CELSIUS, 0),
            )
            for t in result.transitions
        ]
        lines += [
            "",
            "transitions matched across realisations (by kind, layer and "
            "occurrence in that layer):",
            text_table(
                rows,
                ("kind", "layer", "#", "found in", "P10 km", "P50 km", "P90 km", "P50 degC"),
                right={2, 3, 4, 5, 6, 7},
            ),
        ]
    if result.sensitivity:
        rows = []
        for s in result.sensitivity:
            low, high = s.low / s.scale, s.high / s.scale
            rows.append(
                (
                    s.label + (f" [{s.unit}]" if s.unit else ""),
                    _fmt(s.rho, 2),
                    f"{low:.3g} / {high:.3g}",
                    f"{_fmt(s.depth_at_low / _KM, 2)} / {_fmt(s.depth_at_high / _KM, 2)}",
                    _fmt(s.swing / _KM, 2),
                )
            )
        lines += [
            "",
            "what drives the first brittle-to-ductile depth (Spearman rank "
            "correlation over the realisations; swing: that input alone at its "
            "P10 and P90, the others central):",
            text_table(
                rows,
                ("input", "rho", "input P10 / P90", "depth km at P10 / P90", "swing km"),
                right={1, 4},
            ),
        ]
    lines += ["", f"caution: {CAUTION}"]
    return "\n".join(lines)


def _percentiles(values):
    import numpy as np

    return np.percentile(values, (10.0, 50.0, 90.0))


# ---------------------------------------------------------------------------- sites


def _add_sites(subparsers) -> None:
    parser = subparsers.add_parser(
        "sites",
        help="answers for many sites at once, from a CSV over a base scenario",
        description="Run every row of a sites table (an 'id' column plus the scenario "
        "values that change from site to site, with units in the cells or in "
        "the header, e.g. 'surface_heat_flow [mW/m^2]') over a base scenario and "
        "write one row of answers per site. Bad rows are reported and skipped.",
    )
    parser.add_argument("sites", metavar="SITES.csv", help="sites table (CSV)")
    parser.add_argument(
        "--scenario",
        required=True,
        metavar="BASE.toml",
        help="base scenario (TOML) supplying every value a column does not",
    )
    parser.add_argument(
        "--out", required=True, metavar="RESULTS.csv", help="results table to write (CSV)"
    )
    parser.add_argument(
        "--chunk", type=whole_number, default=None, help="sites evaluated at once (bounds memory)"
    )
    _add_workers(parser)
    parser.add_argument("--quiet", action="store_true", help="no progress line on stderr")
    parser.set_defaults(handler=run_sites)


class ProgressLine:
    """A one-line progress counter on a text stream (only when it is a terminal)."""

    def __init__(self, stream, label: str = "sites", enabled: bool = True):
        isatty = getattr(stream, "isatty", None)
        self.stream = stream
        self.label = label
        self.enabled = bool(enabled and isatty is not None and isatty())
        self.shown = False

    def __call__(self, done: int, total: int) -> None:
        """Show ``done`` of ``total``."""
        if not self.enabled:
            return
        share = 100.0 * done / total if total else 100.0
        self.stream.write(f"\r{self.label}: {done:,} / {total:,} ({share:.0f}%)")
        self.stream.flush()
        self.shown = True

    def close(self) -> None:
        """End the line."""
        if self.shown:
            self.stream.write("\n")
            self.stream.flush()


def run_sites(args, out, err) -> int:
    """Handler of ``rheology sites``: read, run, write the results, report skipped rows."""
    from rheology.answers.report import CAUTION
    from rheology.uncertainty.sites import process_sites

    sites = pathlib.Path(args.sites)
    if not sites.is_file():
        raise RheologyError(f"{args.sites}: no such sites file")
    scenario = read_scenario_file(args.scenario)
    progress = ProgressLine(err, enabled=not args.quiet)
    try:
        with option_names(_RUN_OPTIONS):
            results = process_sites(
                sites,
                scenario,
                args.out,
                chunk=args.chunk,
                progress=progress,
                workers=args.workers,
            )
    finally:
        progress.close()
    failed = results.failed
    for r in failed[:_LISTED_ERRORS]:
        err.write(f"skipped {results.table.ids[r] or '(no id)'}: {results.messages[r]}\n")
    if len(failed) > _LISTED_ERRORS:
        err.write(
            f"... and {len(failed) - _LISTED_ERRORS} more skipped rows (see the "
            "message column of the results)\n"
        )
    total = results.table.size
    out.write(
        f"{args.out}: {total - len(failed)} of {total} sites computed, {len(failed)} skipped\n"
    )
    out.write(f"caution: {CAUTION}\n")
    if total and len(failed) == total:
        raise RheologyError(
            f"{args.sites}: no site could be computed (every row has an "
            "error; see the message column)"
        )
    return 0
