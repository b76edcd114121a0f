"""Picture of a traced root locus (PNG or SVG).

The view frames the part of the s-plane that holds the poles, zeros and
special points (and the closed-loop poles at an operating gain), so far
asymptote tails leave the picture instead of shrinking it.  Poles are drawn
as x and zeros as o (the trade's convention); everything else (palette,
markers for special points, layout) is synth's own.

The picture describes the linear model; a real machine also saturates, lags
and drifts.
"""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np

from synth.errors import InputError

# synth's own palette: muted inks on a warm paper tone
_PAPER = "#fbfaf7"
_INK = "#22223b"
_GRID = "#e4e1da"
_AXIS = "#6c6a64"
_ASYMPTOTE = "#9a8c98"
_REGION_FILL = "#dcefe4"
_REGION_EDGE = "#5f9e7f"
_UNSTABLE_FILL = "#f8e9e6"
_CROSSING = "#b5446e"
_BREAK = "#3b6e8f"
_OPERATING = "#e8a33d"
_BRANCHES = ("#2f6690", "#bc4b51", "#5b8e7d", "#8c6a4f", "#6c5b7b",
             "#d08c30", "#3a7ca5", "#9b4f96", "#4d7c0f", "#a0522d")


def _fmt(x: float) -> str:
    x = float(x)
    if abs(x) < 1e-12:
        return "0"
    return f"{x:.3g}"


def _frame(trace, extra: np.ndarray, region) -> tuple[float, float, float, float]:
    """Axis limits (x0, x1, y0, y1) around the interesting points.

    The poles, zeros, centroid and operating poles always count; breakaway
    points and axis crossings count when they lie within three sizes of that
    core box (a crossing at an absurd gain far out would otherwise shrink the
    part that matters).
    """
    p = trace.points
    core = [trace.poles, trace.zeros, np.asarray(extra, dtype=complex)]
    if p.asymptotes.centroid is not None:
        core.append(np.asarray([p.asymptotes.centroid], dtype=complex))
    z = np.concatenate(core)
    z = z[np.isfinite(z)]
    if z.size == 0:
        z = np.zeros(1, dtype=complex)
    cx0, cx1 = float(z.real.min()), float(z.real.max())
    cy = float(np.abs(z.imag).max())
    size = max(cx1 - cx0, 2 * cy)
    if size <= 1e-9 * max(abs(cx0), abs(cx1), 1e-300):
        size = trace.scale  # a single point: use the locus's own size
    w = np.asarray([c.frequency for c in p.crossings], dtype=float)
    special = np.concatenate([np.asarray([b.s for b in p.breakaways], dtype=complex),
                              1j * w, -1j * w])
    if special.size:
        dx = np.maximum(np.maximum(cx0 - special.real, special.real - cx1), 0.0)
        dy = np.maximum(np.abs(special.imag) - cy, 0.0)
        z = np.concatenate([z, special[np.hypot(dx, dy) <= 3.0 * size]])
    x0, x1 = float(z.real.min()), float(z.real.max())
    y1 = float(np.abs(z.imag).max())
    span = max(x1 - x0, 2 * y1, 1e-9 * max(abs(x0), abs(x1)), 1e-12)
    if span <= 1e-9 * max(abs(x0), abs(x1), 1.0):
        span = max(trace.scale, abs(x0), 1.0)
    # keep the imaginary axis in view when it is not far away
    if x1 < 0 and -x1 < 1.5 * span:
        x1 = 0.0
    if x0 > 0 and x0 < 1.5 * span:
        x0 = 0.0
    if region is not None and getattr(region, "sigma", 0.0) > 0 and -region.sigma > x1 - 2 * span:
        x1 = max(x1, -float(region.sigma))
    span = max(x1 - x0, 2 * y1, span)
    pad = 0.28 * span
    half_h = max(y1 + pad, 0.5 * (x1 - x0 + 2 * pad) / 1.3)
    half_w = max(0.5 * (x1 - x0) + pad, 1.3 * half_h)
    cx = 0.5 * (x0 + x1)
    return cx - half_w, cx + half_w, -half_h, half_h


class _Labels:
    """Places annotation labels so that they do not overlap (greedy, in pixels)."""

    _OFFSETS = ((12, 10), (12, -26), (-74, 10), (-74, -26), (12, 30), (12, -46),
                (-74, 30), (-74, -46), (40, -8), (-100, -8))

    def __init__(self, ax, x0, x1, y0, y1):
        self.ax = ax
        self.lims = (x0, x1, y0, y1)
        self.boxes: list[tuple[float, float, float, float]] = []

    def add(self, text: str, x: float, y: float, color: str, box: dict) -> None:
        x0, x1, y0, y1 = self.lims
        if not (x0 <= x <= x1 and y0 <= y <= y1):
            return  # outside the view
        px, py = self.ax.transData.transform((x, y))
        lines = text.split("\n")
        w = 6.2 * max(len(t) for t in lines) + 6
        h = 12.5 * len(lines) + 4
        scale = self.ax.figure.dpi / 72.0
        choice = self._OFFSETS[0]
        for off in self._OFFSETS:
            bx, by = px + off[0] * scale, py + off[1] * scale
            rect = (bx, by, bx + w * scale, by + h * scale)
            if not any(rect[0] < b[2] and b[0] < rect[2] and rect[1] < b[3] and b[1] < rect[3]
                       for b in self.boxes):
                choice = off
                self.boxes.append(rect)
                break
        else:
            bx, by = px + choice[0] * scale, py + choice[1] * scale
            self.boxes.append((bx, by, bx + w * scale, by + h * scale))
        self.ax.annotate(text, (x, y), xytext=choice, textcoords="offset points", fontsize=8.5,
                         color=color, zorder=8, ha="left", va="bottom", bbox=box,
                         arrowprops={"arrowstyle": "-", "color": color, "linewidth": 0.7,
                                     "shrinkA": 0, "shrinkB": 4})


def _region_polygon(region, x0: float, x1: float, y0: float, y1: float):
    """Vertices of the allowed region clipped to a box far beyond the view."""
    big = 10.0 * max(x1 - x0, y1 - y0)
    left = x0 - big
    edge = -float(region.sigma)
    zeta = float(region.zeta)
    if zeta <= 0.0:
        return [(edge, -big), (edge, big), (left, big), (left, -big)]
    slope = math.tan(math.acos(zeta))  # |Im s| <= -Re s * tan(phi)
    top = lambda x: -x * slope  # noqa: E731
    return [(edge, -top(edge)), (edge, top(edge)), (left, top(left)), (left, -top(left))]


def plot_locus(trace, path, region=None, operating_gain: float | None = None,
               title: str | None = None) -> Path:
    """Draw ``trace`` (a :class:`synth.locus.trace.LocusTrace`) into a PNG or SVG file.

    Parameters
    ----------
    trace : LocusTrace
        The traced locus.
    path : str or Path
        Output file; ``.png`` or ``.svg`` (decides the format).
    region : Region, optional
        Requirement region to shade (default: the trace's own region).
    operating_gain : float, optional
        Mark the closed-loop poles at this gain.
    title : str, optional
        Picture title (default: a plain description of the locus).

    Returns
    -------
    Path
        The file written (written whole or not at all).

    Raises
    ------
    InputError
        For an unsupported suffix, a bad gain or an unwritable place.
    """
    out = Path(path)
    suffix = out.suffix.lower()
    if suffix not in (".png", ".svg"):
        raise InputError(f"the picture must be a .png or .svg file, not {out.name!r}")
    if operating_gain is not None and not np.isfinite(float(operating_gain)):
        raise InputError(f"the operating gain must be a finite number, not {operating_gain}")
    region = region if region is not None else trace.region
    if region is not None and getattr(region, "sigma", 0.0) == 0.0 and getattr(region, "zeta", 0.0) == 0.0:
        region = None

    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    op_roots = np.zeros(0, dtype=complex)
    if operating_gain is not None:
        op_roots = trace.roots_at(float(operating_gain))
        op_roots = op_roots[np.isfinite(op_roots)]
    x0, x1, y0, y1 = _frame(trace, op_roots, region)

    fig = Figure(figsize=(8.0, 6.2), dpi=120, facecolor="white")
    FigureCanvasAgg(fig)
    ax = fig.add_subplot(1, 1, 1)
    ax.set_facecolor(_PAPER)
    ax.grid(True, color=_GRID, linewidth=0.7, zorder=0)
    ax.set_axisbelow(True)
    for side in ("top", "right"):
        ax.spines[side].set_visible(False)

    # half-plane context: the unstable side faintly tinted, the allowed region shaded
    big = 10.0 * max(x1 - x0, y1 - y0)
    ax.fill([0, big, big, 0], [-big, -big, big, big], color=_UNSTABLE_FILL, zorder=0.5,
            linewidth=0, label="_nolegend_")
    if region is not None:
        poly = _region_polygon(region, x0, x1, y0, y1)
        xs, ys = zip(*poly, strict=True)
        ax.fill(xs, ys, color=_REGION_FILL, alpha=0.85, zorder=0.6, linewidth=0,
                label=f"required region ({region.describe()})" if hasattr(region, "describe")
                else "required region")
        ax.plot([*xs, xs[0]], [*ys, ys[0]], color=_REGION_EDGE, linewidth=1.0, zorder=0.7)
    ax.axhline(0.0, color=_AXIS, linewidth=0.8, zorder=1)
    ax.axvline(0.0, color=_AXIS, linewidth=0.8, zorder=1)

    pts = trace.points
    a = pts.asymptotes
    if a.centroid is not None:
        reach = 3.0 * big
        for k, ang in enumerate(a.angles_deg):
            t = math.radians(ang)
            ax.plot([a.centroid, a.centroid + reach * math.cos(t)],
                    [0.0, reach * math.sin(t)], linestyle=(0, (6, 4)), color=_ASYMPTOTE,
                    linewidth=1.0, zorder=2, label="asymptotes" if k == 0 else "_nolegend_")
        ax.plot([a.centroid], [0.0], marker="+", markersize=9, color=_ASYMPTOTE, zorder=3,
                linestyle="none")

    roots = trace.roots
    for j in range(roots.shape[1]):
        b = roots[:, j]
        ok = np.isfinite(b)
        ax.plot(b.real[ok], b.imag[ok], color=_BRANCHES[j % len(_BRANCHES)], linewidth=1.8,
                zorder=4, solid_capstyle="round",
                label=f"branches ({'K < 0' if trace.negative else 'K > 0'})" if j == 0 else "_nolegend_")

    ax.plot(trace.poles.real, trace.poles.imag, linestyle="none", marker="x", markersize=10,
            markeredgewidth=2.2, color=_INK, zorder=6, label="open-loop poles")
    if trace.zeros.size:
        ax.plot(trace.zeros.real, trace.zeros.imag, linestyle="none", marker="o", markersize=9,
                markerfacecolor="none", markeredgewidth=2.0, color=_INK, zorder=6,
                label="open-loop zeros")

    label_box = {"boxstyle": "round,pad=0.25", "facecolor": "white", "edgecolor": "none", "alpha": 0.85}
    # limits first, so that label placement works in the final pixel frame
    ax.set_xlim(x0, x1)
    ax.set_ylim(y0, y1)
    ax.set_aspect("equal", adjustable="box")
    labels = _Labels(ax, x0, x1, y0, y1)

    # repeated poles and zeros: say how many sit on one mark
    for values in (trace.poles, trace.zeros):
        seen: list[complex] = []
        for v in values:
            if any(abs(v - u) <= 1e-9 * max(1.0, abs(v)) for u in seen):
                continue
            seen.append(v)
            count = int(np.sum(np.abs(values - v) <= 1e-9 * max(1.0, abs(v))))
            if count > 1:
                ax.annotate(f"{count}", (v.real, v.imag), xytext=(7, 7), textcoords="offset points",
                            fontsize=8, color=_INK, zorder=8)

    if pts.crossings:
        w = np.asarray([c.frequency for c in pts.crossings])
        ax.plot(np.zeros(2 * w.size), np.concatenate([w, -w]), linestyle="none", marker="D",
                markersize=7, color=_CROSSING, zorder=7, label="imaginary-axis crossings")
        for c in pts.crossings:
            labels.add(f"K = {_fmt(c.gain)}\nw = {_fmt(c.frequency)}", 0.0, c.frequency,
                       _CROSSING, label_box)
    if pts.breakaways:
        s = np.asarray([b.s for b in pts.breakaways])
        ax.plot(s.real, s.imag, linestyle="none", marker="s", markersize=7, color=_BREAK,
                zorder=7, label="roots meet (breakaway / break-in)")
        for b in sorted((b for b in pts.breakaways if b.s.imag >= 0), key=lambda b: b.s.real):
            labels.add(f"K = {_fmt(b.gain)}", b.s.real, b.s.imag, _BREAK, label_box)
    if op_roots.size:
        ax.plot(op_roots.real, op_roots.imag, linestyle="none", marker="p", markersize=10,
                markerfacecolor=_OPERATING, markeredgecolor=_INK, markeredgewidth=0.8, zorder=9,
                label=f"closed-loop poles at K = {_fmt(operating_gain)}")

    ax.set_xlabel("real part of s  (1/s)")
    ax.set_ylabel("imaginary part of s  (rad/s)")
    sign = "K < 0" if trace.negative else "K > 0"
    ax.set_title(title or f"root locus of the loop, {sign}", fontsize=11, color=_INK, loc="left")
    legend = ax.legend(loc="upper left", fontsize=8, framealpha=0.92, facecolor="white",
                       edgecolor=_GRID)
    legend.set_zorder(10)
    fig.text(0.99, 0.01, "linear model: check on the real machine", ha="right", va="bottom",
             fontsize=7, color=_AXIS)
    fig.tight_layout()

    target = out.resolve()
    folder = target.parent
    if not folder.is_dir():
        raise InputError(f"cannot write {out}: the folder {folder} does not exist")
    from synth.outputs.files import atomic_file

    with atomic_file(target) as tmp:
        fig.savefig(tmp, format=suffix[1:], facecolor="white")
    return out
