"""The interactive report page, ``explore.html``: move the gain along a design's locus.

``synth design --report DIR`` writes it beside ``report.html``.  On it the
engineer drags a slider that multiplies the chosen design's gain ``K`` from
0.2x to 5x and sees the closed-loop poles move on the root locus, the step
(and, when the verifier computes it, the load) response and the control
effort change, the margins and every metric update, and each requirement
marked met or violated at that gain.  The ranked designs (those with a report
section) can be switched; with several plant models the page switches
between them or shows all at once; a frontier appears when the run carries
one.

Every number on the page was computed in Python before it was written: the
verifier at each gain (:func:`synth.verify.sweep.gain_sweep`, gathered by
``synth.design.prepare_report``).  The page embeds them as data (one JSON
block, schema ``synth.explore/1``, see :func:`explore_data`) and its script
only picks the entry for the slider's position and draws it: no numerics of
its own, no library, no network.

Why plain SVG and a few lines of script: a plotting library that writes
standalone HTML embeds its whole runtime (several hundred kilobytes to a few
megabytes of JavaScript) in every page; here every curve is already computed,
decimated to what the page resolution shows (matplotlib's own path
simplification, :func:`matplotlib.path.Path.cleaned`), and drawing a
polyline needs nothing more.  The page stays small, opens offline and prints.

The safety cautions and the gain at which the design was verified stand at
the top.
"""

from __future__ import annotations

import html
import json
import math
from typing import Any

import numpy as np

from synth.outputs.cautions import CAUTIONS
from synth.outputs.report.framing import (
    frequency_window,
    locus_view,
    region_polygon,
    resonances,
)
from synth.outputs.text import number as _g
from synth.problem.catalogue import METRICS

__all__ = ["SCHEMA", "PLOTS", "explore_data", "render_explore"]

#: The page's data format.
SCHEMA = "synth.explore/1"

#: Plot areas of the page: name -> (width, height) of its SVG viewBox.  The axes fill it
#: less the margins :data:`_MARGIN` (left, right, top, bottom).
PLOTS = {
    "locus": (600, 400),
    "overview": (300, 220),
    "step": (600, 230),
    "effort": (600, 150),
    "load": (600, 200),
    "mag": (600, 190),
    "phase": (600, 160),
    "frontier": (600, 260),
}
_MARGIN = (58, 14, 12, 38)

#: Decimation tolerance in viewBox units (about a third of a pixel at full width).
_TOLERANCE = 0.35

#: Significant digits of curve coordinates in the data.
_DIGITS = 5

#: Metrics shown in the numbers table (in this order), then the other numeric ones.
_LEAD_METRICS = ("phase_margin_deg", "gain_margin_db", "delay_margin", "crossover_frequency",
                 "peak_sensitivity")
_NOT_SHOWN = ("in_region", "final_value", "gain")


# ---------------------------------------------------------------------------------------------
# frames, ticks, curves
# ---------------------------------------------------------------------------------------------

def _area(plot: str) -> tuple[float, float]:
    """Width and height of a plot's axes area (viewBox units)."""
    w, h = PLOTS[plot]
    return w - _MARGIN[0] - _MARGIN[1], h - _MARGIN[2] - _MARGIN[3]


def _r(x: float, digits: int = _DIGITS) -> float | None:
    """A coordinate rounded to ``digits`` significant digits (None when not finite)."""
    x = float(x)
    if not math.isfinite(x):
        return None
    return float(f"{x:.{digits}g}")


def _ticks(lo: float, hi: float, log: bool = False) -> list[list]:
    """Tick positions and labels inside ``[lo, hi]`` (matplotlib's tick locators)."""
    from matplotlib.ticker import MaxNLocator

    if log:
        # the data are log10 values: a tick per decade (every other when crowded)
        k0, k1 = math.ceil(lo - 1e-9), math.floor(hi + 1e-9)
        step = 1 if k1 - k0 <= 7 else 2
        return [[k, f"{10.0 ** k:g}"] for k in range(k0, k1 + 1, step)]
    values = MaxNLocator(nbins=6, steps=[1, 2, 2.5, 5, 10]).tick_values(lo, hi)
    span = hi - lo
    out = []
    for v in values:
        if lo - 1e-9 * span <= v <= hi + 1e-9 * span:
            v = 0.0 if abs(v) <= 1e-9 * span else float(v)
            out.append([_r(v, 12), f"{v:.6g}"])
    return out


def _frame(plot: str, x, y, xlabel: str, ylabel: str, xlog: bool = False,
           static: list | None = None) -> dict:
    """A plot's frame: limits, ticks, labels and its static items."""
    x0, x1 = (float(v) for v in x)
    y0, y1 = (float(v) for v in y)
    return {"plot": plot, "x": [_r(x0, 12), _r(x1, 12)], "y": [_r(y0, 12), _r(y1, 12)],
            "xticks": _ticks(x0, x1, xlog), "yticks": _ticks(y0, y1),
            "xlabel": xlabel, "ylabel": ylabel, "items": static or []}


def _segments(frame: dict, x, y) -> list[list[float]]:
    """A curve as polylines in data units, decimated to what the plot shows.

    The curve is mapped to the plot's viewBox, simplified and clipped there by
    matplotlib (:meth:`matplotlib.path.Path.cleaned`: vertices that move the
    line by less than :data:`_TOLERANCE` go, the parts far outside the axes are
    cut), and mapped back.  Non-finite values break the line.
    """
    from matplotlib.path import Path

    x = np.asarray(x, dtype=float)
    y = np.asarray(y, dtype=float)
    if x.size < 2:
        return []
    (x0, x1), (y0, y1) = frame["x"], frame["y"]
    aw, ah = _area(frame["plot"])
    px = (x - x0) / (x1 - x0) * aw
    py = (y - y0) / (y1 - y0) * ah
    with np.errstate(invalid="ignore", over="ignore"):
        px = np.where(np.isfinite(px), px, np.nan)
        py = np.where(np.isfinite(py), np.clip(py, -10 * ah, 11 * ah), np.nan)
    path = Path(np.column_stack([px, py]))
    path.should_simplify = True
    path.simplify_threshold = _TOLERANCE
    clean = path.cleaned(simplify=True, remove_nans=True,
                         clip=(-0.05 * aw, -0.05 * ah, 1.05 * aw, 1.05 * ah))
    out: list[list[float]] = []
    for (vx, vy), code in zip(clean.vertices, clean.codes, strict=True):
        if code == Path.STOP:
            break
        if code == Path.MOVETO or not out:
            out.append([])
        elif code != Path.LINETO:
            continue
        out[-1] += [_r(x0 + vx / aw * (x1 - x0)), _r(y0 + vy / ah * (y1 - y0))]
    return [s for s in out if len(s) >= 4]


def _line(frame: dict, x, y, cls: str) -> dict:
    return {"k": "line", "c": cls, "s": _segments(frame, x, y)}


def _marks(points, cls: str, marker: str) -> dict:
    z = np.asarray(points, dtype=complex).ravel()
    z = z[np.isfinite(z)]
    return {"k": "mark", "c": cls, "m": marker,
            "p": [v for p in z for v in (_r(p.real), _r(p.imag))]}


def _hline(frame: dict, y: float, cls: str, x=None) -> dict:
    x0, x1 = frame["x"] if x is None else x
    return {"k": "line", "c": cls, "s": [[x0, _r(y), x1, _r(y)]]}


def _vline(frame: dict, x: float, cls: str, y=None) -> dict:
    y0, y1 = frame["y"] if y is None else y
    return {"k": "line", "c": cls, "s": [[_r(x), y0, _r(x), y1]]}


def _area_item(vertices, cls: str) -> dict:
    return {"k": "area", "c": cls, "p": [_r(v) for xy in vertices for v in xy]}


def _edges(frame: dict, points, cls: str) -> dict:
    """Arrows at the frame's edge toward points outside it: ``[x, y, angle_deg, ...]``."""
    (x0, x1), (y0, y1) = frame["x"], frame["y"]
    aw, ah = _area(frame["plot"])
    cx, cy = 0.5 * (x0 + x1), 0.5 * (y0 + y1)
    hw, hh = 0.5 * (x1 - x0), 0.5 * (y1 - y0)
    out = []
    for z in np.asarray(points, dtype=complex).ravel():
        if not np.isfinite(z) or (x0 <= z.real <= x1 and y0 <= z.imag <= y1):
            continue
        dx, dy = (z.real - cx) / hw, (z.imag - cy) / hh
        t = 0.96 / max(abs(dx), abs(dy))
        # the angle on the page (y grows downwards there)
        ang = math.degrees(math.atan2(-dy * ah, dx * aw))
        out += [_r(cx + t * dx * hw), _r(cy + t * dy * hh), round(ang, 1)]
    return {"k": "edge", "c": cls, "p": out}


# ---------------------------------------------------------------------------------------------
# text
# ---------------------------------------------------------------------------------------------

def _pole_text(p: complex) -> str:
    """``-44.85 ± 66.21j (damping 0.5608, 79.96 rad/s)`` or ``-58.51``."""
    if p.imag == 0.0:
        return _g(p.real, 4)
    mag = abs(p)
    return (f"{_g(p.real, 4)} ± {_g(abs(p.imag), 4)}j  (damping {_g(-p.real / mag, 4)}, "
            f"{_g(mag, 4)} rad/s)")


def _poles_text(poles) -> list[str]:
    """One line per real pole and per conjugate pair, slowest first."""
    z = np.asarray(poles, dtype=complex)
    z = z[np.isfinite(z) & (z.imag >= 0)]
    z = z[np.lexsort((z.imag, -z.real))]
    return [_pole_text(complex(p)) for p in z]


def _metric_text(key: str, value, stable: bool) -> str:
    if not stable and key not in ("min_damping_ratio", "gain"):
        return "- (unstable)"
    if key == "stable_plant_gain_range":
        if not value:
            return "-"
        lo, hi = value
        return f"[{_g(lo, 4, '0')}, {_g(hi, 4, 'unbounded')}]"
    if value is None:
        return "unbounded" if key in ("gain_margin_db", "delay_margin") else "-"
    return _g(value, 4)


def _numbers(metrics: dict, stable: bool) -> list[dict]:
    """The numbers table: margins first, then every other metric of the catalogue."""
    keys = [k for k in _LEAD_METRICS if k in METRICS]
    keys += [k for k in METRICS if k not in keys and k not in _NOT_SHOWN]
    out = []
    for k in keys:
        m = METRICS[k]
        v = metrics.get(k)
        value = None
        if isinstance(v, (int, float)) and not isinstance(v, bool) and math.isfinite(v):
            value = float(v)
        out.append({"key": k, "label": m.title, "value": value,
                    "text": _metric_text(k, v, stable)})
    return out


def _requirements(problem, verdict) -> list[dict]:
    """Each limit of the file at this gain: met, violated, or not judged (unstable loop)."""
    rows = [{"key": "stability", "label": "closed-loop stability", "asked": "stable",
             "text": "stable" if verdict.stable else "unstable",
             "status": "met" if verdict.stable and verdict.internally_stable else "violated"}]
    for entry, limit in problem.requirements.limits():
        value = verdict.metrics.get(entry.metric)
        if entry.key in verdict.shortfalls:
            status = "violated"
        elif not verdict.stable and entry.concerns != "structure":
            status = "not judged"
        else:
            status = "met"
        rows.append({"key": entry.key, "label": entry.label, "asked": entry.asked(limit),
                     "text": _metric_text(entry.metric, value,
                                          verdict.stable or entry.concerns == "structure"),
                     "status": status})
    return rows


def _verdict_text(verdict) -> str:
    if not verdict.stable:
        return "closed loop unstable at this gain"
    if verdict.feasible:
        return "meets every requirement at this gain"
    n = len(verdict.violations)
    return f"violates {n} requirement{'s' if n != 1 else ''} at this gain"


# ---------------------------------------------------------------------------------------------
# one design
# ---------------------------------------------------------------------------------------------

def _limits(values, pad: float = 0.08, include=()) -> tuple[float, float]:
    v = np.concatenate([np.asarray(x, dtype=float).ravel() for x in values] +
                       [np.asarray(include, dtype=float)])
    v = v[np.isfinite(v)]
    if v.size == 0:
        return -1.0, 1.0
    lo, hi = float(v.min()), float(v.max())
    span = hi - lo
    if not span > 1e-9 * max(abs(lo), abs(hi)):
        span = abs(hi) if hi != 0 else 1.0
        lo, hi = lo - 0.5 * span, hi + 0.5 * span
        span = hi - lo
    return lo - pad * span, hi + pad * span


def _locus_frames(problem, fig, sweep) -> tuple[dict, dict | None, dict]:
    """Main and overview frames of the design's locus, with the static items."""
    trace = fig.locus
    region = problem.region if not problem.region.is_stability_only else None
    aw, ah = _area("locus")
    closed = sweep.design.verdict.closed_loop_poles
    pts = trace.points
    view = locus_view(trace.poles, trace.zeros, closed,
                      crossings=[c.frequency for c in pts.crossings],
                      breakaways=[b.s for b in pts.breakaways], region=region,
                      scale=float(trace.scale), aspect=aw / ah)

    def frame(plot: str, lims) -> dict:
        x0, x1, y0, y1 = lims
        f = _frame(plot, (x0, x1), (y0, y1), "real part of s (1/s)",
                   "imaginary part of s (rad/s)")
        big = 10.0 * max(x1 - x0, y1 - y0)
        items = [_area_item([(0, -big), (big, -big), (big, big), (0, big)], "rhp")]
        if region is not None:
            items.append(_area_item(region_polygon(region, lims), "region"))
        items += [_hline(f, 0.0, "axis"), _vline(f, 0.0, "axis")]
        roots = trace.roots
        branches = []
        for j in range(roots.shape[1]):
            branches += _segments(f, roots[:, j].real, roots[:, j].imag)
        items.append({"k": "line", "c": "branch", "s": branches})
        items.append(_marks(trace.poles, "ol", "x"))
        if trace.zeros.size:
            items.append(_marks(trace.zeros, "ol", "o"))
        if pts.crossings:
            w = np.asarray([c.frequency for c in pts.crossings])
            items.append(_marks(np.concatenate([1j * w, -1j * w]), "crossing", "d"))
        if pts.breakaways:
            items.append(_marks([b.s for b in pts.breakaways], "break", "s"))
        if plot == "locus":
            items.append(_edges(f, np.concatenate([trace.poles, trace.zeros]), "ol"))
        f["items"] = items
        return f

    main = frame("locus", view.main)
    overview = frame("overview", view.overview) if view.overview is not None else None
    far = []
    for label, values in (("open-loop poles", view.far_poles),
                          ("open-loop zeros", view.far_zeros)):
        if values.size:
            far.append(f"{label}: " + "; ".join(_pole_text(complex(v)).split("  (")[0]
                                                 for v in values))
    return main, overview, {"far": far}


def _time_frames(problem, sweep) -> dict:
    """Step, effort and load frames over every gain (unstable gains do not stretch them)."""
    t_end = sweep.t_end
    stable = [p for p in sweep.points if p.curves.stable and p.curves.step is not None]
    steps = [p.curves.step for p in stable] or [p.curves.step for p in sweep.points
                                                  if p.curves.step is not None]
    if not steps:
        return {}
    if t_end is None:
        t_end = max(float(s.t[-1]) for s in steps)
    req = problem.requirements
    os_lim = req.limit("overshoot_percent")
    finals = [s.final_value for s in steps if math.isfinite(s.final_value)]
    include = [0.0, 1.0] + ([max(finals) * (1 + os_lim / 100.0)] if os_lim and finals else [])
    y = _limits([s.y for s in steps], include=include)
    frames = {"step": _frame("step", (0.0, t_end), y, "time (s)", "output")}
    u_lim = req.limit("peak_control_effort")
    us = [s.u for s in steps if s.u is not None]
    if us:
        u = _limits(us, include=[0.0] + ([u_lim, -u_lim] if u_lim else []))
        f = _frame("effort", (0.0, t_end), u, "time (s)", "effort")
        if u_lim:
            f["items"] = [_hline(f, u_lim, "limit"), _hline(f, -u_lim, "limit")]
        frames["effort"] = f
    loads = [p.curves.load for p in stable if p.curves.load is not None]
    if loads:
        frames["load"] = _frame("load", (0.0, t_end), _limits([s.y for s in loads],
                                                              include=[0.0]),
                                "time (s)", "output after a unit load step")
    return frames


def _bode_frames(problem, design, sweep) -> tuple[dict, dict, dict]:
    """Magnitude and phase frames of the loop over the sweep, and the design's curves."""
    from synth.outputs.report.design_figures import bode_curves, margin_frequency

    p0 = sweep.design
    f = p0.curves.frequency
    plant = problem.plant
    comp = design.compensator
    marks = [f.crossover_frequency, f.peak_frequency, f.bandwidth, margin_frequency(f),
             *resonances(plant.rational_num, plant.rational_den, comp.num, comp.den)]
    for p in (sweep.points[0], sweep.points[-1]):
        marks.append(p.curves.frequency.crossover_frequency)
    lo, hi = frequency_window(marks, f.w)
    keep = (f.w >= lo) & (f.w <= hi)
    w, L = f.w[keep], f.loop[keep]
    mag, phase = bode_curves(w, L, f)
    lw = np.log10(w)
    shifts = [20.0 * math.log10(p.factor) for p in sweep.points]
    m_lo, m_hi = _limits([mag + min(shifts), mag + max(shifts)], include=[0.0])
    m_lo, m_hi = max(m_lo, -120.0), min(m_hi, 120.0)
    p_lo, p_hi = _limits([phase], include=[-180.0])
    p_lo, p_hi = max(p_lo, -720.0), min(p_hi, 360.0)
    fm = _frame("mag", (lw[0], lw[-1]), (m_lo, m_hi), "frequency (rad/s)",
                "|K L| (dB)", xlog=True)
    fm["items"] = [_hline(fm, 0.0, "axis")]
    fp = _frame("phase", (lw[0], lw[-1]), (p_lo, p_hi), "frequency (rad/s)",
                "phase (deg)", xlog=True)
    fp["items"] = [_hline(fp, -180.0, "axis"), _line(fp, lw, phase, "phase")]
    return fm, fp, {"lw": lw, "mag": mag}


def _point(problem, point, frames: dict, bode: dict, locus: tuple) -> dict:
    """One gain: the numbers, the verdict per requirement, and what each plot draws there."""
    from synth.outputs.report.design_figures import margin_frequency

    v = point.verdict
    c = point.curves
    poles = np.asarray(v.closed_loop_poles, dtype=complex)
    main, overview, _ = locus
    plots: dict[str, list] = {"locus": [_marks(poles, "cl", "p"), _edges(main, poles, "cl")]}
    if overview is not None:
        plots["overview"] = [_marks(poles, "cl", "p")]
    plots.update(_curve_items(problem, c, frames, "cl"))
    shift = 20.0 * math.log10(point.factor)
    fm = frames["mag"]
    mag_items = [_line(fm, bode["lw"], bode["mag"] + shift, "mag")]
    ff = c.frequency
    if ff.crossover_frequency is not None:
        lwc = math.log10(ff.crossover_frequency)
        mag_items.append(_vline(fm, lwc, "cross"))
        if ff.phase_margin_deg is not None:
            plots["phase"] = [_vline(frames["phase"], lwc, "cross"),
                              {"k": "line", "c": "pm",
                               "s": [[_r(lwc), -180.0, _r(lwc), _r(-180.0 + ff.phase_margin_deg)]]}]
    wp = margin_frequency(ff)
    if wp is not None:
        mag_items.append({"k": "line", "c": "gm", "s": [[_r(math.log10(wp)),
                                                         _r(-ff.gain_margin_db),
                                                         _r(math.log10(wp)), 0.0]]})
    plots["mag"] = mag_items
    out = {
        "factor": _r(point.factor, 6),
        "gain": float(point.gain),
        "label": f"K = {_g(point.gain, 4)}",
        "factor_text": f"{point.factor:.3g} × the verified gain",
        "stable": bool(v.stable),
        "feasible": bool(v.feasible),
        "verdict": _verdict_text(v),
        "violations": list(v.violations),
        "poles": [[float(p.real), float(p.imag)] for p in poles],
        "poles_text": _poles_text(poles),
        "numbers": _numbers(v.metrics, v.stable),
        "requirements": _requirements(problem, v),
        "plots": plots,
    }
    if point.models:
        out["models"] = [_model(problem, m, frames) for m in point.models]
    return out


def _curve_items(problem, c, frames: dict, cls: str) -> dict[str, list]:
    """Step, effort and load items of one loop's curves."""
    plots: dict[str, list] = {}
    s = c.step
    if s is not None and "step" in frames:
        fs = frames["step"]
        items = [_hline(fs, 1.0, "ref")]
        req = problem.requirements
        fv = s.final_value
        os_lim = req.limit("overshoot_percent")
        ts = req.limit("settling_time")
        if c.stable and math.isfinite(fv):
            if os_lim is not None:
                items.append(_hline(fs, fv * (1 + os_lim / 100.0), "limit"))
            if ts is not None and ts < fs["x"][1]:
                band = abs(fv) * req.settling_band / 100.0
                t1 = fs["x"][1]
                items.append(_area_item([(ts, fv - band), (t1, fv - band), (t1, fv + band),
                                         (ts, fv + band)], "band"))
                items.append(_vline(fs, ts, "limit"))
        items.append(_line(fs, s.t, s.y, cls))
        plots["step"] = items
        if s.u is not None and "effort" in frames:
            plots["effort"] = [_line(frames["effort"], s.t, s.u, "u" if cls == "cl" else cls)]
    if c.load is not None and "load" in frames:
        plots["load"] = [_line(frames["load"], c.load.t, c.load.y, cls)]
    return plots


def _model(problem, m, frames: dict) -> dict:
    """One plant model at one gain (problems with several models)."""
    r = m.result
    poles = np.asarray(r.poles, dtype=complex)
    out = {"label": m.label, "stable": bool(r.stable),
           "poles": [[float(p.real), float(p.imag)] for p in poles],
           "poles_text": _poles_text(poles), "numbers": _numbers(r.metrics, r.stable),
           "plots": {"locus": [_marks(poles, "model", "p")], **_curve_items(problem, m.curves,
                                                                              frames, "model")}}
    return out


def _design(report, fig) -> dict | None:
    """Everything the page shows for one design, or None when it has no sweep."""
    sweep = fig.sweep
    if sweep is None or fig.locus is None:
        return None
    problem = report.problem
    design = report.document.design(fig.rank)
    main, overview, extra = _locus_frames(problem, fig, sweep)
    frames = {"locus": main, **_time_frames(problem, sweep)}
    if overview is not None:
        frames["overview"] = overview
    fm, fp, bode = _bode_frames(problem, design, sweep)
    frames["mag"], frames["phase"] = fm, fp
    im = design.implementation or {}
    k0 = sweep.design.gain
    return {
        "rank": design.rank,
        "structure": design.structure,
        "feasible": bool(design.feasible),
        "compensator": f"C(s) = {im.get('factored', '') or design.description}",
        "gain": float(k0),
        "verified": f"Design {design.rank} ({design.structure}) was verified at gain "
                    f"K = {_g(k0, 6)}; the slider multiplies that gain from "
                    f"{sweep.points[0].factor:.2g}x to {sweep.points[-1].factor:.2g}x.",
        "design_index": sweep.design_index,
        "far": extra["far"],
        "frames": frames,
        "points": [_point(problem, p, frames, bode, (main, overview, extra))
                   for p in sweep.points],
    }


def _frontier(frontier: dict | None) -> dict | None:
    """The frontier plot's frame and series (``synth.frontier/1``), or None."""
    if not frontier or not frontier.get("structures"):
        return None
    series = []
    xs, ys = [], []
    for name, rows in frontier["structures"].items():
        pts = [(float(r["level"]), float(r["value"])) for r in rows
               if r.get("value") is not None and r.get("level") is not None]
        if pts:
            series.append((str(name), pts))
            xs += [p[0] for p in pts]
            ys += [p[1] for p in pts]
    if not series:
        return None
    measure = str(frontier.get("measure", "robustness limit"))
    objective = str(frontier.get("objective", "objective"))
    f = _frame("frontier", _limits([xs]), _limits([ys]), measure, objective)
    items, names = [], []
    for i, (name, pts) in enumerate(series):
        x, y = zip(*pts, strict=True)
        items.append(_line(f, x, y, f"s{i % 6}"))
        items.append(_marks(np.asarray(x) + 1j * np.asarray(y), f"s{i % 6}", "p"))
        names.append(name)
    f["items"] = items
    relax = [f"relaxing {r.get('requirement')} from {_g(r.get('from'))} to {_g(r.get('to'))} "
             f"moves the objective from {_g(r.get('objective_from'))} to "
             f"{_g(r.get('objective_to'))}" for r in frontier.get("relaxations") or []]
    return {"frame": f, "names": names, "relaxations": relax}


def explore_data(report) -> dict:
    """The page's data model (schema ``synth.explore/1``), plain JSON values.

    Parameters
    ----------
    report : synth.outputs.report.document.ReportInput
        With a :class:`synth.verify.sweep.GainSweep` on each design that the
        page offers (``DesignFigures.sweep``).

    Returns
    -------
    dict
        ``schema``, ``title``, ``subtitle``, ``cautions``, ``designs`` (one per
        swept design: ``rank``, ``structure``, ``compensator``, ``gain`` (the
        verified gain), ``verified`` (a sentence), ``design_index``, ``far``,
        ``frames`` (per plot: limits, ticks, labels, static ``items``) and
        ``points`` (per gain: ``factor``, ``gain``, ``stable``, ``feasible``,
        ``verdict``, ``violations``, ``poles``, ``poles_text``, ``numbers``,
        ``requirements``, ``plots`` and, with several plant models,
        ``models``)), and, when present, ``models`` (labels) and
        ``frontier``.  Optional blocks are absent rather than empty.
    """
    from synth.outputs.report.document import _title

    title, subtitle = _title(report.problem)
    designs = [d for d in (_design(report, f) for f in report.figures) if d is not None]
    data: dict[str, Any] = {"schema": SCHEMA, "title": title, "subtitle": subtitle,
                            "cautions": list(CAUTIONS), "designs": designs}
    labels = [m["label"] for d in designs[:1] for m in d["points"][0].get("models", [])]
    if labels:
        data["models"] = labels
    fr = _frontier(report.frontier)
    if fr is not None:
        data["frontier"] = fr
    return data


# ---------------------------------------------------------------------------------------------
# the page
# ---------------------------------------------------------------------------------------------

_CSS = """
main { max-width: 78rem; margin: 0 auto; padding: 1.2rem 1.2rem 3rem; }
h1 { font-size: 1.5rem; margin: 0 0 .2rem; }
h2 { font-size: 1.1rem; margin: 1rem 0 .4rem; color: var(--accent); }
p.sub { margin: 0 0 .6rem; color: var(--muted); }
section.caution { background: var(--caution); border-left: 6px solid var(--cautionrule);
                  padding: .3rem 1rem .4rem; margin: .6rem 0 1rem; }
section.caution li { font-weight: 600; margin: .15rem 0; }
.controls { position: sticky; top: 0; z-index: 2; background: var(--paper);
            border-bottom: 1px solid var(--rule); padding: .5rem 0 .6rem; }
.controls label { margin-right: .6rem; font-weight: 600; }
.controls select { font: inherit; margin-right: 1.2rem; }
#gain { width: min(38rem, 90%); vertical-align: middle; }
#gain-value { font-weight: 700; font-variant-numeric: tabular-nums; }
#verified { margin: .3rem 0; }
#verdict { font-weight: 700; }
#verdict.good { color: var(--good); } #verdict.bad { color: var(--bad); }
.grid { display: grid; grid-template-columns: repeat(auto-fit, minmax(30rem, 1fr)); gap: 1rem; }
figure { margin: 0; background: #fff; border: 1px solid var(--rule); padding: .3rem; }
figure svg { width: 100%; height: auto; display: block; }
#fig-overview { max-width: 22rem; }
figcaption { font-size: .8rem; color: var(--muted); }
table { border-collapse: collapse; font-size: .88rem; width: 100%; }
th, td { border-bottom: 1px solid var(--rule); padding: .2rem .5rem; text-align: left; }
td.num { text-align: right; font-variant-numeric: tabular-nums; }
tr.met td.status { color: var(--good); } tr.violated td.status { color: var(--bad); font-weight: 700; }
tr.notjudged td.status { color: var(--muted); }
ul.poles { margin: .2rem 0; padding-left: 1.2rem; font-variant-numeric: tabular-nums; }
p.muted, li.muted { color: var(--muted); font-size: .85rem; }
.hidden { display: none; }
svg text { font: 11px "DejaVu Sans", Helvetica, Arial, sans-serif; fill: var(--ink); }
svg .tick { stroke: #e4e8ec; stroke-width: 1; }
svg .frame { fill: none; stroke: #9aa6b0; stroke-width: 1; }
svg .axis { stroke: #6c6a64; stroke-width: 1; fill: none; }
svg .rhp { fill: #f8e9e6; } svg .region { fill: #dcefe4; stroke: #5f9e7f; }
svg .band { fill: #f2d98c; opacity: .6; }
svg .branch { stroke: #2f6690; stroke-width: 1.6; fill: none; }
svg .ol { stroke: #22223b; stroke-width: 2; fill: none; }
svg .crossing { fill: #b5446e; } svg .break { fill: #3b6e8f; }
svg .cl { stroke: #1b6f8a; stroke-width: 1.8; fill: none; }
svg path.mk.cl, svg path.edge.cl { fill: #e8a33d; stroke: #22223b; stroke-width: .8; }
svg .u { stroke: #9a5b22; stroke-width: 1.6; fill: none; }
svg .model { stroke: #7d4c9e; stroke-width: 1.2; fill: none; opacity: .75; }
svg path.mk.model { fill: #7d4c9e; stroke: none; }
svg .ref { stroke: #6b7885; stroke-width: 1; }
svg .limit { stroke: #b5485d; stroke-width: 1.2; stroke-dasharray: 5 4; fill: none; }
svg .mag { stroke: #1b6f8a; stroke-width: 1.6; fill: none; }
svg .phase { stroke: #5a4e9c; stroke-width: 1.6; fill: none; }
svg .cross { stroke: #2b9a5a; stroke-width: 1; stroke-dasharray: 2 3; }
svg .pm, svg .gm { stroke-width: 3.5; } svg .pm { stroke: #2b9a5a; } svg .gm { stroke: #b5485d; }
svg .s0 { stroke: #0e7c86; fill: #0e7c86; } svg .s1 { stroke: #c4463a; fill: #c4463a; }
svg .s2 { stroke: #5d7f1f; fill: #5d7f1f; } svg .s3 { stroke: #7d4c9e; fill: #7d4c9e; }
svg .s4 { stroke: #d08a12; fill: #d08a12; } svg .s5 { stroke: #33506e; fill: #33506e; }
svg path.line.s0, svg path.line.s1, svg path.line.s2, svg path.line.s3, svg path.line.s4,
svg path.line.s5 { fill: none; stroke-width: 1.8; }
@media print { .controls { position: static; } }
"""

# The page's whole script: read the data, build each plot's frame, and on every slider,
# design or model change draw the chosen entry.  It computes nothing but the mapping of
# data units to the plot area.
_SCRIPT = r"""
"use strict";
(function () {
  const D = JSON.parse(document.getElementById("synth-data").textContent);
  const M = %(margin)s, P = %(plots)s, NS = "http://www.w3.org/2000/svg";
  const $ = (id) => document.getElementById(id);
  const state = {d: 0, i: 0, m: -1};

  function el(tag, attrs, parent, text) {
    const e = document.createElementNS(NS, tag);
    for (const k in attrs) e.setAttribute(k, attrs[k]);
    if (text !== undefined) e.textContent = text;
    if (parent) parent.appendChild(e);
    return e;
  }
  function mapper(f) {
    const [w, h] = P[f.plot], aw = w - M[0] - M[1], ah = h - M[2] - M[3];
    return [(x) => M[0] + (x - f.x[0]) / (f.x[1] - f.x[0]) * aw,
            (y) => M[2] + ah - (y - f.y[0]) / (f.y[1] - f.y[0]) * ah, aw, ah];
  }
  const MARK = {x: "M-5,-5L5,5M-5,5L5,-5", o: "M5,0A5,5 0 1,1 -5,0A5,5 0 1,1 5,0",
                p: "M0,-6L5.7,-1.9L3.5,4.9L-3.5,4.9L-5.7,-1.9Z", d: "M0,-6L6,0L0,6L-6,0Z",
                s: "M-4.5,-4.5H4.5V4.5H-4.5Z"};
  function draw(g, f, items) {
    const [sx, sy] = mapper(f);
    for (const it of items || []) {
      if (it.k === "line") {
        const d = it.s.map((s) => s.map((v, j) => j %% 2 ? sy(v).toFixed(1) : sx(v).toFixed(1))
          .reduce((a, v, j) => a + (j %% 2 ? "," : (j ? "L" : "M")) + v, "")).join("");
        if (d) el("path", {d: d, class: "line " + it.c}, g);
      } else if (it.k === "area") {
        let d = "";
        for (let j = 0; j < it.p.length; j += 2) d += (j ? "L" : "M") + sx(it.p[j]).toFixed(1) + "," + sy(it.p[j + 1]).toFixed(1);
        el("path", {d: d + "Z", class: it.c}, g);
      } else if (it.k === "mark") {
        for (let j = 0; j < it.p.length; j += 2)
          el("path", {d: MARK[it.m], class: "mk " + it.c,
                      transform: "translate(" + sx(it.p[j]).toFixed(1) + "," + sy(it.p[j + 1]).toFixed(1) + ")"}, g);
      } else if (it.k === "edge") {
        for (let j = 0; j < it.p.length; j += 3)
          el("path", {d: "M7,0L-4,-5L-4,5Z", class: "edge " + it.c,
                      transform: "translate(" + sx(it.p[j]).toFixed(1) + "," + sy(it.p[j + 1]).toFixed(1) + ") rotate(" + it.p[j + 2] + ")"}, g);
      }
    }
  }
  function frame(svg, f) {
    svg.textContent = "";
    const [sx, sy, aw, ah] = mapper(f), [w, h] = P[f.plot];
    svg.setAttribute("viewBox", "0 0 " + w + " " + h);
    const id = svg.id + "-clip";
    el("rect", {x: M[0], y: M[2], width: aw, height: ah}, el("clipPath", {id: id}, el("defs", {}, svg)));
    const grid = el("g", {}, svg);
    for (const [v, t] of f.xticks) {
      el("line", {x1: sx(v), x2: sx(v), y1: M[2], y2: M[2] + ah, class: "tick"}, grid);
      el("text", {x: sx(v), y: M[2] + ah + 14, "text-anchor": "middle"}, grid, t);
    }
    for (const [v, t] of f.yticks) {
      el("line", {x1: M[0], x2: M[0] + aw, y1: sy(v), y2: sy(v), class: "tick"}, grid);
      el("text", {x: M[0] - 5, y: sy(v) + 4, "text-anchor": "end"}, grid, t);
    }
    el("text", {x: M[0] + aw / 2, y: h - 4, "text-anchor": "middle"}, grid, f.xlabel);
    el("text", {x: 12, y: M[2] + ah / 2, "text-anchor": "middle",
                transform: "rotate(-90 12 " + (M[2] + ah / 2) + ")"}, grid, f.ylabel);
    const body = el("g", {"clip-path": "url(#" + id + ")"}, svg);
    draw(body, f, f.items);
    el("rect", {x: M[0], y: M[2], width: aw, height: ah, class: "frame"}, svg);
    return [el("g", {"clip-path": "url(#" + id + ")", class: "dyn"}, svg), el("g", {class: "dyn"}, svg)];
  }
  function text(id, t) { const e = $(id); if (e) e.textContent = t; }
  function row(tbody, cells, cls) {
    const tr = document.createElement("tr");
    if (cls) tr.className = cls;
    for (const [t, c] of cells) {
      const td = document.createElement("td");
      td.textContent = t; if (c) td.className = c; tr.appendChild(td);
    }
    tbody.appendChild(tr);
  }
  let layers = {};
  function showDesign() {
    const d = D.designs[state.d];
    text("verified", d.verified); text("compensator", d.compensator);
    const slider = $("gain");
    slider.max = d.points.length - 1;
    state.i = d.design_index; slider.value = state.i;
    layers = {};
    for (const name in P) {
      const svg = $("plot-" + name), fig = $("fig-" + name);
      if (!svg || name === "frontier") continue;
      const f = d.frames[name];
      fig.classList.toggle("hidden", !f);
      if (f) layers[name] = [frame(svg, f), f];
    }
    const far = $("far");
    far.textContent = "";
    for (const t of d.far) { const li = document.createElement("li"); li.textContent = t; far.appendChild(li); }
    showGain();
  }
  function showGain() {
    const d = D.designs[state.d], p = d.points[state.i];
    const model = state.m >= 0 && p.models ? p.models[state.m] : null;
    const shown = model || p;
    text("gain-value", p.label); text("gain-factor", p.factor_text);
    const v = $("verdict"); v.textContent = p.verdict; v.className = p.feasible ? "good" : "bad";
    text("shown-model", model ? "model: " + model.label : (p.models ? "all models (worst case)" : ""));
    for (const name in layers) {
      const [[clipped, free], f] = layers[name];
      clipped.textContent = ""; free.textContent = "";
      let items = (shown.plots[name] || []);
      if (!model && state.m === -2 && p.models)
        items = items.concat(...p.models.map((m) => m.plots[name] || []));
      draw(clipped, f, items.filter((it) => it.k !== "edge"));
      draw(free, f, items.filter((it) => it.k === "edge"));
    }
    const ul = $("poles"); ul.textContent = "";
    for (const t of shown.poles_text) { const li = document.createElement("li"); li.textContent = t; ul.appendChild(li); }
    const nb = $("numbers"); nb.textContent = "";
    for (const n of shown.numbers) row(nb, [[n.label], [n.text, "num"]], "n-" + n.key);
    const rb = $("requirements"); rb.textContent = "";
    for (const r of p.requirements)
      row(rb, [[r.label], [r.asked], [r.text, "num"], [r.status, "status"]],
          r.status.replace(" ", "") + " r-" + r.key);
  }
  function frontier() {
    const F = D.frontier, fig = $("fig-frontier");
    if (!F) return;
    fig.classList.remove("hidden");
    frame($("plot-frontier"), F.frame);
    const ul = $("frontier-names");
    F.names.forEach((n, i) => { const li = document.createElement("li"); li.textContent = n; li.className = "s" + (i %% 6); ul.appendChild(li); });
    for (const t of F.relaxations) { const li = document.createElement("li"); li.textContent = t; li.className = "muted"; ul.appendChild(li); }
  }
  const sel = $("design");
  D.designs.forEach((d, j) => { const o = document.createElement("option"); o.value = j;
    o.textContent = "design " + d.rank + ": " + d.structure + (d.feasible ? "" : " (does not meet every requirement)"); sel.appendChild(o); });
  sel.addEventListener("change", () => { state.d = +sel.value; showDesign(); });
  $("gain").addEventListener("input", (e) => { state.i = +e.target.value; showGain(); });
  $("reset").addEventListener("click", () => { state.i = D.designs[state.d].design_index; $("gain").value = state.i; showGain(); });
  if (D.models) {
    const ms = $("model"); $("model-box").classList.remove("hidden");
    [["all models (worst case), nominal curves", -1], ["all models overlaid", -2]]
      .concat(D.models.map((m, j) => [m, j])).forEach(([t, j]) => {
        const o = document.createElement("option"); o.value = j; o.textContent = t; ms.appendChild(o); });
    ms.addEventListener("change", () => { state.m = +ms.value; showGain(); });
  }
  frontier();
  if (D.designs.length) { $("explorer").classList.remove("hidden"); showDesign(); }
  else $("nothing").classList.remove("hidden");
  document.body.dataset.ready = "1";
})();
"""


def _figure(name: str, caption: str, hidden: bool = False) -> str:
    cls = " class=\"hidden\"" if hidden else ""
    return (f"<figure id=\"fig-{name}\"{cls}><svg id=\"plot-{name}\" role=\"img\" "
            f"aria-label=\"{html.escape(caption, quote=True)}\"></svg>"
            f"<figcaption>{html.escape(caption)}</figcaption></figure>")


def render_explore(report) -> str:
    """The whole interactive page (self-contained HTML) for a report's input.

    Parameters
    ----------
    report : synth.outputs.report.document.ReportInput

    Returns
    -------
    str
    """
    data = explore_data(report)
    # inside <script>, "</" must not appear; JSON allows escaping "/" and "<" as \\u003c
    blob = json.dumps(data, separators=(",", ":"), allow_nan=False).replace("<", "\\u003c")
    script = _SCRIPT % {"margin": json.dumps(list(_MARGIN)),
                        "plots": json.dumps({k: list(v) for k, v in PLOTS.items()})}
    from synth.outputs.report.document import BASE_CSS

    cautions = "".join(f"<li>{html.escape(c)}</li>" for c in CAUTIONS)
    title = html.escape(data["title"])
    parts = [
        "<!DOCTYPE html>", "<html lang=\"en\">", "<head>", "<meta charset=\"utf-8\">",
        "<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">",
        f"<title>{title}: explore the gain</title>", f"<style>{BASE_CSS}{_CSS}</style>",
        "</head>",
        "<body>", "<main>",
        f"<h1>{title}: explore the gain</h1>",
        f"<p class=\"sub\">{html.escape(data['subtitle'])}; every number on this page was "
        "computed by synth's verifier before the page was written.</p>",
        "<section class=\"caution\" id=\"cautions\"><h2>Read this first</h2>"
        f"<ul>{cautions}</ul></section>",
        "<p id=\"nothing\" class=\"hidden\">The run kept no design with a root locus to "
        "explore.</p>",
        "<div id=\"explorer\" class=\"hidden\">",
        "<div class=\"controls\">",
        "<p id=\"verified\"></p>",
        "<label for=\"design\">design</label><select id=\"design\"></select>",
        "<span id=\"model-box\" class=\"hidden\"><label for=\"model\">plant model</label>"
        "<select id=\"model\"></select></span><br>",
        "<label for=\"gain\">gain</label><input id=\"gain\" type=\"range\" min=\"0\" "
        "max=\"0\" step=\"1\" value=\"0\"> <span id=\"gain-value\"></span> "
        "(<span id=\"gain-factor\"></span>) <button id=\"reset\" type=\"button\">back to the "
        "verified gain</button>",
        "<p><span id=\"verdict\"></span> <span id=\"shown-model\" class=\"muted\"></span></p>",
        "</div>",
        "<p><code id=\"compensator\"></code></p>",
        "<div class=\"grid\">",
        "<div>",
        _figure("locus", "Root locus of the design's loop as K varies: open-loop poles x, "
                "zeros o, the closed-loop poles at the slider's gain filled; the requirement "
                "region shaded. Arrows at the edge point to poles outside this view."),
        "<ul id=\"far\" class=\"poles muted\"></ul>",
        _figure("overview", "The whole locus, zoomed out.", hidden=True),
        "</div>",
        "<div>",
        _figure("step", "Unit-step reference response (verifier's simulation, exact dead "
                "time), with the overshoot limit and the settling band where set."),
        _figure("effort", "Control effort for that step, with the effort limit where set."),
        _figure("load", "Output after a unit load step at the plant input.", hidden=True),
        "</div>",
        "<div>",
        _figure("mag", "Loop magnitude |K L(jw)|: the gain crossover dotted, the gain margin "
                "as a bar at the phase crossover."),
        _figure("phase", "Loop phase, with the phase margin as a bar at the gain crossover."),
        "</div>",
        "<div>",
        "<h2>Closed-loop poles</h2><ul id=\"poles\" class=\"poles\"></ul>",
        "<h2>Requirements at this gain</h2><table><thead><tr><th>requirement</th>"
        "<th>asked</th><th>value</th><th>status</th></tr></thead>"
        "<tbody id=\"requirements\"></tbody></table>",
        "<h2>Margins and metrics at this gain</h2><table><tbody id=\"numbers\"></tbody>"
        "</table>",
        "</div>",
        "</div>",
        "</div>",
        _figure("frontier", "Frontier: the best objective value per structure as the "
                "robustness limit moves.", hidden=True),
        "<ul id=\"frontier-names\"></ul>",
        "<p class=\"muted\">The page embeds the verifier's results at each gain as data; its "
        "script draws them and computes nothing. Plain SVG, no library, works offline.</p>",
        "</main>",
        f"<script type=\"application/json\" id=\"synth-data\">{blob}</script>",
        f"<script>{script}</script>",
        "</body>", "</html>", "",
    ]
    return "\n".join(parts)
