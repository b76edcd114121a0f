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


# ----------------------------------------------------------------------------------------------
# JSON
# ----------------------------------------------------------------------------------------------


def _design_json(run, d) -> dict:
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
        "time_domain": ("exact dead time" if v.exact_delay and dead
                        else ("Pade form of the dead time" if dead else "no dead time")),
        "notes": list(v.notes),
        "provenance": dict(c.provenance),
    }
    if params is not None:
        out["params"] = params
    if c.shaping is not None:
        out["reference_filter"] = shaping_json(c.shaping)
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
        ``notes``, ``provenance``, ``params``), ``requirements``, ``region``,
        ``proportional``, ``caution``, ``search`` and ``source``.
    """
    from synth.families import FAMILIES

    problem = run.problem
    region = problem.region
    s = problem.search
    out = {
        "schema": SCHEMA,
        "objective": s.objective,
        "plant": problem.plant.to_json(),
        "designs": [_design_json(run, d) for d in run.designs],
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
    before.append("")
    cols = [(entry.column(limit), entry.metric, entry.key) for entry, limit in req.limits()]
    shown = [m for m in (*objective(pr).metrics, *_ALWAYS_SHOWN) if req.limit(m) is None]
    cols += [(METRICS[m].symbol, m, None) for m in dict.fromkeys(shown)]
    header = ("rank", "structure", "origin", "ok?", *(c[0] for c in cols))
    rows = []
    for d in run.designs:
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
        details += [f"fails: {text}" for text in v.violations]
        details += [f"note: {text}" for text in v.notes
                    if text.startswith("slow closed-loop pole")]  # worth an engineer's eye
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


def design_lines(run) -> list[str]:
    """:func:`design_text` as plain lines."""
    return plain_lines(design_text(run))
