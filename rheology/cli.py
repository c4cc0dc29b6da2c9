"""Command-line interface: ``rheology <command> ...`` (also ``python -m rheology``).

Commands: ``envelope``, ``point``, ``rocks``, ``law``, ``demo``, ``app``. Each command is
one function that registers its subparser (listed in :data:`COMMANDS`) plus one handler
``handler(args, out, err) -> int``; adding a command means writing those two and adding
the first to :data:`COMMANDS`.

The CLI contains no physics: it reads inputs, calls :func:`rheology.analyse`,
:func:`rheology.point_answer` and the library, and prints or writes what they return.

Exit codes: 0 success; 1 an unexpected internal error (reported in one line, no
traceback); 2 bad input or usage (``error: <message>`` on stderr).
"""

from __future__ import annotations

import argparse
import json
import math
import pathlib
import subprocess
import sys
import warnings
from collections.abc import Callable, Sequence
from dataclasses import replace

from rheology.errors import RheologyError
from rheology.plausibility import check_plausible
from rheology.textout import check_figure_path, option_names, read_scenario_file, text_table

#: Exit codes.
OK, INTERNAL_ERROR, USAGE_ERROR = 0, 1, 2

FAULTING_CHOICES = ("thrust", "strike-slip", "normal")
#: Opposite regime drawn with ``--both-regimes`` (compression against extension).
OPPOSITE_REGIME = {"thrust": "normal", "strike-slip": "normal", "normal": "thrust"}
DEMO_FIGURE = "demo-envelope.png"
_YEAR = 3.15576e7  # Julian year [s]


class CommandError(RheologyError):
    """A problem with the command line itself (a file, an option), reported as ``error:``."""


class _Parser(argparse.ArgumentParser):
    """An argument parser whose usage errors are one ``error:`` line and a pointer to --help.

    Subcommand parsers are made with the same class (``add_subparsers`` uses the class of
    the parser it belongs to), so every command reports its option errors this way.
    """

    def error(self, message: str):
        """Print ``error: <message>`` and where to find help, then exit with code 2."""
        self.exit(USAGE_ERROR, f"error: {message}\ntry '{self.prog} --help'\n")


# ------------------------------------------------------------------- shared helpers


def _add_scenario_argument(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("scenario", metavar="SCENARIO.toml", help="scenario file (TOML)")


def _add_strain_rate(parser: argparse.ArgumentParser) -> None:
    parser.add_argument(
        "--strain-rate",
        metavar="RATE",
        help="axial strain rate replacing the scenario's, e.g. '1e-14 1/s' "
        "(a bare number is taken in 1/s)",
    )


def _add_json(parser: argparse.ArgumentParser, what: str) -> None:
    parser.add_argument(
        "--json",
        action="store_true",
        help=f"print {what} as one JSON object on stdout, and nothing else",
    )


def _quantity(text: str, unit: str, option: str, **checks) -> float:
    """SI value of an option given as '<number> <unit>' (units are required)."""
    from rheology.units import to_si

    if _is_bare_number(text):
        raise CommandError(f"{option}: {text!r} has no units; give e.g. '{text} {unit}'")
    return to_si(text, unit, option, **checks)


def _is_bare_number(text: str) -> bool:
    try:
        float(text)
    except ValueError:
        return False
    return True


def _strain_rate(text: str | None) -> float | None:
    from rheology.units import to_si

    if text is None:
        return None
    value = float(text) if _is_bare_number(text) else text
    rate = to_si(value, "1/s", "--strain-rate", positive=True)
    check_plausible("strain_rate", rate, "--strain-rate", text)
    return rate


def _with_overrides(scenario, args):
    changes = {}
    rate = _strain_rate(getattr(args, "strain_rate", None))
    if rate is not None:
        changes["strain_rate"] = rate
    if getattr(args, "faulting", None):
        changes["faulting"] = args.faulting
    return replace(scenario, **changes) if changes else scenario


def _write_json(out, data) -> None:
    out.write(json.dumps(data, indent=2, allow_nan=False, ensure_ascii=False) + "\n")


def _save_plot(analysis, path_text: str, companion=None) -> pathlib.Path:
    from rheology.plotting import save_figure, strength_figure

    path = check_figure_path(path_text)
    save_figure(strength_figure(analysis, companion=companion), path)
    return path


# ------------------------------------------------------------------------ envelope


def _analysis_text(analysis, companion=None) -> str:
    """The readable report of one analysis (and the opposite regime's headline numbers)."""
    from rheology.answers.report import CAUTION
    from rheology.outputs import semi_brittle_intervals

    scenario = analysis.scenario
    km = 1e3
    lines = [scenario.title, "=" * len(scenario.title)]
    pore = scenario.pore_pressure
    pore_text = (
        f"pore-pressure ratio {pore.ratio:g}"
        if pore.kind == "ratio"
        else f"{pore.kind} pore pressure"
    )
    lines.append(
        f"inputs: {scenario.faulting} faulting, strain rate {scenario.strain_rate:.3g} 1/s, "
        f"{scenario.geotherm.kind} geotherm, {pore_text}, {len(scenario.layers)} layer(s) to "
        f"{scenario.max_depth / km:g} km, depth step {scenario.depth_step:g} m"
    )
    tops = scenario.layer_tops
    layer_rows = []
    for index, (layer, top) in enumerate(zip(scenario.layers, tops)):
        if top >= scenario.max_depth:
            continue
        last = index == len(scenario.layers) - 1
        bottom = scenario.max_depth if last else min(top + layer.thickness, scenario.max_depth)
        layer_rows.append(
            (
                layer.name,
                f"{top / km:.1f}-{bottom / km:.1f}",
                layer.rock_id or "inline",
                layer.rock.name,
            )
        )
    lines += ["", "layers:", text_table(layer_rows, ("layer", "depth km", "rock id", "rock"))]
    lines += ["", "transitions (differential stress sigma1-sigma3):"]
    if analysis.transitions:
        rows = []
        for t in sorted(analysis.transitions, key=lambda t: t.depth):
            where = (
                f"{t.layer_above} / {t.layer_below} (at the boundary)"
                if t.at_boundary
                else t.layer_above
            )
            rows.append(
                (
                    f"{t.depth / km:.2f}",
                    f"{t.temperature - 273.15:.0f}",
                    f"{t.stress / 1e6:.0f}",
                    t.kind,
                    where,
                )
            )
        lines.append(
            text_table(
                rows, ("depth km", "T degC", "stress MPa", "kind", "layers"), right={0, 1, 2}
            )
        )
    else:
        lines.append("  none: friction is weaker than creep through the whole column")
    bands = semi_brittle_intervals(analysis)
    if bands:
        lines.append(
            "semi-brittle band(s) (Goetze criterion, creep stress above effective "
            "pressure): "
            + "; ".join(
                f"{b['top'] / km:.1f}-{b['bottom'] / km:.1f} km ({b['layer']})" for b in bands
            )
        )
    else:
        lines.append("semi-brittle band: none")
    per_layer = ", ".join(
        f"{name} {value / 1e12:.3g}" for name, value in analysis.integrated_by_layer.items()
    )
    lines.append(f"integrated strength: {analysis.integrated / 1e12:.3g} TN/m ({per_layer})")
    elastic = analysis.elastic
    competent = (
        ", ".join(f"{top / km:.1f}-{bottom / km:.1f} km" for top, bottom in elastic.competent)
        or "none"
    )
    lines.append(
        f"effective elastic thickness Te: {elastic.te / km:.1f} km "
        f"({'coupled' if elastic.coupled else 'decoupled'}; competent layers "
        f"{competent})"
    )
    if companion is not None:
        c = companion
        first = next(
            (
                t
                for t in sorted(c.transitions, key=lambda t: t.depth)
                if t.kind == "brittle-to-ductile"
            ),
            None,
        )
        where = f"{first.depth / km:.2f} km" if first else "none"
        lines.append(
            f"opposite regime ({c.scenario.faulting}): first brittle-to-ductile "
            f"transition {where}, integrated strength {c.integrated / 1e12:.3g} TN/m, "
            f"Te {c.elastic.te / km:.1f} km"
        )
    summary = [line for line in analysis.summary().splitlines() if line.strip() != CAUTION.strip()]
    lines += ["", "in plain words:"] + [f"  {line}" for line in summary]
    lines += ["", f"caution: {CAUTION}"]
    return "\n".join(lines)


def _add_envelope(subparsers) -> None:
    parser = subparsers.add_parser(
        "envelope",
        help="strength envelope, transitions and integrated strength of a scenario",
        description="Compute the strength envelope of a scenario file and report its "
        "brittle-ductile transitions, semi-brittle bands, integrated strength "
        "and effective elastic thickness.",
    )
    _add_scenario_argument(parser)
    _add_json(parser, "the full analysis")
    parser.add_argument("--csv", metavar="FILE", help="write the depth profile as CSV")
    parser.add_argument("--plot", metavar="FILE.png", help="write the figure (png, pdf, svg)")
    parser.add_argument(
        "--faulting", choices=FAULTING_CHOICES, help="faulting regime replacing the scenario's"
    )
    _add_strain_rate(parser)
    parser.add_argument(
        "--both-regimes",
        action="store_true",
        help="also compute the opposite regime (normal for thrust or "
        "strike-slip, thrust for normal); the figure shows both, "
        "compression positive",
    )
    parser.set_defaults(handler=_run_envelope)


def _run_envelope(args, out, err) -> int:
    from rheology.answers.report import analyse
    from rheology.outputs import analysis_to_dict, write_profile_csv

    if args.plot:
        check_figure_path(args.plot)
    scenario = _with_overrides(read_scenario_file(args.scenario), args)
    analysis = analyse(scenario)
    companion = None
    if args.both_regimes:
        companion = analyse(scenario, faulting=OPPOSITE_REGIME[scenario.faulting])
    notices = []
    if args.csv:
        write_profile_csv(analysis, args.csv)
        notices.append(f"profile written to {args.csv}")
    if args.plot:
        notices.append(f"figure written to {_save_plot(analysis, args.plot, companion)}")
    if args.json:
        data = analysis_to_dict(analysis)
        if companion is not None:
            data["opposite_regime"] = analysis_to_dict(companion)
        _write_json(out, data)
        for notice in notices:
            err.write(notice + "\n")
    else:
        out.write(_analysis_text(analysis, companion) + "\n")
        for notice in notices:
            out.write(notice + "\n")
    return OK


# --------------------------------------------------------------------------- point


def _add_point(subparsers) -> None:
    parser = subparsers.add_parser(
        "point",
        help="which mechanism governs at one depth (or T and P), and what a load does there",
        description="Report the governing mechanism and the brittle and ductile strengths "
        "at one depth of a scenario, or for a rock at given temperature and pressure "
        "(--rock, --temperature, --pressure, without a scenario); with --stress and "
        "--duration, say whether that load stays elastic, breaks the rock or makes it flow.",
    )
    parser.add_argument(
        "scenario",
        metavar="SCENARIO.toml",
        nargs="?",
        help="scenario file (TOML); omit it to give --rock, --temperature and --pressure instead",
    )
    parser.add_argument("--depth", help="depth with units, e.g. '12 km' (with a scenario)")
    parser.add_argument("--rock", help="rock id from `rheology rocks` (without a scenario)")
    parser.add_argument("--temperature", help="temperature, e.g. '450 degC' (without a scenario)")
    parser.add_argument(
        "--pressure", help="lithostatic pressure, e.g. '300 MPa' (without a scenario)"
    )
    parser.add_argument(
        "--faulting",
        choices=FAULTING_CHOICES,
        help="faulting regime (default thrust without a scenario; replaces the scenario's)",
    )
    parser.add_argument(
        "--pore-pressure-ratio",
        type=float,
        help="pore pressure / lithostatic, without a scenario (default 0)",
    )
    parser.add_argument(
        "--grain-size", help="grain size, e.g. '1 mm', if the rock needs it (without a scenario)"
    )
    parser.add_argument(
        "--water-fugacity",
        help="water fugacity, e.g. '500 MPa', if the rock needs it (without a scenario)",
    )
    parser.add_argument(
        "--water-content",
        type=float,
        help="OH content [H/10^6 Si], e.g. 1000, if the rock needs it (without a scenario)",
    )
    _add_strain_rate(parser)
    parser.add_argument("--stress", help="applied differential stress, e.g. '150 MPa'")
    parser.add_argument("--duration", help="how long the load is held, e.g. '1000 yr'")
    _add_json(parser, "the answer")
    parser.set_defaults(handler=_run_point)


#: Options of `point` that describe a rock at given conditions, and why a scenario
#: file makes each of them meaningless.
_CONDITIONS_ONLY = {
    "rock": "the scenario's layers give the rock at each depth",
    "temperature": "the scenario's geotherm gives it at --depth",
    "pressure": "the scenario's densities give it at --depth",
    "pore_pressure_ratio": "the scenario sets the pore pressure",
    "grain_size": "the scenario's layers give it",
    "water_fugacity": "the scenario's layers give it",
    "water_content": "the scenario's layers give it",
}
_MECHANISM_WORDS = {"peierls": "low-temperature plasticity"}


def _option(name: str) -> str:
    return "--" + name.replace("_", "-")


def _reject_conditions_options(args) -> None:
    """With a scenario file, the options for a rock at given conditions are errors."""
    for name, why in _CONDITIONS_ONLY.items():
        if getattr(args, name) is not None:
            raise CommandError(f"{_option(name)}: only without a scenario file; {why}")


def _grain_size_option(args, rock) -> float | None:
    """--grain-size in metres if the rock needs it (an error if missing or unused)."""
    sensitive = sorted({law.mechanism for law in rock.laws if law.needs_grain_size})
    if not sensitive:
        if args.grain_size is not None:
            raise CommandError(
                f"--grain-size: rock {rock.id!r} has no grain-size-sensitive law; leave it out"
            )
        return None
    if args.grain_size is None:
        words = " and ".join(_MECHANISM_WORDS.get(m, f"{m} creep") for m in sensitive)
        verb = "depends" if len(sensitive) == 1 else "depend"
        raise CommandError(
            f"--grain-size: needed by rock {rock.id!r} ({words} {verb} on grain size); "
            'give e.g. --grain-size "1 mm"'
        )
    grain = _quantity(args.grain_size, "mm", "--grain-size", positive=True)
    check_plausible("grain_size", grain, "--grain-size", args.grain_size)
    return grain


def _water_option(args, rock) -> float | None:
    """Water fugacity [Pa] or OH content [H/10^6 Si], as the rock's laws take it."""
    forms = {law.water_form for law in rock.laws if law.needs_water}
    given = [n for n in ("water_fugacity", "water_content") if getattr(args, n) is not None]
    if not forms:
        if given:
            raise CommandError(
                f"{_option(given[0])}: rock {rock.id!r} has no explicit water term "
                "(water is folded into A or absent); leave it out"
            )
        return None
    if len(forms) > 1:  # the library has no such rock; a layer holds one water value
        raise CommandError(f"--rock: rock {rock.id!r} mixes water forms {sorted(forms)}")
    if forms == {"fugacity"}:
        name, other, what, example = (
            "water_fugacity",
            "water_content",
            "water fugacity",
            '"500 MPa"',
        )
    else:
        name, other, what, example = ("water_content", "water_fugacity", "OH content", "1000")
    if getattr(args, other) is not None:
        raise CommandError(
            f"{_option(other)}: rock {rock.id!r} takes water as its {what}; "
            f"give {_option(name)} instead"
        )
    if getattr(args, name) is None:
        raise CommandError(
            f"{_option(name)}: needed by rock {rock.id!r} (its creep depends on the {what}); "
            f"give e.g. {_option(name)} {example}"
        )
    if name == "water_fugacity":
        return _quantity(args.water_fugacity, "MPa", "--water-fugacity", positive=True)
    if not (math.isfinite(args.water_content) and args.water_content > 0):
        raise CommandError(
            f"--water-content: got {args.water_content!r}; expected an OH content > 0 [H/10^6 Si]"
        )
    return args.water_content


def _point_at_conditions(args, stress, duration):
    from rheology.answers.point import conditions_answer
    from rheology.library.tables import get_rock
    from rheology.units import to_kelvin

    if args.depth is not None:
        raise CommandError(
            "--depth: only with a scenario file; give --temperature and --pressure instead"
        )
    missing = [f"--{n}" for n in ("rock", "temperature", "pressure") if getattr(args, n) is None]
    if missing:
        raise CommandError(
            "point: give a SCENARIO.toml with --depth, or "
            + ", ".join(missing)
            + " for a rock at given conditions"
        )
    rate = _strain_rate(args.strain_rate)
    if rate is None:
        raise CommandError("--strain-rate: needed without a scenario, e.g. '1e-15 1/s'")
    try:
        rock = get_rock(args.rock)
    except RheologyError as exc:
        raise CommandError(f"--rock: {exc}") from None
    grain = _grain_size_option(args, rock)
    water = _water_option(args, rock)
    if _is_bare_number(args.temperature):
        raise CommandError(
            f"--temperature: {args.temperature!r} has no units; give e.g. '{args.temperature} degC'"
        )
    with option_names({"pore_pressure_ratio": "--pore-pressure-ratio"}):
        return conditions_answer(
            rock,
            to_kelvin(args.temperature, "--temperature"),
            _quantity(args.pressure, "MPa", "--pressure", nonnegative=True),
            rate,
            faulting=args.faulting or "thrust",
            pore_pressure_ratio=0.0
            if args.pore_pressure_ratio is None
            else args.pore_pressure_ratio,
            grain_size=grain,
            water=water,
            stress=stress,
            duration=duration,
        )


def _run_point(args, out, err) -> int:
    from rheology.answers.point import point_answer
    from rheology.answers.report import CAUTION
    from rheology.outputs import point_to_dict

    stress = duration = None
    if (args.stress is None) != (args.duration is None):
        raise CommandError(
            "--stress and --duration: give both (the load and how long it lasts), or neither"
        )
    if args.stress is not None:
        stress = _quantity(args.stress, "MPa", "--stress", positive=True)
        duration = _quantity(args.duration, "yr", "--duration", positive=True)
    if args.scenario is None:
        answer = _point_at_conditions(args, stress, duration)
        title = f"{answer.rock} at given conditions"
    else:
        _reject_conditions_options(args)
        if args.depth is None:
            raise CommandError("--depth: needed with a scenario, e.g. --depth '12 km'")
        scenario = _with_overrides(read_scenario_file(args.scenario), args)
        title = scenario.title
        depth = _quantity(args.depth, "km", "--depth", nonnegative=True)
        with option_names({"depth": "--depth"}):
            answer = point_answer(scenario, depth, stress=stress, duration=duration)
    if args.json:
        _write_json(out, point_to_dict(answer))
        return OK
    lines = [title, answer.sentence(), ""]
    rows = [
        ("layer", f"{answer.layer} ({answer.rock})"),
        ("temperature", f"{answer.temperature - 273.15:.1f} degC"),
        ("lithostatic pressure", f"{answer.lithostatic / 1e6:.1f} MPa"),
        ("pore pressure", f"{answer.pore_pressure / 1e6:.1f} MPa"),
        ("strain rate", f"{answer.strain_rate:.3g} 1/s"),
        ("frictional strength", f"{answer.brittle / 1e6:.4g} MPa"),
        ("creep strength", f"{answer.ductile / 1e6:.4g} MPa"),
        ("mechanism", answer.mechanism),
    ]
    for law_id, value in answer.creep_by_law.items():
        rows.append((f"  creep alone, {law_id}", f"{value / 1e6:.4g} MPa"))
    if answer.load is not None:
        load = answer.load
        rows += [
            ("load", f"{load.stress / 1e6:.4g} MPa held {load.duration / _YEAR:.3g} yr"),
            ("Maxwell time", f"{load.maxwell_time / _YEAR:.3g} yr"),
            ("creep rate under the load", f"{load.creep_rate:.3g} 1/s"),
            ("outcome", load.outcome),
        ]
    width = max(len(name) for name, _ in rows)
    lines += [f"  {name.ljust(width)}  {value}" for name, value in rows]
    lines += ["", f"caution: {CAUTION}"]
    out.write("\n".join(lines) + "\n")
    return OK


# --------------------------------------------------------------------- rocks, law


def _add_rocks(subparsers) -> None:
    parser = subparsers.add_parser(
        "rocks",
        help="list the rock library (and, with --laws, every flow law)",
        description="List the rocks of the reference tables, the flow laws each combines "
        "and whether it needs a grain size or a water value.",
    )
    parser.add_argument(
        "--laws",
        action="store_true",
        help="also list every flow law with its parameters and citation",
    )
    _add_json(parser, "the library")
    parser.set_defaults(handler=_run_rocks)


_SYMBOLS = (
    "(n stress exponent, m grain-size exponent (d^-m), r water exponent; "
    "p, q shape exponents of low-temperature plasticity)"
)


def _law_line(law) -> str:
    """The published parameters of ``law`` in one line.

    The grain-size exponent is shown as m (d^-m), so that p and q stay the shape
    exponents of a Peierls law.
    """
    from rheology.outputs import law_to_dict

    published = law_to_dict(law)["published"]
    text = (
        f"A = {law.A_published}, n = {law.n:g}, m = {law.grain_size_exponent:g}, "
        f"r = {law.water_exponent:g} ({published['water']}), Q = {law.Q / 1e3:g} kJ/mol, "
        f"V = {law.V / 1e-6:g} cm^3/mol"
    )
    if law.mechanism == "peierls":
        text += (
            f", sigma_P = {law.peierls_stress / 1e9:g} GPa, p = {law.peierls_p:g}, "
            f"q = {law.peierls_q:g}"
        )
    return text


def _run_rocks(args, out, err) -> int:
    from rheology.library.tables import load_flow_laws, load_rocks
    from rheology.outputs import law_to_dict, rock_to_dict

    rocks = load_rocks()
    laws = load_flow_laws() if args.laws else None
    if args.json:
        data = {"rocks": [rock_to_dict(rock) for rock in rocks.values()]}
        if laws is not None:
            data["flow_laws"] = [law_to_dict(law) for law in laws.values()]
        _write_json(out, data)
        return OK
    rows = [
        (
            rock.id,
            rock.name,
            ", ".join(law.id for law in rock.laws),
            "yes" if rock.needs_grain_size else "-",
            "yes" if rock.needs_water else "-",
        )
        for rock in rocks.values()
    ]
    lines = [
        f'{len(rows)} rocks (use the id as `rock = "<id>"` in a scenario layer):',
        text_table(rows, ("id", "name", "flow laws", "grain size", "water")),
    ]
    if laws is not None:
        lines += [
            "",
            f"{len(laws)} flow laws (triaxial convention: differential stress, "
            "axial strain rate; A as published):",
            _SYMBOLS,
        ]
        for law in laws.values():
            lines += [
                f"{law.id}  [{law.status}]  {law.rock}, {law.mechanism}",
                f"    {_law_line(law)}",
                f"    {law.citation} ({law.location})",
            ]
    out.write("\n".join(lines) + "\n")
    return OK


def _add_law(subparsers) -> None:
    parser = subparsers.add_parser(
        "law",
        help="one flow law as published, in SI and in tensor-invariant form",
        description="Show one flow law as published, converted to SI, and rewritten in "
        "second invariants for numerical models, with the conventions.",
    )
    parser.add_argument(
        "law_id", metavar="LAW_ID", help="flow-law id (see `rheology rocks --laws`)"
    )
    _add_json(parser, "the law")
    parser.set_defaults(handler=_run_law)


def _run_law(args, out, err) -> int:
    from rheology.library.tables import get_flow_law
    from rheology.outputs import law_to_dict

    law = get_flow_law(args.law_id)
    data = law_to_dict(law)
    if args.json:
        _write_json(out, data)
        return OK
    si, inv = data["si"], data["invariant"]
    lines = [
        f"{law.id}: {law.rock}, {law.mechanism} [{law.status}]",
        f"  {law.citation}",
        f"  where: {law.location}",
        f"  experiments: {law.experimental_range}",
        "",
        "as published (triaxial: differential stress sigma_d = sigma1 - sigma3, "
        "axial strain rate edot_ax):",
        f"  {_law_line(law)}",
        f"  {_SYMBOLS}",
        "",
        "in SI:",
        f"  A = {law.A:.6g} {si['A_units']}, Q = {law.Q:.6g} J/mol, V = {law.V:.6g} m^3/mol",
    ]
    if law.mechanism == "peierls":
        lines.append(f"  sigma_P = {law.peierls_stress:.6g} Pa")
    lines += [
        "",
        "tensor-invariant form (for numerical models):",
        f"  {inv['equation']}",
        f"  A_II = 0.5 * 3^((n+1)/2) * A = {inv['factor_A_II_over_A']:.6g} * A "
        f"= {inv['A_II']:.6g} {inv['A_II_units']}",
    ]
    if law.mechanism == "peierls":
        lines.append(f"  tau_P = sigma_P / sqrt(3) = {inv['peierls_stress_II_Pa']:.6g} Pa")
    else:
        lines += [
            f"  {inv['viscosity_equation']}",
            f"  F2 = 2^((1-n)/n) / 3^((n+1)/(2n)) = {inv['viscosity_factor_F2']:.4f}",
        ]
    lines += ["", "conventions:"] + [
        f"  {key}: {text}" for key, text in data["conventions"].items()
    ]
    if law.notes:
        lines += ["", f"notes: {law.notes}"]
    out.write("\n".join(lines) + "\n")
    return OK


# ---------------------------------------------------------------------- demo, app


def _add_demo(subparsers) -> None:
    parser = subparsers.add_parser(
        "demo",
        help="run the bundled demo scenario and write its figure",
        description="Analyse the bundled demo scenario (an invented continental interior), "
        f"print the report and write the figure (default ./{DEMO_FIGURE}).",
    )
    parser.add_argument(
        "--plot",
        metavar="FILE.png",
        default=DEMO_FIGURE,
        help=f"figure file (default {DEMO_FIGURE} in the current directory)",
    )
    _add_json(parser, "the analysis")
    parser.set_defaults(handler=_run_demo)


def _run_demo(args, out, err) -> int:
    from rheology.answers.report import analyse
    from rheology.outputs import analysis_to_dict
    from rheology.scenario import bundled_example

    check_figure_path(args.plot)
    path = bundled_example("demo")
    analysis = analyse(read_scenario_file(str(path)))
    written = _save_plot(analysis, args.plot).resolve()
    if args.json:
        _write_json(out, analysis_to_dict(analysis))
        err.write(f"figure written to {written}\n")
    else:
        out.write(f"scenario: {path}\n\n" + _analysis_text(analysis) + "\n")
        out.write(f"figure written to {written}\n")
    return OK


def find_app() -> pathlib.Path | None:
    """Path of the Streamlit front end, or None when it is not installed.

    Returns
    -------
    pathlib.Path or None
        ``rheology/_bundled/ui/app.py`` in an installed wheel, else ``ui/app.py`` at the
        root of a source checkout.
    """
    here = pathlib.Path(__file__).resolve().parent
    for candidate in (here / "_bundled" / "ui" / "app.py", here.parent / "ui" / "app.py"):
        if candidate.is_file():
            return candidate
    return None


def _add_app(subparsers) -> None:
    parser = subparsers.add_parser(
        "app",
        help="open the web front end (Streamlit)",
        description="Launch the Streamlit front end in a browser "
        "(python -m streamlit run <ui/app.py>).",
    )
    parser.set_defaults(handler=_run_app)


def _run_app(args, out, err) -> int:
    app = find_app()
    if app is None:
        raise CommandError(
            "app: the front end (ui/app.py) is not installed with this copy of rheology"
        )
    command = [
        sys.executable,
        "-m",
        "streamlit",
        "run",
        str(app),
        "--client.toolbarMode",
        "minimal",
    ]
    try:
        return subprocess.call(command)
    except OSError as exc:
        raise CommandError(f"app: could not start streamlit ({exc})") from None


# ------------------------------------------------------------------------- parser


#: Functions that each register one subcommand (subparser + ``handler`` default).
def _add_uncertainty_and_sites(subparsers) -> None:
    from rheology.uncertainty import commands

    commands.register(subparsers)


COMMANDS: list[Callable] = [
    _add_envelope,
    _add_point,
    _add_rocks,
    _add_law,
    _add_demo,
    _add_uncertainty_and_sites,
    _add_app,
]


def build_parser() -> argparse.ArgumentParser:
    """The argument parser with every command of :data:`COMMANDS` registered."""
    from rheology import __version__

    parser = _Parser(
        prog="rheology",
        description="Strength envelopes and brittle-ductile transitions of the lithosphere "
        "from cited laboratory flow laws. Screening estimates only.",
    )
    parser.add_argument("--version", action="version", version=f"rheology {__version__}")
    subparsers = parser.add_subparsers(dest="command", metavar="COMMAND", required=True)
    for register in COMMANDS:
        register(subparsers)
    return parser


def _report_warnings(caught, err) -> None:
    seen = set()
    for item in caught:
        message = str(item.message)
        if message in seen:
            continue
        seen.add(message)
        from rheology.errors import RheologyWarning

        if issubclass(item.category, RheologyWarning):
            err.write(f"warning: {message}\n")
        else:
            err.write(f"warning: {item.category.__name__}: {message}\n")


def main(argv: Sequence[str] | None = None) -> int:
    """Run the command line; returns the exit code.

    Parameters
    ----------
    argv : sequence of str, optional
        Arguments without the program name; default ``sys.argv[1:]``.

    Returns
    -------
    int
        0 on success, 2 for bad input or usage, 1 for an internal error.
    """
    out, err = sys.stdout, sys.stderr
    parser = build_parser()
    try:
        args = parser.parse_args(argv)
    except SystemExit as exc:  # argparse: usage errors (2), --help and --version (0)
        return exc.code if isinstance(exc.code, int) else USAGE_ERROR
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        try:
            code = args.handler(args, out, err)
        except RheologyError as exc:
            code = _fail(err, f"error: {exc}", USAGE_ERROR)
        except BrokenPipeError:  # output piped into e.g. `head`, which closed early
            code = OK
        except OSError as exc:  # files given on the command line (--csv, --plot)
            where = f"{exc.filename}: " if exc.filename else ""
            code = _fail(err, f"error: {where}{exc.strerror or exc}", USAGE_ERROR)
        except KeyboardInterrupt:
            code = _fail(err, "interrupted", 130)
        except Exception as exc:  # noqa: BLE001 - the one place that reports anything else
            code = _fail(
                err,
                f"internal error: {type(exc).__name__}: {exc} (please report it)",
                INTERNAL_ERROR,
            )
    _report_warnings(caught, err)
    return code


def _fail(err, message: str, code: int) -> int:
    err.write(" ".join(message.splitlines()) + "\n")
    return code
