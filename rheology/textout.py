"""Small helpers shared by the command-line commands: reading a scenario file, text tables."""

from __future__ import annotations

import pathlib
from collections.abc import Sequence

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
