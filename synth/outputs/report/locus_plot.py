"""Picture of a traced root locus (PNG, SVG, or a region of a report page).

The main view frames the dominant region (:mod:`synth.outputs.report.framing`):
the closed-loop poles that shape the response at the operating gain, the
requirement region, and the poles, zeros, crossings and breakaways near
them.  Far poles and zeros (a lead pole two decades out, the fast all-pass
poles of a Pade form) get arrows at the edge, their values in a note and a
zoomed-out overview beside the main view; they never shrink it.  Poles are drawn
as x and zeros as o (the trade's convention); everything else (palette,
markers for special points, layout) is synth's own.

The picture describes the linear model; a real machine also saturates, lags
and drifts.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np

from synth.errors import InputError
from synth.outputs.report.framing import VIEW_ASPECT, LocusView, locus_view, region_polygon

__all__ = ["LocusAxes", "draw_locus", "frame_of", "plot_locus"]

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


def _fmt(x: float, digits: int = 3) -> str:
    x = float(x)
    if x == 0.0:
        return "0"
    return f"{x:.{digits}g}"


def _cfmt(z: complex, digits: int = 3) -> str:
    """A complex value for a label: ``-40 ± 50j`` for a pair, ``-1428`` on the axis."""
    z = complex(z)
    if z.imag == 0.0 or abs(z.imag) <= 1e-9 * abs(z):
        return _fmt(z.real, digits)
    return f"{_fmt(z.real, digits)} ± {_fmt(abs(z.imag), digits)}j"


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


@dataclass(frozen=True)
class LocusAxes:
    """The axes :func:`draw_locus` made, and how it framed them.

    Attributes
    ----------
    main : matplotlib.axes.Axes
        The dominant region.
    overview : matplotlib.axes.Axes or None
        The zoomed-out view of the whole locus (only when something is far).
    view : synth.outputs.report.framing.LocusView
    """

    main: Any
    overview: Any
    view: LocusView


def _clean_region(region):
    """The region to shade, or None for 'stable only' (nothing to shade beyond the half-plane)."""
    if region is None:
        return None
    if getattr(region, "sigma", 0.0) == 0.0 and getattr(region, "zeta", 0.0) == 0.0:
        return None
    return region


def _operating_roots(trace, operating_gain) -> np.ndarray:
    if operating_gain is None:
        return np.zeros(0, dtype=complex)
    roots = trace.roots_at(float(operating_gain))
    return roots[np.isfinite(roots)]


def frame_of(trace, region=None, operating_gain: float | None = None,
             aspect: float = VIEW_ASPECT) -> LocusView:
    """How :func:`draw_locus` frames ``trace`` (see :func:`synth.outputs.report.framing.locus_view`)."""
    pts = trace.points
    return locus_view(trace.poles, trace.zeros, _operating_roots(trace, operating_gain),
                      crossings=[c.frequency for c in pts.crossings],
                      breakaways=[b.s for b in pts.breakaways], region=_clean_region(region),
                      scale=float(trace.scale), aspect=aspect)


def _style(ax) -> None:
    ax.set_facecolor(_PAPER)
    ax.grid(True, color=_GRID, linewidth=0.7, zorder=0)
    ax.set_axisbelow(True)
    for side in ("top", "right"):
        ax.spines[side].set_visible(False)


def _backdrop(ax, region, lims) -> None:
    """The unstable half-plane tinted, the allowed region shaded, the axes drawn."""
    x0, x1, y0, y1 = lims
    big = 10.0 * max(x1 - x0, y1 - y0)
    ax.fill([0, big, big, 0], [-big, -big, big, big], color=_UNSTABLE_FILL, zorder=0.5,
            linewidth=0, label="_nolegend_")
    if region is not None:
        poly = region_polygon(region, lims)
        xs, ys = zip(*poly, strict=True)
        ax.fill(xs, ys, color=_REGION_FILL, alpha=0.85, zorder=0.6, linewidth=0,
                label="required region\n(" + region.describe().replace(" and ", ",\n") + ")"
                if hasattr(region, "describe") else "required region")
        ax.plot([*xs, xs[0]], [*ys, ys[0]], color=_REGION_EDGE, linewidth=1.0, zorder=0.7)
    ax.axhline(0.0, color=_AXIS, linewidth=0.8, zorder=1)
    ax.axvline(0.0, color=_AXIS, linewidth=0.8, zorder=1)


def _branches(ax, trace, lims, width: float, legend: bool) -> None:
    """Asymptotes, branches, open-loop poles (x) and zeros (o)."""
    x0, x1, y0, y1 = lims
    a = trace.points.asymptotes
    if a.centroid is not None:
        reach = 30.0 * max(x1 - x0, y1 - y0) + abs(a.centroid)
        for k, ang in enumerate(a.angles_deg):
            t = math.radians(ang)
            ax.plot([a.centroid, a.centroid + reach * math.cos(t)],
                    [0.0, reach * math.sin(t)], linestyle=(0, (6, 4)), color=_ASYMPTOTE,
                    linewidth=0.9, zorder=2,
                    label="asymptotes" if k == 0 and legend else "_nolegend_")
    roots = trace.roots
    sign = "K < 0" if trace.negative else "K > 0"
    for j in range(roots.shape[1]):
        b = roots[:, j]
        ok = np.isfinite(b)
        ax.plot(b.real[ok], b.imag[ok], color=_BRANCHES[j % len(_BRANCHES)], linewidth=width,
                zorder=4, solid_capstyle="round",
                label=f"branches ({sign})" if j == 0 and legend else "_nolegend_")
    small = width < 1.5
    ax.plot(trace.poles.real, trace.poles.imag, linestyle="none", marker="x",
            markersize=7 if small else 10, markeredgewidth=1.6 if small else 2.2, color=_INK,
            zorder=6, label="open-loop poles" if legend else "_nolegend_")
    if trace.zeros.size:
        ax.plot(trace.zeros.real, trace.zeros.imag, linestyle="none", marker="o",
                markersize=6 if small else 9, markerfacecolor="none",
                markeredgewidth=1.5 if small else 2.0, color=_INK, zorder=6,
                label="open-loop zeros" if legend else "_nolegend_")


def _edge_markers(ax, view: LocusView) -> None:
    """A small arrow at the main view's edge toward each far point."""
    x0, x1, y0, y1 = view.main
    cx, cy = 0.5 * (x0 + x1), 0.0
    hw, hh = 0.5 * (x1 - x0), 0.5 * (y1 - y0)
    items = ([(z, _INK) for z in view.far_poles] + [(z, _INK) for z in view.far_zeros]
             + [(z, _OPERATING) for z in view.far_closed]
             + [(z, _CROSSING if kind == "crossing" else _BREAK) for kind, z in view.far_points])
    for z, colour in items:
        for zz in {complex(z), complex(z).conjugate()}:
            dx, dy = zz.real - cx, zz.imag - cy
            t = 0.97 / max(abs(dx) / hw, abs(dy) / hh)
            ex, ey = cx + t * dx, cy + t * dy
            angle = math.degrees(math.atan2(dy / hh, dx / hw))
            ax.plot([ex], [ey], linestyle="none", marker=(3, 0, angle - 90.0), markersize=8,
                    color=colour, zorder=9, clip_on=False)


def _far_text(view: LocusView) -> str:
    """What lies outside the main view, with values (the edge markers point at them)."""
    lines = []
    for label, values in (("open-loop poles", view.far_poles), ("open-loop zeros", view.far_zeros),
                          ("closed-loop poles", view.far_closed)):
        if values.size:
            shown = [_cfmt(v, 4) for v in sorted(values, key=lambda v: (-abs(v), v.real))[:4]]
            more = f" (+{values.size - 4})" if values.size > 4 else ""
            lines.append(f"{label}: " + ", ".join(shown) + more)
    for kind, z in view.far_points[:4]:
        lines.append(f"{kind} at {_cfmt(z, 4)}")
    return "outside the main view (edge arrows):\n" + "\n".join(lines) if lines else ""


def draw_locus(target, trace, region=None, operating_gain: float | None = None,
               title: str | None = None) -> LocusAxes:
    """Draw ``trace`` into a matplotlib ``Figure`` or ``SubFigure`` (vector in any format).

    The main view frames the dominant region (:func:`frame_of`); far poles,
    zeros and special points get arrows at its edge, their values in a note,
    and a zoomed-out overview beside it.  Legend and notes stand outside the
    views, so nothing covers the poles.

    Parameters
    ----------
    target : matplotlib.figure.Figure or SubFigure
    trace : LocusTrace
    region : Region, optional
        Requirement region to shade (default: the trace's own region).
    operating_gain : float, optional
        Mark the closed-loop poles at this gain.
    title : str, optional

    Returns
    -------
    LocusAxes
    """
    region = _clean_region(region if region is not None else trace.region)
    op_roots = _operating_roots(trace, operating_gain)
    # the main axes' rectangle (fractions of the target) and its shape in inches
    # the main axes' rectangle (fractions of the target): beside an overview when something is
    # far, else the whole width; its shape in inches sets the view's aspect
    bbox = target.bbox
    rect = (0.085, 0.27, 0.6, 0.64)
    view = frame_of(trace, region, operating_gain,
                    aspect=(rect[2] * bbox.width) / (rect[3] * bbox.height))
    if not view.has_far:
        rect = (0.085, 0.27, 0.89, 0.64)
        view = frame_of(trace, region, operating_gain,
                        aspect=(rect[2] * bbox.width) / (rect[3] * bbox.height))
    x0, x1, y0, y1 = view.main

    ax = target.add_axes(rect)
    _style(ax)
    _backdrop(ax, region, view.main)
    _branches(ax, trace, view.main, 1.8, legend=True)
    ax.set_xlim(x0, x1)
    ax.set_ylim(y0, y1)
    ax.set_aspect("equal", adjustable="box")
    ax.apply_aspect()  # final pixel frame before the labels are placed
    label_box = {"boxstyle": "round,pad=0.25", "facecolor": "white", "edgecolor": "none",
                 "alpha": 0.85}
    labels = _Labels(ax, x0, x1, y0, y1)

    # repeated poles and zeros: say how many sit on one mark (relative: exact at the origin)
    for values in (trace.poles, trace.zeros):
        done = np.zeros(values.size, dtype=bool)
        for i, v in enumerate(values):
            if done[i]:
                continue
            same = np.abs(values - v) <= 1e-9 * abs(v)
            done |= same
            if int(np.sum(same)) > 1:
                ax.annotate(f"{int(np.sum(same))}", (v.real, v.imag), xytext=(7, 7),
                            textcoords="offset points", fontsize=8, color=_INK, zorder=8)

    pts = trace.points
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
    _edge_markers(ax, view)
    ax.set_xlabel("real part of s  (1/s)", fontsize=9)
    ax.set_ylabel("imaginary part of s  (rad/s)", fontsize=9)
    ax.tick_params(labelsize=8)
    sign = "K < 0" if trace.negative else "K > 0"
    ax.set_title(title or f"root locus of the loop, {sign}", fontsize=10, color=_INK, loc="left")

    overview = None
    if view.overview is not None:
        ox0, ox1, oy0, oy1 = view.overview
        orect = (0.74, 0.52, 0.25, 0.39)
        overview = target.add_axes(orect)
        _style(overview)
        _backdrop(overview, region, view.overview)
        _branches(overview, trace, view.overview, 1.0, legend=False)
        if op_roots.size:
            overview.plot(op_roots.real, op_roots.imag, linestyle="none", marker="p",
                          markersize=6, markerfacecolor=_OPERATING, markeredgecolor=_INK,
                          markeredgewidth=0.5, zorder=9)
        from matplotlib.patches import Rectangle

        overview.add_patch(Rectangle((x0, y0), x1 - x0, y1 - y0, fill=False, edgecolor=_INK,
                                     linewidth=1.0, linestyle="--", zorder=10))
        overview.set_xlim(ox0, ox1)
        overview.set_ylim(oy0, oy1)
        overview.set_aspect("equal", adjustable="box")
        overview.tick_params(labelsize=6.5)
        overview.set_title("whole locus (dashed: main view)", fontsize=7.5, color=_INK,
                           loc="left")
    handles, texts = ax.get_legend_handles_labels()
    legend = target.legend(handles, texts, loc="lower left", bbox_to_anchor=(0.01, 0.005),
                           ncols=4, fontsize=6.5, framealpha=0.92, facecolor="white",
                           edgecolor=_GRID, columnspacing=1.2, handletextpad=0.5)
    legend.set_zorder(10)
    note = _far_text(view)
    if note:
        target.text(0.725, 0.43, note, fontsize=6.5, color=_INK, va="top", ha="left",
                    linespacing=1.35)
    target.text(0.995, 0.995, "linear model: check on the real machine", ha="right", va="top",
                fontsize=6.5, color=_AXIS)
    return LocusAxes(main=ax, overview=overview, view=view)


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
    target = out.resolve()
    folder = target.parent
    if not folder.is_dir():
        raise InputError(f"cannot write {out}: the folder {folder} does not exist")

    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    fig = Figure(figsize=(10.0, 6.2), dpi=120, facecolor="white")
    FigureCanvasAgg(fig)
    draw_locus(fig, trace, region=region, operating_gain=operating_gain, title=title)
    from synth.outputs.files import atomic_file

    with atomic_file(target) as tmp:
        fig.savefig(tmp, format=suffix[1:], facecolor="white")
    return out
