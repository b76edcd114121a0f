"""A design run as the contract's JSON and as the terminal account.

:func:`design_json` writes a :class:`synth.design.DesignRun` as the
``synth.design/1`` document; :func:`design_text` as what ``synth design``
prints (the proportional verdict when a plain gain cannot do the job, the
ranked table with one column per requirement, the caution).  Both only
format: every number comes from the run's verdicts; the columns, their
headers and the ok/FAIL marks come from the requirement catalogue.
"""

from __future__ import annotations

import numpy as np

from synth.families.base import SearchSpace
from synth.outputs.cautions import CAUTION
from synth.outputs.jsonout import clean, root_pairs
from synth.outputs.text import Row, TextReport, TextTable, plain_lines
from synth.problem.catalogue import METRICS

__all__ = ["SCHEMA", "design_json", "design_lines", "design_text", "shaping_json",
           "shaping_text"]

SCHEMA = "synth.design/1"

#: Metrics the table shows even when no requirement limits them, in this order.
_ALWAYS_SHOWN = ("peak_sensitivity", "peak_control_effort", "settling_time")

#: Extra metrics of each design's JSON besides the contract's.
_EXTRA_METRICS = ("delay_margin", "crossover_frequency", "final_value", "in_region")
_SAMPLED_METRICS = ("spectral_radius", "peak_complementary_sensitivity", "noise_gain")


# ----------------------------------------------------------------------------------------------
# JSON
# ----------------------------------------------------------------------------------------------


def _design_json(run, d, sampled=None) -> dict:
    from synth.families import FAMILIES
    from synth.problem.plant import describe_factored

    c, v = d.candidate, d.verdict
    num = np.asarray(c.num, dtype=float)
    den = np.asarray(c.den, dtype=float)
    zeros = np.roots(num) if num.size > 1 else []
    poles = np.roots(den) if den.size > 1 else []
    family = FAMILIES.get(c.structure)
    description = f"{c.structure}: C(s) = {describe_factored(num, den)}"
    params = None
    if family is not None and c.params:
        from synth.families.base import SearchSpace

        fam = family(SearchSpace.for_problem(run.problem))
        description = fam.describe(np.asarray(c.params))
        params = fam.natural(np.asarray(c.params))
    metrics = {k: v.metrics.get(k) for k, m in METRICS.items() if m.contract}
    metrics.update({k: v.metrics.get(k) for k in _EXTRA_METRICS})
    # the sampled-data verdict's own figures (with [sampling]; see docs/methods.md)
    metrics.update({k: v.metrics[k] for k in _SAMPLED_METRICS if k in v.metrics})
    dead = run.problem.plant.dead_time
    out = {
        "rank": d.rank,
        "structure": c.structure,
        "origin": c.origin,
        "feasible": v.feasible,
        "compensator": {"numerator": [float(x) for x in num],
                        "denominator": [float(x) for x in den],
                        "zeros": root_pairs(zeros), "poles": root_pairs(poles),
                        "gain": float(num[0] / den[0])},
        "closed_loop_poles": root_pairs(v.closed_loop_poles),
        "metrics": metrics,
        "violations": list(v.violations),
        "description": description,
        "score": d.score,
        "internally_stable": v.internally_stable,
        "time_domain": ("sampled-data loop, output between the samples (exact dead time and "
                        "computation delay)" if run.problem.sampling is not None else
                        "exact dead time" if v.exact_delay and dead
                        else ("Pade form of the dead time" if dead else "no dead time")),
        "notes": list(v.notes),
        "provenance": dict(c.provenance),
    }
    if params is not None:
        out["params"] = params
    if c.shaping is not None:
        out["reference_filter"] = shaping_json(c.shaping)
    if sampled is not None:
        out["discrete"] = sampled.to_json()
    if run.problem.actuator is not None:
        out.update(_actuator_json(c, v))
    if v.worst_case:
        out["worst_case"] = {k: w.to_json() for k, w in v.worst_case.items()}
    if v.robustness is not None:
        out["robustness"] = v.robustness
    return out


def _actuator_json(candidate, verdict) -> dict:
    """A design's anti-windup (the contract's ``anti_windup``) and its two responses.

    ``saturation`` holds the time-domain metrics of the linear loop (small
    steps) and of the loop with the limited actuator (the actuator table's
    steps, normalised by their sizes); ``metrics`` holds the worse of each.
    """
    aw = candidate.anti_windup
    out: dict = {"anti_windup": None if aw is None else
                 {"scheme": aw.scheme, "parameters": dict(aw.parameters)}}
    if verdict.saturated_metrics:
        out["saturation"] = {"linear": dict(verdict.linear_metrics),
                             "saturated": dict(verdict.saturated_metrics)}
    return out


def shaping_json(shaping) -> dict:
    """The contract's ``reference_filter`` object of a reference shaping (plus its ``method``).

    ``{"numerator": [...], "denominator": [...]}`` for a prefilter,
    ``{"setpoint_weights": {"b": b, "c": c}}`` for PID set-point weights.
    """
    if shaping.setpoint_weights is not None:
        b, c = shaping.setpoint_weights
        out = {"setpoint_weights": {"b": float(b), "c": float(c)}}
    else:
        out = {"numerator": [float(x) for x in shaping.numerator],
               "denominator": [float(x) for x in shaping.denominator]}
    if shaping.method:
        out["method"] = shaping.method
    return out


def shaping_text(shaping) -> str:
    """One line for the terminal and the report: what shapes the reference step."""
    if shaping.setpoint_weights is not None:
        b, c = shaping.setpoint_weights
        return f"reference: set-point weights b = {b:.3g}, c = {c:.3g}"
    from synth.problem.plant import describe_factored

    return ("reference prefilter F(s) = "
            f"{describe_factored(np.asarray(shaping.numerator), np.asarray(shaping.denominator))}")


def design_json(run) -> dict:
    """The contract's ``synth.design/1`` object of a run, plus extra fields; no NaN or infinity.

    Parameters
    ----------
    run : synth.design.DesignRun

    Returns
    -------
    dict
        ``schema``, ``plant``, ``designs`` (contract fields, and per design
        ``description``, ``score``, ``internally_stable``, ``time_domain``,
        ``notes``, ``provenance``, ``params``; with several plant models
        ``worst_case`` and ``robustness``; with ``[sampling]`` the contract's ``discrete``), ``requirements``, ``region``,
        ``proportional``, ``caution``, ``search``, ``sampling`` (the sample
        rate against the requirements, with ``[sampling]``), ``actuator``, ``models`` (with ranges or
        variants: :meth:`synth.problem.models.ModelSet.to_json`) and ``source``.
    """
    from synth.families import FAMILIES

    problem = run.problem
    region = problem.region
    s = problem.search
    out = {
        "schema": SCHEMA,
        "objective": s.objective,
        "plant": problem.plant.to_json(),
        "designs": [_design_json(run, d, sd) for d, sd in
                    zip(run.designs, run.sampled or (None,) * len(run.designs), strict=True)],
        "requirements": problem.requirements.given(),
        "region": {"decay_rate": region.sigma, "damping": region.zeta,
                   "description": region.describe()},
        "proportional": run.proportional,
        "caution": CAUTION,
        "search": {"seed": s.seed, "time_budget": s.time_budget, "keep": s.keep,
                   "objective": s.objective, "reference_shaping": s.reference_shaping,
                   "structures": list(s.structures or FAMILIES),
                   "max_frequency": SearchSpace.for_problem(problem).w_max, **run.stats},
    }
    if problem.sampling is not None:
        from synth.problem.sampling import sampling_advice

        out["sampling"] = sampling_advice(problem.sampling, problem.requirements).to_json()
    if problem.actuator is not None:
        out["actuator"] = problem.actuator.to_json()
    models = problem.model_set
    if not models.is_single:
        out["models"] = models.to_json()
    if problem.source:
        out["source"] = problem.source
    return clean(out)


# ----------------------------------------------------------------------------------------------
# terminal
# ----------------------------------------------------------------------------------------------


def _num(v, digits: int = 3) -> str:
    if v is None:
        return "inf"
    if isinstance(v, (list, tuple)):
        a = "-inf" if v[0] is None else f"{v[0]:.{digits}g}"
        b = "inf" if v[1] is None else f"{v[1]:.{digits}g}"
        return f"({a},{b})"
    return f"{v:.{digits}g}"


def _verdict_sections(lines: list[str]) -> list[str]:
    """The proportional block (and any warnings) of the explain account.

    The account's sections are separated by blank lines; the one that starts
    with "Proportional" holds the verdict.  Falls back to the first lines.
    """
    sections: list[list[str]] = [[]]
    for line in lines:
        if line.strip():
            sections[-1].append(line)
        elif sections[-1]:
            sections.append([])
    keep = [sec for sec in sections if sec and (sec[0].startswith("Proportional")
                                                or sec[0].startswith("Sampled every")
                                                or sec[0].startswith("Warnings"))]
    if not keep:
        return lines[:8]
    out: list[str] = []
    for sec in keep:
        out.extend(sec)
    return out


def _ivs_text(ivs) -> str:
    if not ivs:
        return "no gain"
    return " U ".join(f"({'-inf' if a is None else format(a, '.4g')}, "
                      f"{'inf' if b is None else format(b, '.4g')})" for a, b in ivs)


def _proportional_lines(run) -> list[str]:
    """The proportional verdict, shown when a plain gain cannot do the job."""
    if any(d.verdict.feasible and d.candidate.structure == "P" for d in run.designs):
        return []
    if run.explanation is not None:
        return [*_verdict_sections(run.explanation.text_lines()), ""]
    ivs = run.proportional.get("requirement_gain_intervals", [])
    stab = run.proportional.get("stabilizing_gain_intervals", [])
    return [f"Proportional gain alone: stabilises for {_ivs_text(stab)}; meets the region "
            f"for {_ivs_text(ivs)}; no plain gain met every requirement.", ""]


def _anti_windup_text(aw) -> str:
    """``"back-calculation, tracking time 1.3 s"``, or ``"none (no integral action)"``."""
    if aw.scheme == "none":
        return "none (no integrator or unstable pole to wind up)"
    tt = aw.parameters.get("tracking_time")
    return aw.scheme + ("" if tt is None else f", tracking time {tt:.4g} s")


def design_text(run) -> TextReport:
    """The terminal account of a run: proportional verdict, ranked table, caution.

    One column per requirement the file sets (header and ok/FAIL from the
    catalogue), then the peak sensitivity, peak effort and settling time
    where no requirement limits them.
    """
    from synth.problem.objectives import objective
    from synth.problem.plant import describe_factored

    pr = run.problem
    req = pr.requirements
    before = _proportional_lines(run)
    title = pr.plant.label or pr.source
    before.append(f"Designs for {pr.plant.describe()}" + (f"  ({title})" if title else ""))
    before.append(f"  objective: {pr.search.objective} ({objective(pr).label})")
    if not pr.region.is_stability_only:
        before.append(f"  requirement region: {pr.region.describe()}")
    if pr.sampling is not None:
        before.extend(_sampling_lines(pr))
    if pr.actuator is not None:
        act = pr.actuator
        before.append(f"  actuator: {act.describe()}; time-domain limits judged on small steps "
                      f"and on a reference step of {act.reference_step:.4g} and a load step of "
                      f"{act.load_step:.4g} through the limits")
    if not pr.model_set.is_single:
        before.append(f"  plant models: {pr.model_set.describe()}")
        before.append("  every value below is the worst case over the models (see the worst-case "
                      "lines)")
    before.append("")
    cols = [(entry.column(limit), entry.metric, entry.key) for entry, limit in req.limits()]
    shown = [m for m in (*objective(pr).metrics, *_ALWAYS_SHOWN) if req.limit(m) is None]
    cols += [(METRICS[m].symbol, m, None) for m in dict.fromkeys(shown)]
    header = ("rank", "structure", "origin", "ok?", *(c[0] for c in cols))
    rows = []
    sampled = run.sampled or (None,) * len(run.designs)
    for d, sd in zip(run.designs, sampled, strict=True):
        v = d.verdict
        cells = [str(d.rank), d.candidate.structure, d.candidate.origin,
                 "yes" if v.feasible else "NO"]
        marks = ["", "", "", "good" if v.feasible else "bad"]
        for _, metric, key in cols:
            if not v.stable and metric != "gain":
                cells.append("-")
                marks.append("")
                continue
            text = _num(v.metrics.get(metric))
            mark = ""
            if key is not None:
                failed = key in v.shortfalls
                text += " FAIL" if failed else " ok"
                mark = "bad" if failed else "good"
            cells.append(text)
            marks.append(mark)
        num, den = np.asarray(d.candidate.num), np.asarray(d.candidate.den)
        details = [f"C(s) = {describe_factored(num, den)}"]
        if d.candidate.shaping is not None:
            details.append(shaping_text(d.candidate.shaping))
        aw = d.candidate.anti_windup
        if pr.actuator is not None and aw is not None:
            details.append("anti-windup: " + _anti_windup_text(aw))
        details += _worst_case_lines(v, [c[1] for c in cols])
        details += [f"fails: {text}" for text in v.violations]
        details += [f"note: {text}" for text in v.notes
                    if text.startswith("slow closed-loop pole")]  # worth an engineer's eye
        if sd is not None:
            details += _sampled_details(sd)
        rows.append(Row(tuple(cells), tuple(details), tuple(marks)))
    n_ok = sum(d.verdict.feasible for d in run.designs)
    st = run.stats
    after = ["", f"{n_ok} of {len(run.designs)} listed designs meet every requirement "
             f"({st.get('candidates', 0)} candidates verified, search "
             f"{st.get('search_seconds', 0.0):.1f} s)."]
    if st.get("time_capped"):
        after.append("  time cap reached for: " + ", ".join(st["time_capped"])
                     + " (the ranking may differ between runs; raise search.time_budget)")
    after += ["", "Caution: " + CAUTION]
    return TextReport(before=tuple(before),
                      table=TextTable(header, tuple(rows), empty="no candidate was proposed"),
                      after=tuple(after))


def _sampling_lines(problem) -> list[str]:
    """The sampling settings and the sample rate against the requirements."""
    from synth.problem.sampling import sampling_advice

    sp = problem.sampling
    advice = sampling_advice(sp, problem.requirements)
    line = (f"  sampled every {sp.period:.4g} s (sample rate {sp.sample_rate:.4g} rad/s), "
            f"computation delay {sp.compute_delay:.4g} s")
    if advice.ratio is not None:
        line += (f"; the requirements ask for a bandwidth of about {advice.bandwidth:.4g} rad/s "
                 f"({advice.asked_by}); the sample rate is {advice.ratio:.3g} times that")
    out = [line]
    if advice.message:
        out.append(f"  {advice.message}")
    return out


def _sampled_details(sd) -> list[str]:
    """One design's sampled loop against its continuous loop, and its warnings."""
    lp = sd.loop
    c = sd.continuous
    if lp.stable:
        pm = "-" if sd.phase_margin_deg is None else f"{sd.phase_margin_deg:.3g}"
        cpm = "-" if c.get("phase_margin_deg") is None else f"{c['phase_margin_deg']:.3g}"
        os_ = "-" if lp.overshoot_percent is None else f"{lp.overshoot_percent:.3g} %"
        text = (f"sampled loop: stable, phase margin {pm} deg (continuous {cpm}), overshoot at "
                f"the samples {os_}")
    else:
        text = f"sampled loop: UNSTABLE, largest root |z| = {lp.spectral_radius:.4g}"
    out = [f"{text}; C(z) by {sd.controller.zmap.describe()}, {sd.controller.realisation}"]
    out += [w for w in sd.warnings if w.startswith(("warning", "note"))]
    return out
def _worst_case_lines(verdict, shown) -> list[str]:
    """One line naming the model behind each shown worst-case value (other than the nominal)."""
    if not verdict.worst_case:
        return []
    by_model: dict[str, list[str]] = {}
    for metric in shown:
        case = verdict.worst_case.get(metric)
        if case is None or case.model.kind == "nominal":
            continue
        by_model.setdefault(case.model.name, []).append(METRICS[metric].symbol)
    rob = verdict.robustness or {}
    lines = [f"worst case {', '.join(symbols)}: {name}" for name, symbols in by_model.items()]
    if rob.get("stability_test"):
        certified = rob.get("stability_certified")
        head = ("stability" if certified is None else
                "robust stability " + ("certified" if certified else "NOT certified"))
        lines.append(f"{head} ({rob['stability_test']}); "
                     f"{rob.get('exact_evaluations', 0)} models evaluated exactly, "
                     f"{rob.get('screened', 0)} screened, "
                     f"{rob.get('local_searches', 0)} local searches")
    return lines


def design_lines(run) -> list[str]:
    """:func:`design_text` as plain lines."""
    return plain_lines(design_text(run))
