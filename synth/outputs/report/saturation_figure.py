"""The report's picture of a design with a limited actuator: linear and saturated side by side.

Left, the linear loop's answer to a unit reference step (what small steps
look like: the actuator never reaches a limit); right, the reference step of
the actuator table's size through the limits and the anti-windup, and the
load step.  Outputs are shown per unit of their step (so the two columns
share the output axis and the overshoot limit); the actuator is shown in its
own units (the operating point plus the deviation) with its range, so the
reader sees where it saturates.  The curves are the verifier's
(:attr:`synth.verify.curves.LoopCurves.saturated`); this module only frames
and draws them.  matplotlib is imported by the caller's figure only.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

__all__ = ["SaturationData", "draw_saturation", "saturation_data"]


@dataclass(frozen=True)
class SaturationData:
    """What the saturation figure draws.

    Attributes
    ----------
    t_lin, y_lin, u_lin : ndarray
        Linear unit-step response: output, actuator deviation per unit step.
    t_sat, y_sat, u_sat : ndarray
        Saturated reference step: output per unit step, actuator output in
        its own units (operating point plus deviation).
    t_load, y_load : ndarray
        Saturated load step: output per unit of load.
    limits : (float, float) or None
        The actuator's range in its own units.
    operating_point, reference_step, load_step : float
    final_value : float or None
        Output at rest after the saturated reference step, per unit step.
    """

    t_lin: np.ndarray
    y_lin: np.ndarray
    u_lin: np.ndarray | None
    t_sat: np.ndarray
    y_sat: np.ndarray
    u_sat: np.ndarray
    t_load: np.ndarray
    y_load: np.ndarray
    limits: tuple[float, float] | None
    operating_point: float
    reference_step: float
    load_step: float
    final_value: float | None


def _window(t: np.ndarray, span: float) -> int:
    """Samples up to ``span`` seconds (at least two)."""
    return max(2, int(np.searchsorted(t, span)) + 1)


def saturation_data(curves, problem) -> SaturationData | None:
    """Frame the verifier's saturated curves for the page (``None`` when there are none).

    Both columns show the same time span: the longer of twice the saturated
    settling time and the linear step's span (at most the simulations).
    """
    sat = curves.saturated
    act = problem.actuator
    if sat is None or act is None:
        return None
    ref, load = sat.reference, sat.load
    step = curves.step
    if step is not None:
        t_lin, y_lin, u_lin = step.t, step.y, step.u
    else:
        t_lin, y_lin, u_lin = ref.t[:2], np.full(2, np.nan), None
    # the span worth looking at: until the saturated output stays within 2 % of rest
    span = float(ref.t[-1])
    if ref.final_value is not None and np.all(np.isfinite(ref.y)):
        band = 0.02 * max(abs(ref.final_value), 1e-300)
        out = np.flatnonzero(np.abs(ref.y - ref.final_value) > band)
        if out.size and out[-1] + 1 < ref.t.size:
            span = min(span, 2.0 * float(ref.t[out[-1] + 1]))
    span = max(span, float(ref.t[min(ref.t.size - 1, 10)]))
    i_lin, i_ref, i_load = _window(t_lin, span), _window(ref.t, span), _window(load.t, span)
    return SaturationData(
        t_lin=t_lin[:i_lin], y_lin=y_lin[:i_lin],
        u_lin=None if u_lin is None else u_lin[:i_lin],
        t_sat=ref.t[:i_ref], y_sat=ref.y[:i_ref],
        u_sat=act.operating_point + ref.u[:i_ref] * ref.step,
        t_load=load.t[:i_load], y_load=load.y[:i_load], limits=act.limits,
        operating_point=act.operating_point, reference_step=act.reference_step,
        load_step=act.load_step, final_value=ref.final_value)


def draw_saturation(target, data: SaturationData, requirements=None) -> None:
    """Two columns: linear unit step | saturated reference and load steps, actuator below."""
    from synth.outputs.report.design_figures import PALETTE, _clip_limits, _style

    gs = target.add_gridspec(2, 2, left=0.09, right=0.98, bottom=0.13, top=0.88, hspace=0.38,
                             wspace=0.22, height_ratios=[1.3, 1.0])
    axes = gs.subplots(sharex="col")
    for a in axes.ravel():
        _style(a)
    (ay_l, ay_s), (au_l, au_s) = axes
    os_limit = None if requirements is None else requirements.limit("overshoot_percent")
    ys = [data.y_lin, data.y_sat, data.y_load]
    lo, hi = _clip_limits(np.concatenate([v[np.isfinite(v)] for v in ys] + [np.zeros(1)]))
    for ax, t, y, title in ((ay_l, data.t_lin, data.y_lin, "small steps (linear)"),
                            (ay_s, data.t_sat, data.y_sat,
                             f"reference step {data.reference_step:.4g} through the limits")):
        ax.axhline(1.0, color=PALETTE["muted"], linewidth=0.7)
        if os_limit is not None:
            ax.axhline(1.0 + os_limit / 100.0, color=PALETTE["limit"], linestyle="--",
                       linewidth=1.0, label=f"overshoot limit {os_limit:g} %")
        ax.plot(t, y, color=PALETTE["response"], linewidth=1.5, label="output per unit step")
        ax.set_title(title, fontsize=9, color=PALETTE["ink"], loc="left")
        ax.set_ylim(lo, max(hi, 1.0 + (os_limit or 0.0) / 100.0 * 1.1))
    ay_s.plot(data.t_load, data.y_load, color=PALETTE["phase"], linewidth=1.2,
              label=f"load step {data.load_step:.4g} at the plant input, per unit")
    ay_l.set_ylabel("output", fontsize=8.5)
    ay_s.legend(fontsize=6.5, loc="lower right", framealpha=0.9)
    if data.u_lin is not None:
        au_l.plot(data.t_lin, data.u_lin, color=PALETTE["effort"], linewidth=1.4,
                  label="actuator per unit step")
        au_l.legend(fontsize=6.5, loc="upper right", framealpha=0.9)
    au_l.set_ylabel("actuator", fontsize=8.5)
    au_s.plot(data.t_sat, data.u_sat, color=PALETTE["effort"], linewidth=1.4,
              label="actuator output")
    ulo, uhi = _clip_limits(data.u_sat)
    if data.limits is not None:
        for edge in data.limits:
            au_s.axhline(edge, color=PALETTE["limit"], linestyle="--", linewidth=1.0)
        span = data.limits[1] - data.limits[0]
        ulo = min(ulo, data.limits[0] - 0.05 * span)
        uhi = max(uhi, data.limits[1] + 0.05 * span)
    au_s.axhline(data.operating_point, color=PALETTE["muted"], linewidth=0.7)
    au_s.set_ylim(ulo, uhi)
    au_s.legend(fontsize=6.5, loc="upper right", framealpha=0.9)
    for a in (au_l, au_s):
        a.set_xlabel("time (s)", fontsize=8.5)
