"""Small helpers shared by the command-line commands: reading a scenario file, text tables."""

from __future__ import annotations

import argparse
import math
import pathlib
from collections.abc import Iterator, Mapping, Sequence
from contextlib import contextmanager

from rheology.errors import RheologyError


def read_scenario_file(path_text: str):
    """The scenario in ``path_text``; a missing file or a directory is a one-line error."""
    from rheology.scenario import load_scenario

    path = pathlib.Path(path_text)
    if not path.exists():
        raise RheologyError(f"{path_text}: no such file")
    if path.is_dir():
        raise RheologyError(f"{path_text}: is a directory, expected a scenario file (.toml)")
    return load_scenario(path)


@contextmanager
def option_names(names: Mapping[str, str]) -> Iterator[None]:
    """Re-word errors of the Python API with the option the user typed.

    A :class:`RheologyError` whose message starts with ``"<field>:"`` for a key of
    ``names`` is raised again (same class) starting with the option instead, e.g.
    ``"depth: ..."`` becomes ``"--depth: ..."``.

    Parameters
    ----------
    names : mapping of str to str
        API field name -> command-line option.
    """
    try:
        yield
    except RheologyError as exc:
        message = str(exc)
        for field, option in names.items():
            if message.startswith(f"{field}:"):
                raise type(exc)(option + message[len(field) :]) from None
        raise


def check_figure_path(path_text: str, example: str = "envelope.png") -> pathlib.Path:
    """The path of a figure to write, with a suffix that matplotlib can write.

    Checked before any computation, so a bad ``--plot`` costs nothing.

    Parameters
    ----------
    path_text : str
        The ``--plot`` value as typed.
    example : str, optional
        A file name suggested in the message.

    Returns
    -------
    pathlib.Path

    Raises
    ------
    RheologyError
        No suffix, or a suffix that names no format matplotlib writes.
    """
    from matplotlib.backend_bases import FigureCanvasBase  # no pyplot, no GUI

    path = pathlib.Path(path_text)
    if not path.suffix:
        raise RheologyError(f"--plot: {path_text!r} has no file suffix; give e.g. {example!r}")
    formats = FigureCanvasBase.get_supported_filetypes()
    if path.suffix[1:].lower() not in formats:
        raise RheologyError(
            f"--plot: {path_text!r}: {path.suffix!r} is not a figure format; expected one of "
            + ", ".join(sorted(formats))
        )
    return path


def text_table(
    rows: Sequence[Sequence[str]], header: Sequence[str], right: set[int] = frozenset()
) -> str:
    """Plain-text table with columns padded to their widest cell (``right``: right-aligned)."""
    cells = [list(header)] + [[str(c) for c in row] for row in rows]
    widths = [max(len(row[i]) for row in cells) for i in range(len(header))]
    lines = []
    for number, row in enumerate(cells):
        parts = [
            cell.rjust(w) if i in right else cell.ljust(w)
            for i, (cell, w) in enumerate(zip(row, widths))
        ]
        lines.append("  " + "  ".join(parts).rstrip())
        if number == 0:
            lines.append("  " + "  ".join("-" * w for w in widths))
    return "\n".join(lines)


def whole_number(text: str) -> int:
    """An option value that is a whole number, also when written as a float (``1e3``).

    Parameters
    ----------
    text : str
        The option value as typed, e.g. ``"1000"``, ``"1e3"`` or ``"1.5e3"``.

    Returns
    -------
    int

    Raises
    ------
    argparse.ArgumentTypeError
        Not a number, or a number with a fractional part (``1.5``), or not finite.
    """
    try:
        return int(text)
    except ValueError:
        pass
    try:
        value = float(text)
    except ValueError:
        value = math.nan
    if not (math.isfinite(value) and value.is_integer()):
        raise argparse.ArgumentTypeError(f"{text!r} is not a whole number; expected e.g. 1000")
    return int(value)


def share_text(fraction: float) -> str:
    """A share as a whole percentage, never rounded to 0 % or 100 % when it is not.

    Parameters
    ----------
    fraction : float
        A share in [0, 1].

    Returns
    -------
    str
        ``'<1%'`` for a rare but present case that would round to 0 %, ``'>99%'`` for a
        near but not total one that would round to 100 %, else e.g. ``'37%'``.
    """
    shown = f"{100 * fraction:.0f}"
    if fraction > 0 and shown == "0":
        return "<1%"
    if fraction < 1 and shown == "100":
        return ">99%"
    return f"{shown}%"
