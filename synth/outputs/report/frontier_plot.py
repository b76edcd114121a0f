"""The picture of a frontier (``synth frontier --plot``): best value against the Ms limit.

One line per structure, the objective's best value (lower is better)
against the peak-sensitivity limit; a level without a feasible design leaves
a gap.  The file's own limit is a dashed vertical line.  The y axis is
logarithmic when the values span more than a decade.  It draws from the
``synth.frontier/1`` document alone, so anything holding that JSON can draw
it; matplotlib is imported here only, when a picture is asked for.

References
----------
.. [1] O. Garpinger, T. Hagglund and K. J. Astrom, "Performance and
   robustness trade-offs in PID control", J. Process Control 24 (2014)
   (performance against the robustness limit, one curve per structure).
"""

from __future__ import annotations

import math
from pathlib import Path

from synth.errors import InputError

__all__ = ["draw_frontier", "frontier_series", "plot_frontier"]

_INK = "#1f2a33"
_MUTED = "#7a8792"
_GRID = "#e3e8ec"
#: Structure lines: synth's own palette and marks (no x or o: those mean poles and zeros).
_LINES = (("#0e7c86", "s"), ("#c4463a", "D"), ("#6b4fa3", "^"), ("#b07d12", "v"),
          ("#2f6db5", "P"), ("#5b7f2a", "<"), ("#8a3b62", ">"), ("#4a4a4a", "h"))


def frontier_series(doc: dict) -> list[tuple[str, list[float], list[float]]]:
    """``(structure, levels, values)`` per structure; a missing value is NaN (a gap)."""
    out = []
    for name, rows in (doc.get("structures") or {}).items():
        xs = [float(r["level"]) for r in rows]
        ys = [math.nan if r.get("value") is None else float(r["value"]) for r in rows]
        out.append((str(name), xs, ys))
    return out


def _value_label(doc: dict) -> str:
    what = doc.get("value_label") or doc.get("objective") or "objective"
    unit = doc.get("value_unit") or ""
    return f"best {what}" + (f" ({unit})" if unit else "") + ", lower is better"


def draw_frontier(ax, doc: dict) -> None:
    """Draw a ``synth.frontier/1`` document into a matplotlib Axes."""
    series = frontier_series(doc)
    finite = [y for _, _, ys in series for y in ys if math.isfinite(y) and y > 0]
    for i, (name, xs, ys) in enumerate(series):
        colour, mark = _LINES[i % len(_LINES)]
        ax.plot(xs, ys, "-", marker=mark, ms=5, lw=1.6, color=colour, label=name)
    if finite and max(finite) > 10 * min(finite):
        ax.set_yscale("log")
    own = doc.get("own_level")
    if own is not None:
        ax.axvline(float(own), color=_MUTED, lw=1.0, ls="--")
        ax.annotate(f"file's limit Ms <= {float(own):g}", (float(own), 1.0),
                    xycoords=("data", "axes fraction"), xytext=(4, -12),
                    textcoords="offset points", fontsize=8, color=_MUTED)
    ax.set_xlabel("peak sensitivity limit Ms")
    ax.set_ylabel(_value_label(doc))
    ax.grid(True, color=_GRID, lw=0.6)
    for side in ("top", "right"):
        ax.spines[side].set_visible(False)
    if series:
        ax.legend(loc="best", fontsize=8, frameon=False)
    if not finite:
        ax.text(0.5, 0.5, "no feasible design at any level", transform=ax.transAxes,
                ha="center", va="center", color=_MUTED)


def plot_frontier(doc: dict, path: str | Path) -> Path:
    """Write the frontier picture of a ``synth.frontier/1`` document as PNG or SVG (by suffix).

    The file is written through a temporary name
    (:func:`synth.outputs.files.atomic_file`), so a failure or an interrupt
    leaves no partial picture.

    Raises
    ------
    InputError
        When the suffix is not .png or .svg.
    """
    import matplotlib

    matplotlib.use("Agg")
    from matplotlib.figure import Figure

    from synth.outputs.files import atomic_file

    out = Path(path)
    suffix = out.suffix.lower()
    if suffix not in (".png", ".svg"):
        raise InputError(f"cannot write {out}: the picture must be .png or .svg")
    fig = Figure(figsize=(7.0, 4.4))
    ax = fig.add_subplot(1, 1, 1)
    draw_frontier(ax, doc)
    title = f"trade-off frontier: {doc.get('objective', '')}"
    src = doc.get("source")
    if src:
        title = f"{Path(src).name}: {title}"
    ax.set_title(title, fontsize=9, color=_INK, loc="left")
    fig.text(0.99, 0.005, "from a linear model: verify against saturation, delay and "
             "nonlinearity before use", ha="right", va="bottom", fontsize=7, color=_MUTED)
    fig.tight_layout()
    with atomic_file(out, "--plot") as tmp:
        fig.savefig(tmp, format=suffix[1:], facecolor="white", dpi=120)
    return out
