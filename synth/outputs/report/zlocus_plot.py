"""Picture of a root locus in the z-plane (``synth trace --plot`` with ``[sampling]``).

The unit circle bounds the stable closed-loop poles; the requirement region
is drawn as it maps by ``z = exp(s T)`` (the decay circle and the damping
spiral).  Poles are x and zeros o (the trade's convention); the palette and
the other marks are those of :mod:`synth.outputs.report.locus_plot`.

The picture describes the linear model sampled; a real machine also
saturates, lags and drifts.
"""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np

from synth.errors import InputError
from synth.outputs.report.locus_plot import (
    _AXIS,
    _BRANCHES,
    _CROSSING,
    _GRID,
    _INK,
    _OPERATING,
    _PAPER,
    _REGION_EDGE,
    _REGION_FILL,
    _UNSTABLE_FILL,
    _fmt,
)

__all__ = ["plot_zlocus"]


def plot_zlocus(locus, path, operating_gain: float | None = None,
                title: str | None = None) -> Path:
    """Draw a :class:`synth.locus.zplane.ZLocus` into a PNG or SVG file.

    Parameters
    ----------
    locus : synth.locus.zplane.ZLocus
    path : str or Path
        ``.png`` or ``.svg``.
    operating_gain : float, optional
        Mark the closed-loop poles at this gain.
    title : str, optional

    Returns
    -------
    Path
        The file written (whole or not at all).
    """
    out = Path(path)
    suffix = out.suffix.lower()
    if suffix not in (".png", ".svg"):
        raise InputError(f"the picture must be a .png or .svg file, not {out.name!r}")
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    fig = Figure(figsize=(7.2, 7.8), dpi=120, facecolor="white")
    FigureCanvasAgg(fig)
    ax = fig.add_subplot(1, 1, 1)
    ax.set_facecolor(_UNSTABLE_FILL)
    ax.grid(True, color=_GRID, linewidth=0.7, zorder=0)
    ax.set_axisbelow(True)
    for side in ("top", "right"):
        ax.spines[side].set_visible(False)
    th = np.linspace(0.0, 2 * math.pi, 721)
    ax.fill(np.cos(th), np.sin(th), color=_PAPER, zorder=0.5, linewidth=0)
    ax.plot(np.cos(th), np.sin(th), color=_INK, linewidth=1.2, zorder=1,
            label="unit circle (stability boundary)")
    region = locus.region
    if not region.is_stability_only:
        edge = region.outline()
        ax.fill(edge.real, edge.imag, color=_REGION_FILL, alpha=0.85, zorder=0.6, linewidth=0,
                label="required region, mapped by z = exp(s T)")
        ax.plot(np.append(edge.real, edge.real[0]), np.append(edge.imag, edge.imag[0]),
                color=_REGION_EDGE, linewidth=1.0, zorder=0.7)
    ax.axhline(0.0, color=_AXIS, linewidth=0.8, zorder=1)
    ax.axvline(0.0, color=_AXIS, linewidth=0.8, zorder=1)
    roots = locus.roots
    for j in range(roots.shape[1]):
        b = roots[:, j]
        ok = np.isfinite(b) & (np.abs(b) < 4.0)
        ax.plot(b.real[ok], b.imag[ok], color=_BRANCHES[j % len(_BRANCHES)], linewidth=1.8,
                zorder=4, solid_capstyle="round",
                label=f"branches ({'K < 0' if locus.negative else 'K > 0'})" if j == 0
                else "_nolegend_")
    ax.plot(locus.poles.real, locus.poles.imag, linestyle="none", marker="x", markersize=10,
            markeredgewidth=2.2, color=_INK, zorder=6, label="open-loop poles")
    if locus.zeros.size:
        zz = locus.zeros[np.abs(locus.zeros) < 4.0]
        ax.plot(zz.real, zz.imag, linestyle="none", marker="o", markersize=9,
                markerfacecolor="none", markeredgewidth=2.0, color=_INK, zorder=6,
                label="open-loop zeros")
    box = {"boxstyle": "round,pad=0.25", "facecolor": "white", "edgecolor": "none", "alpha": 0.85}
    for w, k in locus.crossings:
        z = np.exp(1j * w * locus.period)
        ax.plot([z.real, z.real], [z.imag, -z.imag], linestyle="none", marker="D", markersize=7,
                color=_CROSSING, zorder=7)
        ax.annotate(f"K = {_fmt(k)}\nw = {_fmt(w)}", (z.real, abs(z.imag)), xytext=(10, 10),
                    textcoords="offset points", fontsize=8.5, color=_CROSSING, zorder=8,
                    bbox=box)
    if locus.crossings:
        ax.plot([], [], linestyle="none", marker="D", color=_CROSSING,
                label="unit-circle crossings")
    if operating_gain is not None:
        if not np.isfinite(float(operating_gain)):
            raise InputError(f"the operating gain must be a finite number, not {operating_gain}")
        op = locus.roots_at(float(operating_gain))
        op = op[np.isfinite(op)]
        ax.plot(op.real, op.imag, linestyle="none", marker="p", markersize=10,
                markerfacecolor=_OPERATING, markeredgecolor=_INK, markeredgewidth=0.8, zorder=9,
                label=f"closed-loop poles at K = {_fmt(operating_gain)}")
    ax.set_xlim(-1.35, 1.35)
    ax.set_ylim(-1.35, 1.35)
    ax.set_aspect("equal", adjustable="box")
    ax.set_xlabel("real part of z")
    ax.set_ylabel("imaginary part of z")
    sign = "K < 0" if locus.negative else "K > 0"
    ax.set_title(title or f"root locus in z (T = {_fmt(locus.period)} s), {sign}", fontsize=11,
                 color=_INK, loc="left")
    legend = ax.legend(loc="upper center", bbox_to_anchor=(0.5, -0.1), ncol=2, fontsize=7.5,
                       framealpha=0.92, facecolor="white", edgecolor=_GRID)
    legend.set_zorder(10)
    fig.text(0.99, 0.01, "linear model, sampled: check on the real machine", ha="right",
             va="bottom", fontsize=7, color=_AXIS)
    fig.tight_layout(rect=(0.0, 0.13, 1.0, 0.97))  # room below for the legend
    target = out.resolve()
    if not target.parent.is_dir():
        raise InputError(f"cannot write {out}: the folder {target.parent} does not exist")
    from synth.outputs.files import atomic_file

    with atomic_file(target) as tmp:
        fig.savefig(tmp, format=suffix[1:], facecolor="white")
    return out
