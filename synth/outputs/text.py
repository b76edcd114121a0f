"""Terminal text: a small table model with a plain renderer and a rich one.

Outputs build a :class:`TextReport` (lines before, one table, lines after);
:func:`plain_lines` writes it as fixed-width text (what ``table_lines()``
returns and what a pipe receives: no control codes, nothing but ASCII
layout), :func:`show` draws it with :mod:`rich` when standard output is a
terminal.  Both carry the same content; only the look differs.  rich is
imported inside :func:`show` so that ``synth --help`` stays light.
"""

from __future__ import annotations

import math
import sys
from collections.abc import Iterable
from dataclasses import dataclass, field

__all__ = ["Row", "TextReport", "TextTable", "echo_lines", "number", "plain_lines", "show"]


def number(v, digits: int = 4, none: str = "-") -> str:
    """A value as text: ``digits`` significant digits, ``none`` for None, yes/no, unbounded."""
    if v is None:
        return none
    if isinstance(v, bool):
        return "yes" if v else "no"
    try:
        x = float(v)
    except (TypeError, ValueError):
        return str(v)
    if not math.isfinite(x):
        return "unbounded" if x > 0 else "-unbounded"
    return f"{x:.{digits}g}"


@dataclass(frozen=True)
class Row:
    """One table row: its cells and the lines shown under it.

    Attributes
    ----------
    cells : tuple of str
    details : tuple of str
        Lines printed under the row, indented past the first column.
    marks : tuple of str
        Per cell: ``""``, ``"good"`` or ``"bad"`` (colour on a terminal only).
    """

    cells: tuple[str, ...]
    details: tuple[str, ...] = ()
    marks: tuple[str, ...] = ()


@dataclass(frozen=True)
class TextTable:
    """A table: header, rows; the first column is right-aligned, the others left."""

    header: tuple[str, ...]
    rows: tuple[Row, ...]
    empty: str = ""


@dataclass(frozen=True)
class TextReport:
    """Lines, a table, more lines: everything one command prints."""

    before: tuple[str, ...] = ()
    table: TextTable | None = None
    after: tuple[str, ...] = field(default_factory=tuple)


def _table_lines(t: TextTable) -> list[str]:
    rows = [r.cells for r in t.rows]
    widths = [max(len(t.header[i]), *(len(r[i]) for r in rows)) if rows else len(t.header[i])
              for i in range(len(t.header))]

    def line(cells) -> str:
        return "  ".join(c.rjust(w) if i == 0 else c.ljust(w)
                         for i, (c, w) in enumerate(zip(cells, widths, strict=True)))

    out = [line(t.header), "  ".join("-" * w for w in widths)]
    for r in t.rows:
        out.append(line(r.cells))
        out.extend(f"{'':>{widths[0]}}  {d}" for d in r.details)
    if not t.rows and t.empty:
        out.append(f"  {t.empty}")
    return out


def plain_lines(report: TextReport) -> list[str]:
    """The report as fixed-width lines (no control codes)."""
    out = list(report.before)
    if report.table is not None:
        out.extend(_table_lines(report.table))
    out.extend(report.after)
    return out


def echo_lines(lines: Iterable[str], stream=None) -> None:
    """Write lines to standard output (or ``stream``)."""
    out = stream if stream is not None else sys.stdout
    for line in lines:
        out.write(line + "\n")


def show(report: TextReport, stream=None) -> None:
    """Print the report: drawn by rich on a terminal, plain lines otherwise.

    The plain form is what a pipe or a file receives, byte for byte the
    :func:`plain_lines` of the report.
    """
    out = stream if stream is not None else sys.stdout
    if not (hasattr(out, "isatty") and out.isatty()) or report.table is None:
        echo_lines(plain_lines(report), out)
        return
    from rich import box
    from rich.console import Console
    from rich.table import Table
    from rich.text import Text

    console = Console(file=out, highlight=False, soft_wrap=True)
    for line in report.before:
        console.print(Text(line))
    t = report.table
    table = Table(box=box.SIMPLE_HEAD, show_edge=False, pad_edge=False)
    for i, h in enumerate(t.header):
        table.add_column(h, justify="right" if i == 0 else "left", no_wrap=True)
    styles = {"good": "green", "bad": "bold red"}
    for r in t.rows:
        marks = r.marks or ("",) * len(r.cells)
        table.add_row(*(Text(c, style=styles.get(m, "")) for c, m in zip(r.cells, marks,
                                                                         strict=True)))
    if t.rows:
        console.print(table)
    elif t.empty:
        console.print(Text(f"  {t.empty}"))
    # what goes under each row on paper goes after the table on screen, keyed by the first cell
    for r in t.rows:
        for i, d in enumerate(r.details):
            head = f"{r.cells[0]:>4}" if i == 0 else "    "
            console.print(Text(f"{head}  {d}", style="red" if d.startswith("fails:") else ""))
    for line in report.after:
        console.print(Text(line))
