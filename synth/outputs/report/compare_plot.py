"""Overlay of the unit-step responses of several design runs (``synth compare --plot``).

Each curve is the reference-to-output closed loop of one design, built from
the polynomials in the design JSON without cancelling anything:

    T(s) = Nc Ng / (Dc Dg + Nc Ng)

(contract loop convention: unity negative feedback). For a plant with dead
time the JSON plant is the engine's Pade form, so the overlay shows the
Pade-form response (the design verdicts themselves use the exact delay).
Responses come from :func:`scipy.signal.step` on a time grid shared by all
curves, so the runs can be read against each other.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np

from synth.errors import InputError

__all__ = ["StepCurve", "closed_loop", "overlay_curves", "plot_step_overlay", "step_response"]

# own palette: one colour per run, one line style per rank within a run
_RUN_COLOURS = ("#0e7c86", "#c4463a", "#5d7f1f", "#7d4c9e", "#d08a12", "#33506e",
                "#a3476f", "#4a8f6a")
_RANK_STYLES = ("-", "--", ":", "-.")
_INK = "#1f2a33"
_MUTED = "#7a8792"
_GRID = "#e3e8ec"


@dataclass(frozen=True)
class StepCurve:
    """One design's unit-step response, ready to draw.

    Attributes
    ----------
    run : int
        Index of the run.
    run_name : str
    rank : int
    structure : str
    stable : bool
        False when the closed loop has a pole with non-negative real part;
        then ``y`` is empty and the curve is listed but not drawn.
    t, y : ndarray
    """

    run: int
    run_name: str
    rank: int
    structure: str
    stable: bool
    t: np.ndarray
    y: np.ndarray


def _poly(value: Any, source: str, key: str) -> np.ndarray:
    try:
        p = np.trim_zeros(np.asarray(value, dtype=float).ravel(), "f")
    except (TypeError, ValueError):
        raise InputError("must be a list of numbers", source=source, key=key) from None
    if p.size == 0 or not np.all(np.isfinite(p)):
        raise InputError("must be a non-empty list of finite numbers", source=source, key=key)
    return p


def closed_loop(plant_num, plant_den, comp_num, comp_den) -> tuple[np.ndarray, np.ndarray]:
    """Reference-to-output closed loop T = Nc Ng / (Dc Dg + Nc Ng), unreduced.

    Parameters
    ----------
    plant_num, plant_den, comp_num, comp_den : array_like
        Coefficients in descending powers of s.

    Returns
    -------
    num, den : ndarray
        No common factor is cancelled, so a hidden unstable mode stays in ``den``.
    """
    ng, dg = np.asarray(plant_num, float), np.asarray(plant_den, float)
    nc, dc = np.asarray(comp_num, float), np.asarray(comp_den, float)
    num = np.polymul(nc, ng)
    den = np.polyadd(np.polymul(dc, dg), num)
    return num, den


def step_response(num, den, t) -> np.ndarray:
    """Unit-step response of num/den on the grid ``t`` (scipy.signal.step)."""
    from scipy import signal

    num = np.trim_zeros(np.asarray(num, float), "f")
    den = np.trim_zeros(np.asarray(den, float), "f")
    _, y = signal.step((num, den), T=np.asarray(t, float))
    return np.asarray(y, float)


def _horizon(designs: list[dict], dens: list[np.ndarray]) -> float:
    """A common time span: 1.5 x the longest reported settling time, else from the poles."""
    ts = [d.get("metrics", {}).get("settling_time") for d in designs]
    ts = [float(x) for x in ts if isinstance(x, (int, float)) and math.isfinite(x) and x > 0]
    if ts:
        return 1.5 * max(ts)
    decay = []
    for den in dens:
        r = np.roots(den)
        if r.size and np.all(r.real < 0):
            decay.append(float(np.min(-r.real)))
    return 8.0 / min(decay) if decay else 10.0


def overlay_curves(runs: list[tuple[str, dict]], top: int = 3,
                   n_points: int = 1500) -> list[StepCurve]:
    """Step responses of the ``top`` best-ranked designs of each run.

    Parameters
    ----------
    runs : list of (str, dict)
        ``(name, synth.design/1 document)`` pairs.
    top : int
        How many designs per run (by rank).
    n_points : int
        Points on the shared time grid.

    Returns
    -------
    list of StepCurve
    """
    if top < 1:
        raise InputError("top must be at least 1")
    picked = []
    for r, (name, doc) in enumerate(runs):
        plant = doc.get("plant") if isinstance(doc, dict) else None
        if not isinstance(plant, dict):
            raise InputError("needs a 'plant' object", source=str(name), key="plant")
        ng = _poly(plant.get("numerator"), str(name), "plant.numerator")
        dg = _poly(plant.get("denominator"), str(name), "plant.denominator")
        designs = sorted((d for d in doc.get("designs", []) if isinstance(d, dict)),
                         key=lambda d: d.get("rank", 0))[:top]
        for d in designs:
            comp = d.get("compensator") or {}
            key = f"designs[rank {d.get('rank')}].compensator"
            nc = _poly(comp.get("numerator"), str(name), key + ".numerator")
            dc = _poly(comp.get("denominator"), str(name), key + ".denominator")
            num, den = closed_loop(ng, dg, nc, dc)
            picked.append((r, str(name), d, num, den))
    if not picked:
        return []
    t_end = _horizon([p[2] for p in picked], [p[4] for p in picked])
    t = np.linspace(0.0, t_end, n_points)
    out = []
    for r, name, d, num, den in picked:
        roots = np.roots(den)
        stable = bool(np.all(roots.real < 0))
        y = step_response(num, den, t) if stable else np.zeros(0)
        out.append(StepCurve(run=r, run_name=name, rank=int(d.get("rank", 0)),
                             structure=str(d.get("structure", "?")), stable=stable,
                             t=t if stable else np.zeros(0), y=y))
    return out


def plot_step_overlay(runs: list[tuple[str, dict]], path: str | Path, top: int = 3) -> Path:
    """Draw the unit-step responses of each run's top designs in one picture.

    Parameters
    ----------
    runs : list of (str, dict)
        ``(name, synth.design/1 document)`` pairs, as given to
        :func:`synth.compare.compare_runs`.
    path : str or Path
        Output file; ``.png`` or ``.svg`` chooses the format.
    top : int
        Designs per run, by rank. Colour tells the run, line style the rank.

    Returns
    -------
    Path
        The file written.
    """
    path = Path(path)
    suffix = path.suffix.lower()
    if suffix not in (".png", ".svg"):
        raise InputError("the picture must end in .png or .svg", source=str(path))
    if path.parent and not path.parent.is_dir():
        raise InputError("the folder does not exist", source=str(path))
    curves = overlay_curves(runs, top=top)

    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    fig, ax = plt.subplots(figsize=(8.0, 4.6), dpi=120)
    try:
        ax.axhline(1.0, color=_MUTED, linewidth=0.9, linestyle=(0, (1, 2)), zorder=1)
        hidden = []
        for c in curves:
            colour = _RUN_COLOURS[c.run % len(_RUN_COLOURS)]
            style = _RANK_STYLES[(c.rank - 1) % len(_RANK_STYLES)]
            label = f"{Path(c.run_name).name}: #{c.rank} {c.structure}"
            if not c.stable:
                hidden.append(label)
                continue
            ax.plot(c.t, c.y, color=colour, linestyle=style,
                    linewidth=2.0 if c.rank == 1 else 1.3, label=label, zorder=3)
        delayed = any(isinstance(doc.get("plant"), dict) and doc["plant"].get("dead_time")
                      for _, doc in runs)
        title = "Unit-step response of each run's top designs"
        if delayed:
            title += " (dead time in Pade form)"
        ax.set_title(title, color=_INK, fontsize=10, loc="left")
        ax.set_xlabel("time [s]", color=_INK, fontsize=9)
        ax.set_ylabel("output / reference step", color=_INK, fontsize=9)
        ax.grid(True, color=_GRID, linewidth=0.7)
        for side in ("top", "right"):
            ax.spines[side].set_visible(False)
        for side in ("left", "bottom"):
            ax.spines[side].set_color(_MUTED)
        ax.tick_params(colors=_INK, labelsize=8)
        if curves and len(curves) > len(hidden):
            ax.legend(fontsize=7.5, frameon=False, loc="best")
        if hidden:
            ax.text(0.01, 0.01, "unstable, not drawn: " + "; ".join(hidden),
                    transform=ax.transAxes, fontsize=7, color=_RUN_COLOURS[1], va="bottom")
        if not curves:
            ax.text(0.5, 0.5, "no designs to draw", transform=ax.transAxes, ha="center",
                    color=_MUTED)
        fig.tight_layout()
        from synth.outputs.files import atomic_file

        with atomic_file(path) as tmp:  # whole or not at all
            fig.savefig(tmp, format=suffix[1:])
    finally:
        plt.close(fig)
    return path
