"""Overlay of the unit-step responses of several design runs (``synth compare --plot``).

Each curve is the verifier's own unit-step response of one design
(:func:`synth.verify.simulation.simulate_step`): the reference-to-output
closed loop in unity negative feedback, formed without cancelling anything,
with the plant's EXACT dead time where the document carries it (its
delay-free part and ``dead_time``).  All curves share one time span, so the
runs can be read against each other; this module only draws.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from synth.errors import InputError
from synth.outputs.document import DesignDocument, read_design

__all__ = ["StepCurve", "overlay_curves", "plot_step_overlay"]

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
        False when the closed loop has a pole with non-negative real part (or
        the compensator is improper); then ``y`` is empty and the curve is
        listed but not drawn.
    t, y : ndarray
    exact_delay : bool
        The dead time (if any) was simulated exactly.
    """

    run: int
    run_name: str
    rank: int
    structure: str
    stable: bool
    t: np.ndarray
    y: np.ndarray
    exact_delay: bool = True


def _horizon(designs, poles) -> float:
    """A common time span: 1.5 x the longest reported settling time, else from the poles."""
    ts = [d.metric("settling_time") for d in designs]
    ts = [float(x) for x in ts if isinstance(x, (int, float)) and math.isfinite(x) and x > 0]
    if ts:
        return 1.5 * max(ts)
    decay = [float(np.min(-p.real)) for p in poles if p.size and np.all(p.real < 0)]
    return 8.0 / min(decay) if decay else 10.0


def overlay_curves(runs: list[tuple[str, object]], top: int = 3) -> list[StepCurve]:
    """Step responses of the ``top`` best-ranked designs of each run.

    Parameters
    ----------
    runs : list of (str, dict or DesignDocument)
        ``(name, synth.design/1 document)`` pairs.
    top : int
        How many designs per run (by rank).

    Returns
    -------
    list of StepCurve
        An unstable loop's curve is empty (listed, not drawn).
    """
    from synth.verify.loop import loop_polynomials
    from synth.verify.simulation import simulate_step

    if top < 1:
        raise InputError("top must be at least 1")
    picked = []
    for r, (name, doc) in enumerate(runs):
        document = doc if isinstance(doc, DesignDocument) else read_design(doc, str(name))
        plant = document.need_plant().plant()
        for d in document.designs[:top]:
            c = d.compensator
            _, _, char = loop_polynomials(plant, c.num, c.den)
            poles = np.roots(char) if char.size > 1 else np.zeros(0, complex)
            picked.append((r, str(name), d, plant, poles))
    if not picked:
        return []
    t_end = _horizon([p[2] for p in picked], [p[4] for p in picked])
    out = []
    for r, name, d, plant, poles in picked:
        c = d.compensator
        stable = bool(np.all(poles.real < 0)) and c.num.size <= c.den.size
        exact = True
        if stable:
            resp = simulate_step(plant, c.num, c.den, t_end=t_end)
            t, y, exact = resp.t, resp.y, resp.exact_delay
        else:
            t = y = np.zeros(0)
        out.append(StepCurve(run=r, run_name=name, rank=d.rank, structure=d.structure,
                             stable=stable, t=t, y=y, exact_delay=exact))
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
        title = "Unit-step response of each run's top designs"
        if any(not c.exact_delay for c in curves):
            title += " (some dead times in Pade form: too short to resolve)"
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
