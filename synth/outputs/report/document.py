"""The design report: one self-contained HTML page, a PDF of the same content, and a page to explore.

:func:`write_report` builds the report once as a list of sections made of
simple blocks (headings, paragraphs, lists, tables, preformatted lines and
figures), then renders that list twice:

* ``report.html``: one file, figures as inline SVG, styles inline, no
  scripts and no external resources, with print rules so it prints cleanly;
* ``report.pdf``: A4 pages laid out by matplotlib (``PdfPages``), text and
  figures flowing in the same order, every figure as vector paths with text
  as text (matplotlib's path simplification keeps the file small).

It also writes ``explore.html``, the interactive page
(:mod:`synth.outputs.report.explore`): a gain slider along each top design's
root locus, with the verifier's results at every gain embedded as data.

All files are written to temporary names first and moved into place only
when all succeeded, so a failure leaves no partial report.

The safety cautions come first in each.

The report only formats.  Its input, :class:`ReportInput`, carries the
document (read once, :mod:`synth.outputs.document`), the run's explanation
and, for each design given a section, the verifier's curves, the design
loop's root locus and the gain sweep (:class:`DesignFigures`);
``synth.design.prepare_report`` gathers them.  The requirement names and
texts come from the catalogue (:mod:`synth.problem.catalogue`).
"""

from __future__ import annotations

import html
import math
import re
import textwrap
from collections.abc import Callable
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np

from synth.outputs.cautions import CAUTIONS
from synth.outputs.document import DesignDocument, DesignRecord
from synth.outputs.text import number as _g
from synth.problem.catalogue import METRICS, REQUIREMENTS, requirement_for

__all__ = ["CAUTIONS", "SECTION_TITLES", "FIGURE_KINDS", "MODEL_FIGURE", "DesignFigures",
           "ReportInput", "build_sections", "write_report"]

#: Fixed section titles (design sections are titled "Design N: structure").
SECTION_TITLES = {
    "cautions": "Read this first",
    "plant": "Plant",
    "requirements": "Requirements",
    "proportional": "What proportional gain alone can do",
    "ranking": "Ranking",
    "notes": "How the numbers were found",
}

#: The figures drawn for each top design, in order.
FIGURE_KINDS = ("locus", "step", "bode", "sensitivity")
#: The extra figure of a design when the problem has several plant models.
MODEL_FIGURE = "models"

#: The figure a design gets after its step response when the problem has actuator limits.
SATURATION_FIGURE = "saturation"

#: Designs given a full section (by default, in ``synth.design.prepare_report``).
TOP = 3

#: matplotlib's own path simplification, at a third of a point: curves keep what the page
#: resolution shows and the files stay small (vector, never rasterised).
SIMPLIFY = {"path.simplify": True, "path.simplify_threshold": 1.0 / 3.0}


@dataclass(frozen=True)
class DesignFigures:
    """What the report draws for one design, computed before the report is written.

    Attributes
    ----------
    rank : int
    curves : synth.verify.curves.LoopCurves
        The verifier's step and frequency responses of the design's loop.
    locus : synth.locus.trace.LocusTrace or None
        The root locus of the design's loop (``None``: it has none).
    locus_gain : float or None
        The compensator gain at which the design operates on it.
    locus_note : str
        Why there is no locus, when there is none.
    sweep : synth.verify.sweep.GainSweep or None
        The verifier along the design's locus (0.2x to 5x its gain), for the
        interactive page; ``None``: the page shows the design without a slider.
    models : tuple of synth.verify.curves.ModelCurves
        With several plant models: the design's curves around each model drawn
        (nominal, variants, worst cases); empty otherwise.
    """

    rank: int
    curves: Any
    locus: Any = None
    locus_gain: float | None = None
    locus_note: str = ""
    sweep: Any = None
    models: tuple = ()


@dataclass(frozen=True)
class ReportInput:
    """Everything a report shows.

    Attributes
    ----------
    problem : synth.problem.requirements.Problem
        The problem the run solved (plant, requirements, region).
    document : DesignDocument
        Its design document, with implementation forms.
    explanation : object or None
        The run's :class:`synth.explain.Explanation` (the proportional
        verdict's reasons); without it the document's ``proportional`` object
        is shown.
    figures : tuple of DesignFigures
        One per design given a full section, best rank first.
    frontier : dict or None
        A ``synth.frontier/1`` document, shown on the interactive page when
        present.

    Notes
    -----
    Every field after ``document`` is optional, so further content (per-model
    curves, a load response, a frontier) joins as optional data and appears
    where it is present.
    """

    problem: Any
    document: DesignDocument
    explanation: Any = None
    figures: tuple[DesignFigures, ...] = ()
    frontier: Any = None


# ---------------------------------------------------------------------------
# the document model
# ---------------------------------------------------------------------------

@dataclass(frozen=True)
class Heading:
    text: str


@dataclass(frozen=True)
class Para:
    text: str
    style: str = "body"  # body | muted | good | bad


@dataclass(frozen=True)
class Bullets:
    items: tuple[str, ...]
    style: str = "body"


@dataclass(frozen=True)
class Table:
    header: tuple[str, ...]
    rows: tuple[tuple[str, ...], ...]
    numeric: tuple[bool, ...] = ()


@dataclass(frozen=True)
class Pre:
    lines: tuple[str, ...]


@dataclass(frozen=True)
class Figure:
    """A drawing: ``draw(target)`` draws into a matplotlib Figure or SubFigure.

    The same drawing becomes inline SVG in the HTML page and vector paths
    (text as text) on a PDF page; nothing is rasterised.
    """

    kind: str
    height_in: float
    caption: str
    alt: str
    draw: Callable


@dataclass(frozen=True)
class Section:
    ident: str
    title: str
    blocks: tuple = field(default_factory=tuple)
    css: str = ""
    new_page: bool = False


# ---------------------------------------------------------------------------
# numbers as text
# ---------------------------------------------------------------------------

def _interval(iv) -> str:
    lo, hi = iv
    return f"({'-inf' if lo is None else _g(lo)}, {'+inf' if hi is None else _g(hi)})"


def _intervals(ivs) -> str:
    ivs = list(ivs or [])
    return ", ".join(_interval(iv) for iv in ivs) if ivs else "none"


def _cplx(p) -> str:
    re, im = (float(p[0]), float(p[1])) if isinstance(p, (list, tuple)) else (p.real, p.imag)
    if abs(im) <= 1e-12 * max(1.0, abs(re)):
        return _g(re)
    return f"{_g(re)} {'+' if im >= 0 else '-'} {_g(abs(im))}j"


def _cplx_list(ps, limit: int = 12) -> str:
    if ps is None:
        ps = []
    ps = [[float(np.real(p)), float(np.imag(p))] if np.iscomplexobj(p) or np.isscalar(p) else p
          for p in ps]
    # one of each conjugate pair keeps the list short
    shown = [p for p in ps if not (isinstance(p, (list, tuple)) and float(p[1]) < 0)]
    text = ", ".join(_cplx(p) for p in shown[:limit])
    if len(shown) > limit:
        text += f", ... ({len(shown) - limit} more)"
    pairs = len(ps) - len(shown)
    if pairs:
        text += "  (each complex value stands with its conjugate)"
    return text or "none"


# ---------------------------------------------------------------------------
# content
# ---------------------------------------------------------------------------

def _limit_text(value) -> str:
    if isinstance(value, (list, tuple)):
        return f"[{_g(value[0])}, {_g(value[1])}]"
    return _g(value)


def _metric_text(key: str, value) -> str:
    if key == "stable_plant_gain_range":
        if not value:
            return "-"
        lo, hi = value
        return f"[{_g(lo, none='0')}, {_g(hi, none='unbounded')}]"
    if key == "gain_margin_db" and value is None:
        return "unbounded"
    return _g(value)


def _plant_section(problem) -> Section:
    plant = problem.plant
    blocks = []
    if plant.label:
        blocks.append(Para(f"{plant.label}"))
    blocks.append(Pre((f"G(s) = {plant.describe()}",)))
    models = problem.model_set
    if not models.is_single:
        blocks.append(Para(f"Plant models (every requirement must hold for all): "
                           f"{models.describe()}."))
        if models.expression is not None:
            blocks.append(Pre((f"G(s) = {models.expression}"
                               + (" * exp(-dead_time s)" if plant.dead_time else ""),
                               "nominal: " + ", ".join(f"{k} = {_g(v)}"
                                                       for k, v in models.parameters))))
        for v in models.variants:
            blocks.append(Pre((f"{v.label}: G(s) = {v.plant.describe()}",)))
    rows = [("order (engine form)", str(plant.order)),
            ("relative degree", str(plant.relative_degree)),
            ("poles", _cplx_list(np.roots(plant.rational_den) if len(plant.denominator) > 1
                                 else [])),
            ("zeros", _cplx_list(np.roots(plant.rational_num) if len(plant.numerator) > 1
                                 else []))]
    dc = plant.dc_gain()
    rows.append(("static gain G(0)", _g(dc) if math.isfinite(dc) else "unbounded (integrator)"))
    if plant.dead_time:
        rows.append(("dead time", f"{plant.dead_time:g} s"))
    blocks.append(Table(("property", "value"), tuple(rows)))
    if plant.dead_time:
        blocks.append(Para(
            f"The design engine replaces the dead time by a Pade form of order {plant.pade_order}; "
            "its right-half-plane zeros appear in the root loci. Time responses and frequency "
            "responses in this report use the exact delay.", "muted"))
    common = plant.common_factors()
    if common:
        blocks.append(Para("The plant's numerator and denominator share the factor(s) at "
                           + ", ".join(_cplx([c.real, c.imag]) for c in common)
                           + "; synth never cancels them.", "bad"))
    return Section("plant", SECTION_TITLES["plant"], tuple(blocks))


def _requirements_section(problem) -> Section:
    req = problem.requirements
    given = req.given()
    blocks = []
    if not given:
        blocks.append(Para("The file sets no requirement beyond closed-loop stability."))
    else:
        rows = []
        for key, value in given.items():
            entry = REQUIREMENTS[key]
            rows.append((entry.label, entry.asked(value), key))
        blocks.append(Table(("requirement", "asked for", "file key"), tuple(rows)))
    region = problem.region
    blocks.append(Para(
        "Pole region used for placement: " + region.describe()
        + (" (from the overshoot, damping and settling-time limits; exact only for a dominant "
           "pole pair, so the verdicts come from simulation)." if not region.is_stability_only
           else ".")))
    return Section("requirements", SECTION_TITLES["requirements"], tuple(blocks))


def _explain_data(report: ReportInput) -> dict:
    """The proportional verdict and its reasons: the run's explanation, else the document's."""
    if report.explanation is not None:
        return report.explanation.to_json()
    prop = report.document.proportional
    return {"proportional": dict(prop) if prop is not None else {}, "reasons": []}


def _proportional_section(report: ReportInput) -> Section:
    problem = report.problem
    ex = _explain_data(report)
    prop = ex.get("proportional") or {}
    stab = prop.get("stabilizing_gain_intervals") or []
    reqiv = prop.get("requirement_gain_intervals") or []
    blocks = []
    if not stab:
        verdict = Para("Verdict: no proportional gain, positive or negative, stabilises this "
                       "plant; a dynamic compensator is needed.", "bad")
    elif problem.region.is_stability_only:
        verdict = Para(f"Verdict: proportional gain stabilises the loop for K in {_intervals(stab)}.",
                       "good")
    elif reqiv:
        verdict = Para("Verdict: proportional gain alone places every closed-loop pole in the "
                       f"requirement region for K in {_intervals(reqiv)} (stable for K in "
                       f"{_intervals(stab)}).", "good")
    else:
        verdict = Para("Verdict: proportional gain can stabilise the loop (K in "
                       f"{_intervals(stab)}) but no gain puts every closed-loop pole in the "
                       "requirement region.", "bad")
    blocks.append(verdict)
    rows = [("stabilising gains", _intervals(stab))]
    if not problem.region.is_stability_only:
        rows.append(("gains meeting the pole region", _intervals(reqiv)))
    if "strongly_stabilizable" in ex:
        rows.append(("stable compensator can stabilise", _g(ex.get("strongly_stabilizable"))))
    blocks.append(Table(("fact", "value"), tuple(rows)))
    reasons = [str(r.get("text", r)) if isinstance(r, dict) else str(r)
               for r in ex.get("reasons") or []]
    if reasons:
        blocks.append(Para("Why:"))
        blocks.append(Bullets(tuple(reasons)))
    blocks.append(Para("Gain intervals are open and cover all real gains; a negative gain is "
                       "reverse acting.", "muted"))
    return Section("proportional", SECTION_TITLES["proportional"], tuple(blocks))


#: The metrics of the ranking table and of each design's performance table.
_TABLE_METRICS = tuple(k for k, m in METRICS.items() if m.contract)


def _ranking_section(document: DesignDocument) -> Section:
    designs = document.designs
    if not designs:
        return Section("ranking", SECTION_TITLES["ranking"],
                       (Para("The search found no candidate design.", "bad"),))
    keys = tuple(k for k in _TABLE_METRICS if METRICS[k].better != "wider")
    header = ("rank", "structure", "origin", "meets all",
              *(f"{METRICS[k].symbol} {METRICS[k].unit}".strip() for k in keys))
    rows = []
    for d in designs:
        rows.append((str(d.rank), d.structure, d.origin, "yes" if d.feasible else "no",
                     *(_metric_text(k, d.metric(k)) for k in keys)))
    blocks = [Table(header, tuple(rows), numeric=(True, False, False, False)
                    + (True,) * len(keys))]
    blocks.append(Para(", ".join(f"{METRICS[k].symbol} {METRICS[k].label}" for k in keys)
                       + " (effort for a unit-step reference).", "muted"))
    unmet = [(d, v) for d in designs for v in d.violations]
    if unmet:
        blocks.append(Para("Requirements not met:"))
        blocks.append(Bullets(tuple(f"design {d.rank} ({d.structure}): {v}"
                                    for d, v in unmet), "bad"))
    n_ok = sum(1 for d in designs if d.feasible)
    blocks.insert(0, Para(f"{len(designs)} designs kept, {n_ok} meeting every requirement. "
                          "Feasible designs come first.", "good" if n_ok else "bad"))
    if document.objective:
        from synth.problem.objectives import OBJECTIVES

        obj = OBJECTIVES.get(document.objective)
        what = f" ({obj.label})" if obj is not None else ""
        blocks.insert(1, Para(f"Among them the objective '{document.objective}'{what} decides "
                              "the order (docs/methods.md, Objectives)."))
    return Section("ranking", SECTION_TITLES["ranking"], tuple(blocks))


def _locus_figure(problem, fig: DesignFigures) -> Figure:
    """The design's root locus, drawn by :func:`synth.outputs.report.locus_plot.draw_locus`."""

    def draw(target):
        from synth.outputs.report.locus_plot import draw_locus

        if fig.locus is None:
            _placeholder(target, f"no root locus: {fig.locus_note}")
            return
        draw_locus(target, fig.locus, region=problem.region, operating_gain=fig.locus_gain,
                   title=f"root locus of the design's loop, operating at K = {fig.locus_gain:.4g}")

    return Figure("locus", 4.6 if fig.locus is not None else 1.2,
                  "Root locus of the loop as the compensator gain K varies: open-loop poles x, "
                  "zeros o, the requirement region shaded, and the closed-loop poles at the "
                  "design's gain marked. The main view frames the poles that shape the "
                  "response; arrows at its edge point to far poles, zeros and special points, "
                  "listed with their values beside the overview of the whole locus.",
                  "root locus", draw=draw)


def _placeholder(target, message: str) -> None:
    """Say in a figure's place why it could not be drawn."""
    target.text(0.5, 0.5, "\n".join(textwrap.wrap(message, 90)), ha="center", va="center",
                fontsize=10, color=_COLORS["muted"])


def _shaping_text(design: DesignRecord) -> str:
    """The design's reference shaping in words ("none" without one)."""
    from synth.outputs.run import shaping_text

    sh = design.shaping()
    return "none" if sh is None else shaping_text(sh).replace("reference: ", "") + (
        f" ({sh.method})" if sh.method else "")


def _design_section(report: ReportInput, design: DesignRecord, fig: DesignFigures) -> Section:
    from synth.outputs.report.design_figures import (
        draw_bode,
        draw_sensitivity,
        draw_step,
        figure_data,
    )

    problem = report.problem
    curves = figure_data(fig.curves, design, problem)
    req = problem.requirements
    comp = design.compensator
    im = design.implementation or {}
    blocks = []
    if design.feasible:
        blocks.append(Para("Meets every requirement (by the checks listed below).", "good"))
    else:
        blocks.append(Para("Does NOT meet every requirement:", "bad"))
        blocks.append(Bullets(design.violations or ("(no reason recorded)",), "bad"))
    blocks.append(Pre((f"C(s) = {im.get('factored', '')}",)))
    described = design.raw.get("description")
    blocks.append(Table(("property", "value"), (
        *((("structure", str(described)),) if described else ()),
        ("found by", design.origin or "-"),
        ("gain K", _g(comp.gain, 6)),
        ("compensator zeros", _cplx_list(comp.zeros)),
        ("compensator poles", _cplx_list(comp.poles)),
        ("closed-loop poles", _cplx_list(design.closed_loop_poles)),
        ("reference shaping", _shaping_text(design)),
    )))
    given = req.given()
    rows = []
    for key in _TABLE_METRICS:
        entry = requirement_for(key)
        need = _limit_text(given[entry.key]) if entry is not None and entry.key in given else ""
        rows.append((METRICS[key].title, _metric_text(key, design.metric(key)), need))
    blocks.append(Heading("Checked performance"))
    blocks.append(Table(("metric", "value", "required"), tuple(rows), numeric=(False, True, True)))

    blocks.append(Heading("Root locus"))
    blocks.append(_locus_figure(problem, fig))
    blocks.append(Heading("Step response and control effort"))
    blocks.append(Figure("step", 3.4, "Output and control effort for a unit-step reference, with the overshoot "
                         "limit, the settling band after the settling-time limit and the effort "
                         "limit where the requirements set them.", "step response and effort",
                         draw=lambda t: draw_step(t, curves, req, "unit-step reference")))
    blocks.extend(_saturation_blocks(problem, fig, design))
    blocks.append(Heading("Loop frequency response"))
    f = curves.facts
    blocks.append(Figure("bode", 3.4, "Bode plot of the loop L(jw) = C(jw) G(jw): the phase margin is marked "
                         "at the gain crossover, the gain margin at the phase crossover.",
                         "Bode magnitude and phase",
                         draw=lambda t: draw_bode(t, curves, "loop L = C G")))
    blocks.append(Para(
        f"From these curves: gain crossover {_g(f.crossover_frequency)} rad/s, phase margin "
        f"{_g(f.phase_margin_deg)} deg, gain margin "
        f"{'unbounded' if f.gain_margin_db is None else _g(f.gain_margin_db) + ' dB'}, "
        f"closed-loop bandwidth {_g(f.bandwidth)} rad/s.", "muted"))
    blocks.append(Heading("Sensitivity"))
    blocks.append(Figure("sensitivity", 2.4, "Sensitivity magnitude |1/(1 + L(jw))|; its peak is the inverse of "
                         "the shortest distance from the Nyquist curve to -1.",
                         "sensitivity magnitude",
                         draw=lambda t: draw_sensitivity(t, curves, req, "S = 1/(1+L)")))
    blocks.extend(_model_blocks(report, design, fig))
    for n in (*curves.notes, *design.notes):
        blocks.append(Para(f"Note: {str(n).rstrip('.')}.", "muted"))
    from synth.outputs.report.discrete_section import discrete_blocks

    blocks.extend(discrete_blocks(design, report.document.raw.get("sampling")))
    blocks.extend(_implementation_blocks(im, sampled=bool(design.discrete)))
    return Section(f"design-{design.rank}", f"Design {design.rank}: {design.structure}",
                   tuple(blocks), "design", new_page=True)


def _saturation_blocks(problem, fig: DesignFigures, design: DesignRecord) -> list:
    """With actuator limits: the linear and the saturated responses side by side."""
    from synth.outputs.report.saturation_figure import draw_saturation, saturation_data

    data = saturation_data(fig.curves, problem)
    if data is None:
        return []
    act = problem.actuator
    aw = design.anti_windup or {}
    scheme = aw.get("scheme", "none")
    tt = (aw.get("parameters") or {}).get("tracking_time")
    aw_text = ("no anti-windup (no integrator or unstable pole to wind up)" if scheme == "none"
               else f"anti-windup by {scheme}" + ("" if tt is None else
                                                 f", tracking time {_g(tt)} s"))
    return [
        Heading("With the actuator limits"),
        Figure(SATURATION_FIGURE, 3.6,
               "Left: the linear loop's unit-step response (small steps, the actuator within "
               f"its range). Right: a reference step of {act.reference_step:g} and a load step "
               f"of {act.load_step:g} through the actuator's limits ({act.describe()}), "
               f"with {aw_text}; outputs per unit of their step, the actuator in its own "
               "units with its range dashed.", "linear and saturated step responses",
               draw=lambda t: draw_saturation(t, data, problem.requirements)),
    ]


def _model_text(model) -> str:
    if isinstance(model, str):
        return model
    return "{" + ", ".join(f"{k}={_g(v)}" for k, v in dict(model).items()) + "}"


def _model_blocks(report: ReportInput, design: DesignRecord, fig: DesignFigures) -> list:
    """With several plant models: the worst-case table, how it was searched, the overlay."""
    from synth.outputs.report.design_figures import draw_model_steps

    if not design.worst_case:
        return []
    req = report.problem.requirements
    blocks: list = [Heading("Over the plant models")]
    rows = []
    for key, case in design.worst_case.items():
        if key not in METRICS:
            continue
        rows.append((METRICS[key].title, _metric_text(key, case.get("value")),
                     _model_text(case.get("model")) + (" (estimate)" if case.get("estimated")
                                                        else "")))
    blocks.append(Para("The root locus, Bode and sensitivity figures above are drawn for the "
                       "nominal plant; every value in the performance table is the worst over "
                       "the plant models, and this is where each occurs.", "muted"))
    blocks.append(Table(("metric", "worst value", "model"), tuple(rows),
                        numeric=(False, True, False)))
    rob = design.robustness or {}
    if rob:
        parts = [f"{rob.get('exact_evaluations', 0)} models evaluated exactly"]
        if rob.get("vertices"):
            parts.append(f"{rob['vertices']} box corners ({rob.get('vertex_design', '')}) and "
                         f"{rob.get('samples', 0)} seeded samples screened")
        if rob.get("local_searches"):
            parts.append(f"{rob['local_searches']} local worst-case searches "
                         f"({rob.get('local_evaluations', 0)} evaluations)")
        text = "How the worst case was searched: " + "; ".join(parts) + "."
        if rob.get("stability_certified") is None and rob.get("stability_test"):
            text += f" Stability: from the {rob['stability_test']}."
        elif rob.get("stability_test"):
            state = "certifies" if rob.get("stability_certified") else "does NOT certify"
            text += (f" Robust stability: the {rob['stability_test']} {state} stability over "
                     "the ranges" + (f" ({rob['stability_detail']})"
                                     if rob.get("stability_detail") else "") + ".")
        blocks.append(Para(text, "muted"))
    if fig.models:
        blocks.append(Figure(MODEL_FIGURE, 3.4,
                             "Unit-step output and control effort around each plant model drawn "
                             "(nominal, variants and every worst-case model); the model where a "
                             "step metric is worst is marked.", "step responses over the models",
                             draw=lambda t: draw_model_steps(t, fig.models, req,
                                                             "unit step, every model drawn")))
    return blocks


def _implementation_blocks(im: dict, sampled: bool = False) -> list:
    blocks = [Heading("Implementation forms")]
    if not im:
        return blocks + [Para("No implementation forms in this document.", "muted")]
    poly = im.get("polynomial") or {}
    rows = [("factored", f"C(s) = {im.get('factored', '')}"),
            ("polynomial", f"C(s) = {poly.get('text', '')}")]
    par, std = im.get("parallel"), im.get("standard")
    if par:
        rows.append(("parallel PID", f"Kp = {_g(par.get('kp'), 6)}, Ki = {_g(par.get('ki'), 6)} 1/s, "
                                     f"Kd = {_g(par.get('kd'), 6)} s, Tf = {_g(par.get('tf'), 6)} s"))
    if std:
        rows.append(("standard PID", f"Kc = {_g(std.get('kc'), 6)}, "
                                     f"Ti = {_g(std.get('ti'), 6, 'none (no integral)')} s, "
                                     f"Td = {_g(std.get('td'), 6)} s, "
                                     f"N = {_g(std.get('n'), 6, 'none (no filter)')}"))
    blocks.append(Table(("form", "compensator"), tuple(rows)))
    if par:
        blocks.append(Para("Parallel: C = Kp + Ki/s + Kd s/(Tf s + 1). Standard: "
                           "C = Kc (1 + 1/(Ti s) + Td s/((Td/N) s + 1)), so Kp = Kc, Ki = Kc/Ti, "
                           "Kd = Kc Td, Tf = Td/N.", "muted"))
        if par.get("conventional") is False:
            blocks.append(Para("The gains do not share one sign: valid arithmetic, but not a "
                               "conventional PID tuning.", "muted"))
    dz = im.get("discrete")
    if dz is None:
        if not sampled:
            blocks.append(Para("For a sampled controller, set [sampling] period in the "
                               "requirements (or run synth design with --sample-time T).",
                               "muted"))
        return blocks
    blocks.append(Heading("Discrete time"))
    warp = dz.get("warp_frequency")
    method = ("Tustin's method pre-warped at the gain crossover "
              f"{_g(warp)} rad/s" if warp else "Tustin's method without pre-warping")
    rows = [("sample time", f"{_g(dz.get('sample_time'), 6)} s"), ("method", method),
            ("closed-loop bandwidth", f"{_g(dz.get('closed_loop_bandwidth'))} rad/s")]
    if dz.get("numerator") is not None:
        from synth.outputs.forms import polynomial_text

        rows.append(("C(z)", f"({polynomial_text(dz['numerator'], 'z')}) / "
                             f"({polynomial_text(dz['denominator'], 'z')})"))
    sl = dz.get("sampled_loop")
    if sl:
        verdict = "stable" if sl.get("stable") else "UNSTABLE"
        rows.append(("sampled loop (plant by zero-order hold)",
                     f"{verdict}; largest closed-loop root |z| = {_g(sl.get('spectral_radius'))}; "
                     f"overshoot at the samples {_g(sl.get('overshoot_percent'), 4, 'n/a')} %"))
    blocks.append(Table(("item", "value"), tuple(rows)))
    de = dz.get("difference_equation")
    if de:
        blocks.append(Para("Difference equation (e = reference - measurement, u = controller "
                           "output):"))
        blocks.append(Pre(tuple(textwrap.wrap(de.get("text", ""), 88,
                                              subsequent_indent="       "))))
        blocks.append(Table(("coefficient", "values"), (
            ("b (e[k], e[k-1], ...)", ", ".join(_g(v, 10) for v in de.get("b") or [])),
            ("a (u[k], u[k-1], ...)", ", ".join(_g(v, 10) for v in de.get("a") or [])),
        )))
    warns = dz.get("warnings") or []
    if warns:
        blocks.append(Bullets(tuple(warns), "bad"))
    return blocks


def _notes_section(explore: bool = False) -> Section:
    items = (
        "Loop convention: unity negative feedback around L = C G; the closed-loop characteristic "
        "polynomial is formed without cancelling common factors.",
        "Time-domain figures: unit-step reference; overshoot against the final value; settling "
        "time is the last time outside the band.",
        "Margins: read from L(jw) at the gain crossover (phase margin) and the phase crossover "
        "(gain margin). Sensitivity peak: the largest |1/(1+L(jw))|.",
        "Discrete forms: Tustin's method with pre-warping at the gain crossover (Franklin, Powell "
        "and Workman, Digital Control of Dynamic Systems); the sampled loop uses the plant "
        "discretised by a zero-order hold. Common practice asks for a sampling frequency of 10 "
        "to 30 times the closed-loop bandwidth.",
        "PID forms: parallel and standard forms as in Astrom and Hagglund, PID Controllers: "
        "Theory, Design and Tuning.",
        "Root-locus views frame the closed-loop poles that shape the response (a stable pole "
        "five or more times faster than the slowest, or one a zero nearly cancels, does not; "
        "common practice); farther poles and zeros are shown by edge arrows, a list of values "
        "and an overview of the whole locus.",
    )
    blocks: tuple = (Bullets(items),)
    if explore:
        blocks += (Para("explore.html, beside this report, moves each top design's gain from "
                        "0.2x to 5x along its root locus and shows the verifier's results at "
                        "every gain: poles, step response, margins and each requirement.",
                        "muted"),)
    return Section("notes", SECTION_TITLES["notes"], blocks)


def build_sections(report: ReportInput) -> list[Section]:
    """The report's content as a list of sections (shared by the HTML and the PDF).

    Parameters
    ----------
    report : ReportInput
        Every design with figures gets a full section.

    Returns
    -------
    list of Section
    """
    sections = [
        Section("cautions", SECTION_TITLES["cautions"], (Bullets(CAUTIONS),), "caution"),
        _plant_section(report.problem),
        _requirements_section(report.problem),
        _proportional_section(report),
        _ranking_section(report.document),
    ]
    for fig in report.figures:
        sections.append(_design_section(report, report.document.design(fig.rank), fig))
    sections.append(_notes_section(any(f.sweep is not None for f in report.figures)))
    return sections


# ---------------------------------------------------------------------------
# HTML
# ---------------------------------------------------------------------------

#: The palette and type shared by the report page and the interactive page.
BASE_CSS = """
:root { --ink:#22303c; --muted:#6b7885; --rule:#d5dce2; --accent:#1b6f8a; --bad:#9b2f45;
        --good:#24744a; --paper:#fbfaf7; --caution:#fff4e0; --cautionrule:#d08a1e; }
* { box-sizing: border-box; }
body { margin:0; background:var(--paper); color:var(--ink);
       font: 15px/1.5 "Source Sans 3", "Segoe UI", "DejaVu Sans", Helvetica, Arial, sans-serif; }
"""

_CSS = BASE_CSS + """
main { max-width: 60rem; margin: 0 auto; padding: 1.5rem 1.5rem 4rem; }
header.top { border-bottom: 3px solid var(--accent); margin-bottom: 1rem; }
header.top h1 { font-size: 1.7rem; margin: 0 0 .2rem; letter-spacing: .01em; }
header.top p { margin: .1rem 0 .6rem; color: var(--muted); }
h2 { font-size: 1.3rem; margin: 2rem 0 .6rem; padding-bottom: .2rem;
     border-bottom: 1px solid var(--rule); }
h3 { font-size: 1.05rem; margin: 1.4rem 0 .4rem; color: var(--accent); }
section.caution { background: var(--caution); border-left: 6px solid var(--cautionrule);
                  padding: .3rem 1.2rem .6rem; margin: 1rem 0 1.5rem; }
section.caution h2 { border: none; margin-top: .6rem; }
section.caution li { margin: .25rem 0; font-weight: 600; }
p.muted { color: var(--muted); font-size: .9rem; }
p.good { color: var(--good); font-weight: 600; }
p.bad, ul.bad { color: var(--bad); }
p.bad { font-weight: 600; }
table { border-collapse: collapse; margin: .5rem 0 .8rem; font-size: .9rem; }
th, td { border-bottom: 1px solid var(--rule); padding: .25rem .6rem; text-align: left;
         vertical-align: top; }
th { background: #eef2f4; font-weight: 600; }
td.num { text-align: right; font-variant-numeric: tabular-nums; }
div.wide { overflow-x: auto; }
pre { background: #f0f3f5; border: 1px solid var(--rule); padding: .5rem .8rem;
      font: 13.5px/1.45 "DejaVu Sans Mono", Menlo, Consolas, monospace; white-space: pre-wrap; }
figure.plot { margin: .6rem 0 1rem; }
figure.plot svg { width: 100%; height: auto; display: block; background: #fff;
                  border: 1px solid var(--rule); }
figcaption { font-size: .85rem; color: var(--muted); margin-top: .3rem; }
nav.toc { font-size: .9rem; margin: .5rem 0 1rem; }
nav.toc a { color: var(--accent); text-decoration: none; margin-right: .9rem; }
@media print {
  @page { size: A4; margin: 16mm 14mm; }
  body { background: #fff; font-size: 10.5pt; }
  main { max-width: none; padding: 0; }
  nav.toc { display: none; }
  section.design { break-before: page; }
  figure.plot, table, pre, section.caution { break-inside: avoid; }
  h2, h3 { break-after: avoid; }
  section.caution { -webkit-print-color-adjust: exact; print-color-adjust: exact; }
  div.wide { overflow: visible; }
}
"""


def _html_table(t: Table) -> str:
    num = t.numeric or (False,) * len(t.header)
    head = "".join(f"<th>{html.escape(h)}</th>" for h in t.header)
    body = []
    for row in t.rows:
        cells = "".join(
            f"<td class=\"num\">{html.escape(c)}</td>" if (i < len(num) and num[i])
            else f"<td>{html.escape(c)}</td>" for i, c in enumerate(row))
        body.append(f"<tr>{cells}</tr>")
    return (f"<div class=\"wide\"><table><thead><tr>{head}</tr></thead><tbody>"
            + "".join(body) + "</tbody></table></div>")


_ID_REF = re.compile(r'(\bid="|url\(#|href="#)([^")]+)')


def _prefix_ids(svg: str, prefix: str) -> str:
    """Prefix every element id of one SVG, and the references to them.

    matplotlib names groups ``axes_1``, ``line2d_3``, ... in every picture; in
    one HTML page ids must be unique.
    """
    return _ID_REF.sub(lambda m: f"{m.group(1)}{prefix}-{m.group(2)}", svg)


def _svg_text(fig_block: Figure, salt: str) -> str:
    """Draw a figure block into a standalone SVG string, ready to inline."""
    import io

    import matplotlib

    # text stays text (small, selectable); the salt keeps element ids unique per figure
    with matplotlib.rc_context({"svg.fonttype": "none", "svg.hashsalt": salt,
                                "font.family": "DejaVu Sans", **SIMPLIFY}):
        from matplotlib.backends.backend_agg import FigureCanvasAgg
        from matplotlib.figure import Figure as MplFigure

        fig = MplFigure(figsize=(7.4, fig_block.height_in))
        FigureCanvasAgg(fig)
        fig_block.draw(fig)
        buf = io.StringIO()
        fig.savefig(buf, format="svg", metadata={"Date": None})
        text = buf.getvalue()
    svg = _prefix_ids(text[text.find("<svg"):], salt)
    label = html.escape(fig_block.alt, quote=True)
    return svg.replace("<svg", f"<svg role=\"img\" aria-label=\"{label}\"", 1)


def render_html(sections: list[Section], title: str, subtitle: str) -> str:
    """The HTML page for a list of sections."""
    out = ["<!DOCTYPE html>", "<html lang=\"en\">", "<head>", "<meta charset=\"utf-8\">",
           "<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">",
           f"<title>{html.escape(title)}</title>", f"<style>{_CSS}</style>", "</head>", "<body>",
           "<main>", "<header class=\"top\">", f"<h1>{html.escape(title)}</h1>",
           f"<p>{html.escape(subtitle)}</p>", "</header>"]
    toc = " ".join(f"<a href=\"#{s.ident}\">{html.escape(s.title)}</a>" for s in sections
                   if s.ident != "cautions")
    nfig = 0
    for sec in sections:
        cls = f" class=\"{sec.css}\"" if sec.css else ""
        out.append(f"<section id=\"{sec.ident}\"{cls}>")
        out.append(f"<h2>{html.escape(sec.title)}</h2>")
        for b in sec.blocks:
            if isinstance(b, Heading):
                out.append(f"<h3>{html.escape(b.text)}</h3>")
            elif isinstance(b, Para):
                cls = "" if b.style == "body" else f" class=\"{b.style}\""
                out.append(f"<p{cls}>{html.escape(b.text)}</p>")
            elif isinstance(b, Bullets):
                cls = "" if b.style == "body" else f" class=\"{b.style}\""
                items = "".join(f"<li>{html.escape(i)}</li>" for i in b.items)
                out.append(f"<ul{cls}>{items}</ul>")
            elif isinstance(b, Table):
                out.append(_html_table(b))
            elif isinstance(b, Pre):
                out.append("<pre>" + html.escape("\n".join(b.lines)) + "</pre>")
            elif isinstance(b, Figure):
                nfig += 1
                out.append(f"<figure class=\"plot\" data-figure=\"{b.kind}\">"
                           + _svg_text(b, f"synth-fig-{nfig}")
                           + f"<figcaption>{html.escape(b.caption)}</figcaption></figure>")
        out.append("</section>")
        if sec.ident == "cautions":
            out.append(f"<nav class=\"toc\">{toc}</nav>")
    out += ["</main>", "</body>", "</html>", ""]
    return "\n".join(out)


# ---------------------------------------------------------------------------
# PDF
# ---------------------------------------------------------------------------

_PAGE_W, _PAGE_H = 8.27, 11.69      # A4, inches
_MARGIN = 0.7                        # inches
_BODY_PT = 9.5
_CHAR_EM = 0.56                      # average DejaVu Sans character width, in em
_MONO_EM = 0.602                     # DejaVu Sans Mono advance width, in em
_COLORS = {"body": "#22303c", "muted": "#6b7885", "good": "#24744a", "bad": "#9b2f45",
           "accent": "#1b6f8a"}


class _PdfWriter:
    """Flows blocks down A4 pages drawn by matplotlib (one instance per report)."""

    def __init__(self, pdf, title: str, subtitle: str):
        self.pdf = pdf
        self.title = title
        self.subtitle = subtitle
        self.page = None
        self.y = 0.0  # inches from the top
        self.pages = 0

    # -- pages --------------------------------------------------------------
    def new_page(self) -> None:
        from matplotlib.backends.backend_agg import FigureCanvasAgg
        from matplotlib.figure import Figure as MplFigure

        self.finish_page()
        self.page = MplFigure(figsize=(_PAGE_W, _PAGE_H))
        FigureCanvasAgg(self.page)
        self.pages += 1
        self.y = _MARGIN
        self.page.text(_MARGIN / _PAGE_W, 0.35 / _PAGE_H, f"{self.title}", fontsize=7,
                       color=_COLORS["muted"], va="bottom")
        self.page.text(1 - _MARGIN / _PAGE_W, 0.35 / _PAGE_H, f"page {self.pages}", fontsize=7,
                       color=_COLORS["muted"], va="bottom", ha="right")

    def finish_page(self) -> None:
        if self.page is not None:
            self.pdf.savefig(self.page)
            self.page = None

    def room(self, need_in: float) -> None:
        if self.page is None or self.y + need_in > _PAGE_H - _MARGIN:
            self.new_page()

    # -- primitives ---------------------------------------------------------
    @property
    def width_in(self) -> float:
        return _PAGE_W - 2 * _MARGIN

    def _fx(self, x_in: float) -> float:
        return x_in / _PAGE_W

    def _fy(self, y_in: float) -> float:
        return 1.0 - y_in / _PAGE_H

    def text_lines(self, lines, size: float, color: str, weight: str = "normal",
                   family: str = "DejaVu Sans", indent: float = 0.0, lead: float = 1.32) -> None:
        step = size * lead / 72.0
        for line in lines:
            self.room(step)
            self.page.text(self._fx(_MARGIN + indent), self._fy(self.y), line, fontsize=size,
                           color=color, weight=weight, family=family, va="top")
            self.y += step

    def wrap(self, text: str, size: float, indent: float = 0.0, mono: bool = False) -> list[str]:
        em = _MONO_EM if mono else _CHAR_EM
        chars = max(20, int((self.width_in - indent) * 72.0 / (size * em)))
        return textwrap.wrap(text, chars) or [""]

    # -- blocks -------------------------------------------------------------
    def title_block(self) -> None:
        self.new_page()
        self.text_lines(self.wrap(self.title, 17), 17, _COLORS["accent"], "bold")
        self.text_lines(self.wrap(self.subtitle, 9), 9, _COLORS["muted"])
        self.y += 0.1

    def section(self, sec: Section) -> None:
        if sec.new_page:
            self.new_page()
        self.room(0.9)
        self.y += 0.12
        self.text_lines([sec.title], 13.5, _COLORS["body"], "bold")
        x0, x1 = self._fx(_MARGIN), self._fx(_PAGE_W - _MARGIN)
        self.page.add_artist(_line(x0, x1, self._fy(self.y + 0.02), "#d5dce2", 0.8))
        self.y += 0.1
        if sec.css == "caution":
            self.caution_box(sec)
            return
        for i, b in enumerate(sec.blocks):
            if isinstance(b, Heading) and i + 1 < len(sec.blocks):
                # keep a heading with the start of what it introduces
                self.room(0.6 + self.lead_height(sec.blocks[i + 1]))
            self.block(b)

    def lead_height(self, b) -> float:
        """Height (inches) of the part of a block that must follow its heading."""
        if isinstance(b, Figure):
            return b.height_in + 0.3
        if isinstance(b, Table):
            return 8.5 * 1.4 / 72.0 * min(len(b.rows) + 1, 4)
        return 3 * _BODY_PT * 1.32 / 72.0

    def caution_box(self, sec: Section) -> None:
        from matplotlib.patches import Rectangle

        lines = []
        for item in sec.blocks[0].items:
            wrapped = self.wrap(item, 10, indent=0.45)
            lines.append((True, wrapped[0]))
            lines.extend((False, w) for w in wrapped[1:])
        step = 10 * 1.35 / 72.0
        height = step * len(lines) + 0.25
        self.room(height)
        top = self.y
        self.page.add_artist(Rectangle((self._fx(_MARGIN), self._fy(top + height)),
                                       self.width_in / _PAGE_W, height / _PAGE_H,
                                       transform=self.page.transFigure, facecolor="#fff4e0",
                                       edgecolor="#d08a1e", linewidth=1.2))
        self.y += 0.12
        for first, line in lines:
            if first:
                self.page.text(self._fx(_MARGIN + 0.2), self._fy(self.y), "!", fontsize=10,
                               color="#d08a1e", weight="bold", va="top")
            self.page.text(self._fx(_MARGIN + 0.45), self._fy(self.y), line, fontsize=10,
                           color=_COLORS["body"], weight="bold", va="top")
            self.y += step
        self.y = top + height + 0.15

    def block(self, b) -> None:
        if isinstance(b, Heading):
            self.room(0.6)
            self.y += 0.08
            self.text_lines([b.text], 11, _COLORS["accent"], "bold")
            self.y += 0.03
        elif isinstance(b, Para):
            color = _COLORS.get(b.style, _COLORS["body"])
            size = 8.5 if b.style == "muted" else _BODY_PT
            weight = "bold" if b.style in ("good", "bad") else "normal"
            self.text_lines(self.wrap(b.text, size), size, color, weight)
            self.y += 0.06
        elif isinstance(b, Bullets):
            color = _COLORS.get(b.style, _COLORS["body"])
            for item in b.items:
                wrapped = self.wrap(item, _BODY_PT, indent=0.25)
                self.room(_BODY_PT * 1.32 / 72)
                self.page.text(self._fx(_MARGIN + 0.08), self._fy(self.y), "•",
                               fontsize=_BODY_PT, color=color, va="top")
                self.text_lines(wrapped, _BODY_PT, color, indent=0.25)
            self.y += 0.06
        elif isinstance(b, Pre):
            lines = []
            for line in b.lines:
                lines.extend(self.wrap(line, 8.5, indent=0.15, mono=True))
            self.text_lines(lines, 8.5, _COLORS["body"], family="DejaVu Sans Mono", indent=0.15)
            self.y += 0.08
        elif isinstance(b, Table):
            self.table(b)
        elif isinstance(b, Figure):
            self.figure(b)

    def table(self, t: Table) -> None:
        ncol = len(t.header)
        widths = [max(len(t.header[i]), *(len(r[i]) for r in t.rows)) for i in range(ncol)]
        total = sum(widths) + 2 * (ncol - 1)
        size = min(8.5, self.width_in * 72.0 / (max(total, 1) * _MONO_EM))
        rows = [tuple(r) for r in t.rows]
        if size < 7.5:
            # too wide: keep the type readable and wrap the widest column instead
            size = 7.5
            cap = int(self.width_in * 72.0 / (size * _MONO_EM)) - (total - max(widths))
            wide = int(np.argmax(widths))
            widths[wide] = max(cap, 12)
            split = []
            for r in rows:
                parts = textwrap.wrap(r[wide], widths[wide]) or [""]
                for k, part in enumerate(parts):
                    split.append(tuple(part if i == wide else (r[i] if k == 0 else "")
                                       for i in range(ncol)))
            rows = split
        num = t.numeric or (False,) * ncol

        def fmt(cells, header=False):
            out = []
            for i, c in enumerate(cells):
                c = c[: widths[i]]
                out.append(c.rjust(widths[i]) if (num[i] if i < len(num) else False) and not header
                           else c.ljust(widths[i]))
            return "  ".join(out)

        step = size * 1.4 / 72.0
        self.room(step * min(len(rows) + 1, 4))
        self._table_header(fmt(t.header, True), size)
        for r in rows:
            if self.y + step > _PAGE_H - _MARGIN:
                self.new_page()
                self._table_header(fmt(t.header, True), size)
            self.page.text(self._fx(_MARGIN), self._fy(self.y), fmt(r), fontsize=size,
                           family="DejaVu Sans Mono", color=_COLORS["body"], va="top")
            self.y += step
        self.y += 0.1

    def _table_header(self, text: str, size: float) -> None:
        step = size * 1.4 / 72.0
        self.page.text(self._fx(_MARGIN), self._fy(self.y), text, fontsize=size,
                       family="DejaVu Sans Mono", weight="bold", color=_COLORS["body"], va="top")
        self.y += step
        x0, x1 = self._fx(_MARGIN), self._fx(_PAGE_W - _MARGIN)
        self.page.add_artist(_line(x0, x1, self._fy(self.y - 0.02), "#9aa6b0", 0.6))
        self.y += 0.03

    def figure(self, f: Figure) -> None:
        height = f.height_in
        cap = self.wrap(f.caption, 8)
        self.room(height + len(cap) * 8 * 1.3 / 72 + 0.1)
        top, bottom = self.y, self.y + height
        # a subfigure fills whole grid cells (the grid's margins do not apply), so
        # place it on a grid of hundredths of an inch
        rows, cols = int(round(_PAGE_H * 100)), int(round(_PAGE_W * 100))
        gs = self.page.add_gridspec(rows, cols, wspace=0, hspace=0)
        c0, c1 = int(round(_MARGIN * 100)), int(round((_MARGIN + self.width_in) * 100))
        sub = self.page.add_subfigure(gs[int(round(top * 100)):int(round(bottom * 100)), c0:c1])
        f.draw(sub)
        self.y = bottom + 0.1
        self.text_lines(cap, 8, _COLORS["muted"])
        self.y += 0.08


def _line(x0, x1, y, color, width):
    from matplotlib.lines import Line2D

    return Line2D([x0, x1], [y, y], color=color, linewidth=width)


def render_pdf(sections: list[Section], title: str, subtitle: str, path: Path) -> int:
    """Write the sections as an A4 PDF; returns the page count."""
    import matplotlib
    from matplotlib.backends.backend_pdf import PdfPages

    with matplotlib.rc_context({"pdf.fonttype": 42, "font.family": "DejaVu Sans", **SIMPLIFY}):
        with PdfPages(path, metadata={"Title": title, "Creator": "synth",
                                      "CreationDate": None, "ModDate": None}) as pdf:
            w = _PdfWriter(pdf, title, subtitle)
            w.title_block()
            for sec in sections:
                w.section(sec)
            w.finish_page()
    return w.pages


# ---------------------------------------------------------------------------
# entry point
# ---------------------------------------------------------------------------

def _title(problem) -> tuple[str, str]:
    label = problem.plant.label
    title = "Compensator design report" + (f": {label}" if label else "")
    subtitle = f"requirements file {problem.source}; made by synth design"
    return title, subtitle


def write_report(report: ReportInput, outdir) -> list[Path]:
    """Write ``report.html`` and ``report.pdf`` for a design run into ``outdir``.

    Parameters
    ----------
    report : ReportInput
        What the report shows (``synth.design.prepare_report`` gathers it).
    outdir : str or path-like
        Folder for the report; created when missing.

    Returns
    -------
    list of pathlib.Path
        The files written: ``[outdir/report.html, outdir/report.pdf,
        outdir/explore.html]`` (the last is the interactive page,
        :mod:`synth.outputs.report.explore`).

    Raises
    ------
    synth.errors.OptionError
        When ``outdir`` exists and is not a folder, or cannot be created or
        written.

    Notes
    -----
    All files are written into a hidden staging folder
    (:func:`synth.outputs.files.atomic_folder`) and renamed into place only
    when all are complete; on any failure or interrupt the staging folder is
    removed, and a folder that did not exist is not created.
    """
    from synth.outputs.files import atomic_folder, check_output_folder, interrupt_point

    out = Path(outdir)
    check_output_folder(out, "--report")
    sections = build_sections(report)
    title, subtitle = _title(report.problem)
    page = render_html(sections, title, subtitle)
    from synth.outputs.report.explore import render_explore

    explore = render_explore(report)
    with atomic_folder(out, "--report") as stage:
        (stage / "report.html").write_text(page, encoding="utf-8")
        (stage / "explore.html").write_text(explore, encoding="utf-8")
        interrupt_point("report")
        render_pdf(sections, title, subtitle, stage / "report.pdf")
    return [out / "report.html", out / "report.pdf", out / "explore.html"]
