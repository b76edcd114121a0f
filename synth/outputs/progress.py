"""A small progress bar for long runs: drawn on a terminal, silent when piped."""

from __future__ import annotations

import sys
import time
from collections.abc import Callable, Iterator
from contextlib import contextmanager

ProgressFn = Callable[[float, float, str], None]


@contextmanager
def terminal_progress(title: str, stream=None, width: int = 28) -> Iterator[ProgressFn | None]:
    """Yield a ``progress(done, total, label)`` callback, or ``None`` when not on a terminal.

    The bar redraws at most ten times a second on standard error and is wiped
    when the block ends, so the printed results start on a clean line.
    """
    out = stream if stream is not None else sys.stderr
    if not (hasattr(out, "isatty") and out.isatty()):
        yield None
        return
    last = [0.0]
    start = time.monotonic()

    def progress(done: float, total: float, label: str = "") -> None:
        now = time.monotonic()
        if now - last[0] < 0.1 and done < total:
            return
        last[0] = now
        frac = 0.0 if total <= 0 else min(1.0, max(0.0, done / total))
        filled = int(round(frac * width))
        bar = "#" * filled + "." * (width - filled)
        out.write(f"\r{title} [{bar}] {100 * frac:3.0f}% {now - start:5.1f}s {label[:30]:<30}")
        out.flush()

    try:
        yield progress
    finally:
        out.write("\r" + " " * (width + 80) + "\r")
        out.flush()
