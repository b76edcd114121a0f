"""A progress bar for long runs: drawn by rich on a terminal, silent when piped.

The library reports progress through a plain callback, ``progress(done,
total, label)`` (``synth.design.run_design(problem, progress=...)``); this
module turns it into a bar.  rich is imported only when there is a terminal
to draw on, so ``synth --help`` and piped runs never load it.
"""

from __future__ import annotations

import sys
from collections.abc import Callable, Iterator
from contextlib import contextmanager

__all__ = ["ProgressFn", "terminal_progress"]

ProgressFn = Callable[[float, float, str], None]


@contextmanager
def terminal_progress(title: str, stream=None) -> Iterator[ProgressFn | None]:
    """Yield a ``progress(done, total, label)`` callback, or ``None`` when not on a terminal.

    Parameters
    ----------
    title : str
        Shown before the bar.
    stream : file, optional
        Where to draw (default standard error); nothing is drawn unless it is a
        terminal, so piped output never holds control codes.

    Notes
    -----
    The bar is transient: it is wiped when the block ends, so the printed
    results start on a clean line.  The elapsed time it shows is for the eye
    only; no result depends on it.
    """
    out = stream if stream is not None else sys.stderr
    if not (hasattr(out, "isatty") and out.isatty()):
        yield None
        return
    from rich.console import Console
    from rich.progress import BarColumn, Progress, TaskProgressColumn, TextColumn, TimeElapsedColumn

    bar = Progress(TextColumn(title), BarColumn(), TaskProgressColumn(), TimeElapsedColumn(),
                   TextColumn("{task.description}"), console=Console(file=out), transient=True)
    with bar:
        task = bar.add_task("", total=None)

        def progress(done: float, total: float, label: str = "") -> None:
            bar.update(task, completed=done, total=total, description=label[:30])

        yield progress
