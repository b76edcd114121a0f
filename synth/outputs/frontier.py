"""A frontier (:class:`synth.frontier.FrontierResult`) as the terminal account.

One table, structures by Ms levels, each cell the best value of the
objective (``-`` where the structure has no feasible design); then the best
design at the file's own limits, what relaxing each binding requirement by
10 % buys, in plain words, and the caution.  Labels and units come from the
catalogue; every number from the result.
"""

from __future__ import annotations

from synth.outputs.cautions import CAUTION
from synth.outputs.text import Row, TextReport, TextTable, number

__all__ = ["frontier_text", "limit_text", "relaxation_sentence"]


def limit_text(limit, unit: str) -> str:
    """A limit as words: ``3 s``, ``1.54``, ``[0.55, 1.82]``."""
    if isinstance(limit, (tuple, list)):
        text = f"[{number(limit[0])}, {number(limit[1])}]"
    else:
        text = number(limit)
    return f"{text} {unit}" if unit else text


def relaxation_sentence(r, what: str, unit: str) -> str:
    """One relaxation in plain words.

    ``relaxing max_settling_time from 3 s to 3.3 s improves the load-step IAE
    from 2.68 to 2.1 (22 %)``; "buys nothing measurable" when the relaxed
    search found no better design (within 0.5 %).
    """
    from synth.problem.catalogue import requirement

    entry = requirement(r.requirement)
    head = (f"relaxing {r.requirement} from {limit_text(r.limit_from, entry.unit)} to "
            f"{limit_text(r.limit_to, entry.unit)}")
    u = f" {unit}" if unit else ""
    gain = r.improvement
    if gain is None or gain < 0.005:
        found = ("no feasible design" if r.searched is None
                 else f"its best {number(r.searched)}{u}")
        return (f"{head} buys nothing measurable: the {what} stays at "
                f"{number(r.objective_from)}{u} (the relaxed search found {found})")
    return (f"{head} improves the {what} from {number(r.objective_from)}{u} to "
            f"{number(r.objective_to)}{u} ({100 * gain:.0f} % better)")


def _cell(point) -> str:
    return "unbounded" if point.unbounded else number(point.value)


def frontier_text(result) -> TextReport:
    """The terminal account of a frontier (see the module docstring)."""
    from synth.problem.catalogue import METRICS
    from synth.problem.objectives import objective

    problem = result.problem
    m = result.measure
    unit = METRICS[m.metric].unit
    u = f" ({unit})" if unit else ""
    before = [f"frontier of {problem.source}" if problem.source else "frontier",
              f"  objective: {problem.search.objective} ({objective(problem).label})",
              f"  each cell: the best {m.what}{u} under the Ms limit of its column, lower is "
              "better; - = no feasible design, unbounded = feasible but the objective is "
              "unbounded (no integral action for a load IAE)",
              f"  search effort {result.effort:g} per run, seed {problem.search.seed}"]
    if problem.requirements.limit("noise_gain") is None and m.objective != "robustness":
        before.append("  no max_noise_gain in the file: the objective's default noise "
                      "preference may weigh the values")
    own = result.own_level
    header = ("structure", *(f"Ms<={v:g}" + ("*" if own is not None and v == own else "")
                             for v in result.levels), "file's limits")
    rows = []
    for name, pts in result.structures.items():
        cells = [name, *(_cell(p) for p in (*pts, result.own[name]))]
        rows.append(Row(tuple(cells)))
    after = []
    if own is not None:
        after.append(f"* the file's own limit (max_peak_sensitivity = {own:g})")
    else:
        after.append("the file sets no max_peak_sensitivity: the last column has no Ms limit")
    if result.best is None:
        after.append(f"no structure has a feasible design with a finite {m.what} at the "
                     "file's own limits: nothing to relax")
    else:
        b = result.best
        after.append(f"best at the file's limits: {b.design.get('description', b.structure)} "
                     f"({m.what} {number(b.value)}{' ' + unit if unit else ''})")
        if result.best_note:
            after.append(f"  ({result.best_note})")
        if result.relaxations:
            after.append("what relaxing each binding requirement by 10 % buys "
                         f"({b.structure} searched again):")
            after.extend("  " + relaxation_sentence(r, m.what, unit) for r in result.relaxations)
        else:
            after.append("no requirement is binding at this design (each leaves more than "
                         "5 % room): relaxing one buys nothing")
        if result.slack:
            after.append("not binding: " + ", ".join(
                f"{k} ({'unbounded' if r == float('inf') else f'{100 * r:.0f} %'} room)"
                for k, r in result.slack))
    after.append(CAUTION)
    return TextReport(before=tuple(before),
                      table=TextTable(header=header, rows=tuple(rows),
                                      empty="no structures"),
                      after=tuple(after))
