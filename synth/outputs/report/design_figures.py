"""Curves and drawings for one design of a report.

The numbers and curves come from the verifier (:func:`synth.verify.curves.curves`,
handed to the report in its input); :func:`figure_data` only frames them for
a page (the part of the step response worth looking at, the frequency window
around the marked frequencies) and says how they were computed.  The
``draw_*`` functions draw into a matplotlib ``Figure`` or ``SubFigure`` (the
root locus is drawn by :mod:`synth.outputs.report.locus_plot`) so the same
drawing serves the HTML page (SVG) and the PDF (a region of a page).

matplotlib is imported inside the functions only (see ``docs/internal-api.md``).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from synth.verify.frequency import LoopFrequency

__all__ = [
    "PALETTE",
    "FigureData",
    "bode_curves",
    "bode_window",
    "figure_data",
    "margin_frequency",
    "draw_step",
    "draw_bode",
    "draw_sensitivity",
    "draw_model_steps",
]

#: The report's own colours (name -> hex).
PALETTE = {
    "ink": "#22303c",
    "muted": "#6b7885",
    "grid": "#dde3e8",
    "response": "#1b6f8a",
    "effort": "#9a5b22",
    "limit": "#b5485d",
    "band": "#f2d98c",
    "operating": "#2b9a5a",
    "phase": "#5a4e9c",
}

@dataclass(frozen=True)
class FigureData:
    """Everything plotted for one design, framed for the page.

    Attributes
    ----------
    t, y : ndarray
        Time (s) and unit-step output.
    u : ndarray or None
        Compensator output; ``None`` when the compensator is improper (an
        ideal derivative makes the effort to a step an impulse).
    final_value : float or None
        Closed-loop static gain ``T(0)`` (``None`` when the loop is unstable).
    stable : bool
        Every closed-loop pole (engine form) in the open left half-plane.
    w : ndarray
        Frequencies (rad/s).
    loop : ndarray, complex
        ``L(jw)`` with the exact dead time.
    facts : LoopFrequency
        Crossovers, margins, bandwidth and sensitivity peak (the verifier's).
    notes : tuple of str
        How the curves were computed where it matters (dead time, improper
        compensator, unstable loop, a cropped time axis).
    """

    t: np.ndarray
    y: np.ndarray
    u: np.ndarray | None
    final_value: float | None
    stable: bool
    w: np.ndarray
    loop: np.ndarray
    facts: LoopFrequency
    notes: tuple[str, ...]


def _view(t, y, u, design, settling_limit, notes: list[str]):
    """Crop the simulated response to the part worth looking at (:func:`framing.time_window`)."""
    from synth.outputs.report.framing import time_window

    if t.size < 3:
        return t, y, u
    t_view = time_window(design.metric("settling_time"), design.metric("rise_time"),
                         settling_limit, float(t[-1]))
    if t_view is None or t_view >= t[-1]:
        return t, y, u
    keep = int(np.searchsorted(t, t_view)) + 1
    notes.append(f"the time axis shows the first {t[keep - 1]:.3g} s of a simulation to "
                 f"{t[-1]:.3g} s (a slow closed-loop pole sets its length)")
    return t[:keep], y[:keep], (None if u is None else u[:keep])


def bode_window(curves, design, problem) -> tuple[float, float]:
    """The frequency range of a design's Bode and sensitivity plots.

    It follows the crossovers (gain and phase), the sensitivity peak, the
    closed-loop bandwidth and the resonances of the loop's rational part
    (lightly damped poles and zeros of the plant and the compensator):
    :func:`synth.outputs.report.framing.frequency_window` around them.

    Returns
    -------
    (lo, hi) : float
        rad/s, within the verifier's frequency grid.
    """
    from synth.outputs.report.framing import frequency_window, resonances

    f = curves.frequency
    plant = problem.plant
    comp = design.compensator
    marks = [f.crossover_frequency, f.bandwidth, f.peak_frequency, margin_frequency(f),
             *resonances(plant.rational_num, plant.rational_den, comp.num, comp.den)]
    return frequency_window(marks, f.w)


def margin_frequency(facts) -> float | None:
    """The phase crossover where the gain margin is read (``None`` without a gain margin).

    A dead time makes the phase cross -180 deg again and again; the margin is
    read at the crossover with the largest ``|L|`` below 1, the one drawn.
    """
    if facts.gain_margin_db is None or not facts.phase_crossovers:
        return None
    with np.errstate(divide="ignore"):
        mag = 20.0 * np.log10(np.abs(facts.loop))
    at = np.interp(np.log10(facts.phase_crossovers), np.log10(facts.w), mag)
    return float(facts.phase_crossovers[int(np.argmin(np.abs(at + facts.gain_margin_db)))])


def figure_data(curves, design, problem) -> FigureData:
    """Frame the verifier's curves of one design for the report.

    Parameters
    ----------
    curves : synth.verify.curves.LoopCurves
        The verifier's step and frequency responses of the design's loop.
    design : synth.outputs.document.DesignRecord
        The design (its settling and rise times frame the time axis).
    problem : synth.problem.requirements.Problem
        Its dead time and settling-time limit, for the notes and the frame.

    Returns
    -------
    FigureData
    """
    notes: list[str] = []
    step = curves.step
    if step is None:
        # an ideal derivative: the effort to a step is an impulse, no curve to draw
        t, y, u, final = np.array([0.0, 1.0]), np.full(2, np.nan), None, None
        notes.append("the compensator is improper (ideal derivative), so no time response "
                     "is drawn")
    else:
        t, y, u, final = step.t, step.y, step.u, step.final_value
        if problem.plant.dead_time:
            notes.append(f"time responses use the exact dead time of {problem.plant.dead_time:g} s"
                         if step.exact_delay else
                         "the dead time is too short to resolve in the time responses; they use "
                         "its Pade form")
    if not curves.stable:
        final = None
        notes.append("the closed loop is unstable: the response grows without bound")
    t, y, u = _view(t, y, u, design, problem.requirements.limit("settling_time"), notes)
    f = curves.frequency
    w, L = f.w, f.loop
    lo, hi = bode_window(curves, design, problem)
    keep = (w >= lo) & (w <= hi)
    if np.count_nonzero(keep) >= 2:
        w, L = w[keep], L[keep]
    return FigureData(t=t, y=y, u=u, final_value=final, stable=curves.stable, w=w, loop=L,
                      facts=f, notes=tuple(notes))


# ---------------------------------------------------------------------------
# drawing
# ---------------------------------------------------------------------------

def _style(ax) -> None:
    ax.grid(True, color=PALETTE["grid"], linewidth=0.6)
    ax.set_axisbelow(True)
    for side in ("top", "right"):
        ax.spines[side].set_visible(False)
    for side in ("left", "bottom"):
        ax.spines[side].set_color(PALETTE["muted"])
    ax.tick_params(colors=PALETTE["ink"], labelsize=8)
    ax.xaxis.label.set_color(PALETTE["ink"])
    ax.yaxis.label.set_color(PALETTE["ink"])


def _clip_limits(values: np.ndarray, pad: float = 0.08) -> tuple[float, float]:
    v = values[np.isfinite(values)]
    if v.size == 0:
        return -1.0, 1.0
    lo, hi = float(np.min(v)), float(np.max(v))
    if hi - lo < 1e-12:
        lo, hi = lo - 1.0, hi + 1.0
    span = hi - lo
    return lo - pad * span, hi + pad * span


def draw_step(target, curves: FigureData, requirements=None, title: str | None = None) -> None:
    """Unit-step output and control effort with the requirement bounds.

    Draws the overshoot ceiling, the settling band after the settling-time
    limit, and the effort limit, where the requirements set them.
    """
    gs = target.add_gridspec(2, 1, left=0.11, right=0.97, bottom=0.13, top=0.9, hspace=0.38,
                             height_ratios=[1.35, 1.0])
    ax, ax2 = gs.subplots(sharex=True)
    for a in (ax, ax2):
        _style(a)
    t, y = curves.t, curves.y
    fv = curves.final_value
    req = requirements
    os_limit = None if req is None else req.limit("overshoot_percent")
    if fv is not None and req is not None:
        if os_limit is not None:
            ceiling = fv * (1.0 + os_limit / 100.0)
            ax.axhline(ceiling, color=PALETTE["limit"], linestyle="--", linewidth=1.0,
                       label=f"overshoot limit {os_limit:g} %")
        ts = req.limit("settling_time")
        if ts is not None:
            band = abs(fv) * req.settling_band / 100.0
            ax.fill_between([ts, t[-1]], fv - band, fv + band, color=PALETTE["band"], alpha=0.6,
                            linewidth=0, label=f"{req.settling_band:g} % band after "
                            f"{ts:g} s")
            # edges too: a narrow band hides under the response otherwise
            for edge in (fv - band, fv + band):
                ax.plot([ts, t[-1]], [edge, edge], color=PALETTE["effort"], linewidth=0.7,
                        linestyle="-", alpha=0.8)
            ax.axvline(ts, color=PALETTE["limit"], linestyle=":", linewidth=1.0)
    ax.axhline(1.0, color=PALETTE["muted"], linewidth=0.7, linestyle="-")
    ax.plot(t, y, color=PALETTE["response"], linewidth=1.5, label="output y(t)")
    lo, hi = _clip_limits(y)
    if fv is not None:
        lo, hi = min(lo, 0.0), max(hi, fv * 1.05)
        if os_limit is not None:
            hi = max(hi, fv * (1.0 + os_limit / 100.0) * 1.05)
    ax.set_ylim(lo, hi)
    ax.set_ylabel("output", fontsize=8.5)
    ax.legend(fontsize=7, loc="lower right", framealpha=0.9)
    if title:
        ax.set_title(title, fontsize=9.5, color=PALETTE["ink"], loc="left")
    if curves.u is not None:
        ax2.plot(t, curves.u, color=PALETTE["effort"], linewidth=1.4, label="effort u(t)")
        ulo, uhi = _clip_limits(curves.u)
        lim = None if req is None else req.limit("peak_control_effort")
        if lim is not None:
            ax2.axhline(lim, color=PALETTE["limit"], linestyle="--", linewidth=1.0,
                        label=f"effort limit ±{lim:g}")
            ax2.axhline(-lim, color=PALETTE["limit"], linestyle="--", linewidth=1.0)
            ulo, uhi = min(ulo, -1.1 * lim if ulo < 0 else ulo), max(uhi, 1.1 * lim)
        ax2.set_ylim(ulo, uhi)
        ax2.legend(fontsize=7, loc="upper right", framealpha=0.9)
    else:
        ax2.text(0.5, 0.5, "no effort curve: the effort to a step is an impulse",
                 transform=ax2.transAxes, ha="center", va="center", fontsize=8,
                 color=PALETTE["muted"])
    ax2.set_ylabel("effort", fontsize=8.5)
    ax2.set_xlabel("time (s)", fontsize=8.5)
    ax2.set_xlim(t[0], t[-1])


def bode_curves(w, loop, facts) -> tuple[np.ndarray, np.ndarray]:
    """Magnitude (dB) and unwrapped phase (deg) of ``L(jw)``, the phase placed near -180 deg.

    The phase is shifted by whole turns so that at the gain crossover it reads
    ``-180 + phase margin``, where the margin is read.

    Parameters
    ----------
    w : ndarray
    loop : ndarray of complex
    facts : synth.verify.frequency.LoopFrequency
        Its crossover frequency and phase margin.
    """
    with np.errstate(divide="ignore"):
        mag = 20.0 * np.log10(np.abs(loop))
    phase = np.degrees(np.unwrap(np.angle(loop)))
    shift = 0.0
    if facts.crossover_frequency is not None:
        pc = float(np.interp(math.log10(facts.crossover_frequency), np.log10(w), phase))
        shift = 360.0 * round((-180.0 + (facts.phase_margin_deg or 0.0) - pc) / 360.0)
    return mag, phase + shift


def draw_bode(target, curves: FigureData, title: str | None = None) -> None:
    """Loop magnitude (dB) and phase (deg) with the gain and phase margins marked."""
    gs = target.add_gridspec(2, 1, left=0.11, right=0.97, bottom=0.13, top=0.9, hspace=0.32)
    axm, axp = gs.subplots(sharex=True)
    for a in (axm, axp):
        _style(a)
    w, L = curves.w, curves.loop
    f = curves.facts
    mag, phase = bode_curves(w, L, f)
    axm.semilogx(w, mag, color=PALETTE["response"], linewidth=1.5, label="|L(jw)|")
    axm.axhline(0.0, color=PALETTE["muted"], linewidth=0.8)
    axp.semilogx(w, phase, color=PALETTE["phase"], linewidth=1.5, label="arg L(jw)")
    axp.axhline(-180.0, color=PALETTE["muted"], linewidth=0.8)
    pm_label = gm_label = None
    if f.crossover_frequency is not None and f.phase_margin_deg is not None:
        wc, pm = f.crossover_frequency, f.phase_margin_deg
        axm.axvline(wc, color=PALETTE["operating"], linestyle=":", linewidth=1.0)
        axp.axvline(wc, color=PALETTE["operating"], linestyle=":", linewidth=1.0)
        axp.plot([wc, wc], [-180.0, -180.0 + pm], color=PALETTE["operating"], linewidth=2.6,
                 solid_capstyle="butt")
        pm_label = f"phase margin {pm:.3g}° at {wc:.3g} rad/s"
        axp.annotate(pm_label, (wc, -180.0 + pm / 2), xytext=(6, 0), textcoords="offset points",
                     fontsize=7.5, color=PALETTE["ink"], va="center")
    wp = margin_frequency(f)
    if wp is not None:
        gm = f.gain_margin_db
        axm.axvline(wp, color=PALETTE["limit"], linestyle=":", linewidth=1.0)
        axm.plot([wp, wp], [-gm, 0.0], color=PALETTE["limit"], linewidth=2.6,
                 solid_capstyle="butt")
        gm_label = f"gain margin {gm:.3g} dB at {wp:.3g} rad/s"
        axm.annotate(gm_label, (wp, -gm / 2), xytext=(6, 0), textcoords="offset points",
                     fontsize=7.5, color=PALETTE["ink"], va="center")
    elif f.gain_margin_db is None:
        axm.text(0.99, 0.95, "no phase crossover: unbounded gain margin", ha="right", va="top",
                 transform=axm.transAxes, fontsize=7.5, color=PALETTE["muted"])
    lo, hi = _clip_limits(mag)
    axm.set_ylim(max(lo, -120.0), min(hi, 120.0))
    plo, phi_ = _clip_limits(phase)
    axp.set_ylim(max(plo, -720.0), min(phi_, 360.0))
    axm.set_ylabel("magnitude (dB)", fontsize=8.5)
    axp.set_ylabel("phase (deg)", fontsize=8.5)
    axp.set_xlabel("frequency (rad/s)", fontsize=8.5)
    axm.set_xlim(w[0], w[-1])
    if title:
        axm.set_title(title, fontsize=9.5, color=PALETTE["ink"], loc="left")


def draw_sensitivity(target, curves: FigureData, requirements=None,
                     title: str | None = None) -> None:
    """Sensitivity magnitude ``|1/(1+L(jw))|`` with its peak and the limit."""
    ax = target.add_gridspec(1, 1, left=0.11, right=0.97, bottom=0.19, top=0.88).subplots()
    _style(ax)
    with np.errstate(divide="ignore", invalid="ignore"):
        s = np.abs(1.0 / (1.0 + curves.loop))
        sdb = 20.0 * np.log10(s)
    ax.semilogx(curves.w, sdb, color=PALETTE["response"], linewidth=1.5, label="|S(jw)|")
    ax.axhline(0.0, color=PALETTE["muted"], linewidth=0.8)
    f = curves.facts
    pk_db = 20.0 * math.log10(f.peak_sensitivity) if f.peak_sensitivity > 0 else 0.0
    ax.plot([f.peak_frequency], [pk_db], "v", color=PALETTE["operating"], markersize=7,
            label=f"peak {f.peak_sensitivity:.3g} ({pk_db:.3g} dB) at {f.peak_frequency:.3g} rad/s")
    lim = None if requirements is None else requirements.limit("peak_sensitivity")
    if lim is not None:
        ax.axhline(20.0 * math.log10(lim), color=PALETTE["limit"], linestyle="--", linewidth=1.0,
                   label=f"limit {lim:g} ({20 * math.log10(lim):.3g} dB)")
    lo, hi = _clip_limits(sdb)
    ax.set_ylim(max(lo, -80.0), min(max(hi, pk_db + 3.0), 60.0))
    ax.set_xlim(curves.w[0], curves.w[-1])
    ax.set_xlabel("frequency (rad/s)", fontsize=8.5)
    ax.set_ylabel("sensitivity (dB)", fontsize=8.5)
    ax.legend(fontsize=7, loc="lower right", framealpha=0.9)
    if title:
        ax.set_title(title, fontsize=9.5, color=PALETTE["ink"], loc="left")


#: Metrics of the reference step whose worst case the model overlay marks.
_STEP_METRICS = ("overshoot_percent", "settling_time", "rise_time", "peak_control_effort")


def draw_model_steps(target, models, requirements=None, title: str | None = None) -> None:
    """Step responses of one design around every plant model drawn, the worst case marked.

    Parameters
    ----------
    target : matplotlib Figure or SubFigure
    models : sequence of synth.verify.curves.ModelCurves
        The verifier's curves per model (nominal first).
    requirements : synth.problem.requirements.Requirements, optional
        The overshoot and effort limits are drawn where set.
    title : str, optional
    """
    from synth.problem.catalogue import METRICS

    gs = target.add_gridspec(2, 1, left=0.11, right=0.97, bottom=0.13, top=0.9, hspace=0.38,
                             height_ratios=[1.35, 1.0])
    ax, ax2 = gs.subplots(sharex=True)
    for a in (ax, ax2):
        _style(a)
    t_max = 0.0
    marked = 0
    for m in models:
        step = m.curves.step
        if step is None:
            continue
        worst = [k for k in m.worst_for if k in _STEP_METRICS]
        style = "-"
        if worst:
            # each worst-case model its own dash pattern, so two of them stay apart
            color, width, z = PALETTE["limit"], 1.8, 3
            style = ("-", "--", "-.", ":")[marked % 4]
            label = (f"worst case ({', '.join(METRICS[k].label for k in worst)}): {m.name}")
            marked += 1
        elif m.name == "nominal":
            color, width, z = PALETTE["response"], 1.5, 2
            label = "nominal"
        else:
            color, width, z = PALETTE["muted"], 0.9, 1
            label = m.name
        ax.plot(step.t, step.y, color=color, linewidth=width, zorder=z, label=label,
                linestyle=style)
        ax2.plot(step.t, step.u, color=color, linewidth=width * 0.8, zorder=z,
                 linestyle=style)
        t_max = max(t_max, float(step.t[-1]))
    ax.axhline(1.0, color=PALETTE["muted"], linewidth=0.7)
    os_limit = None if requirements is None else requirements.limit("overshoot_percent")
    if os_limit is not None:
        ax.axhline(1.0 + os_limit / 100.0, color=PALETTE["limit"], linestyle="--",
                   linewidth=1.0, label=f"overshoot limit {os_limit:g} %")
    ts = None if requirements is None else requirements.limit("settling_time")
    if ts is not None:
        ax.axvline(ts, color=PALETTE["limit"], linestyle=":", linewidth=1.0,
                   label=f"settling-time limit {ts:g} s")
    lim = None if requirements is None else requirements.limit("peak_control_effort")
    if lim is not None:
        ax2.axhline(lim, color=PALETTE["limit"], linestyle="--", linewidth=1.0)
        ax2.axhline(-lim, color=PALETTE["limit"], linestyle="--", linewidth=1.0)
    ax.set_ylabel("output", fontsize=8.5)
    ax2.set_ylabel("effort", fontsize=8.5)
    ax2.set_xlabel("time (s)", fontsize=8.5)
    if t_max > 0:
        view = 1.5 * ts if ts is not None and 1.5 * ts < t_max else t_max
        ax2.set_xlim(0.0, view)
    ax.legend(fontsize=6, loc="lower right", framealpha=0.9, ncol=2)
    if title:
        ax.set_title(title + ("" if marked else " (the nominal plant is the worst case)"),
                     fontsize=9.5, color=PALETTE["ink"], loc="left")
