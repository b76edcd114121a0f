"""The report's "Discrete implementation" part of a design section.

Formats the design JSON's ``discrete`` object (written by
:meth:`synth.verify.sampled.SampledDesign.to_json` in a run with
``[sampling]``): the map and the realisation, the difference equations of
every section with their coefficients, the sampled loop's figures against the
continuous design's, the warnings with their numbers, and the files
``synth export`` writes for it.  Only formats: every number is the
document's.
"""

from __future__ import annotations

import textwrap

__all__ = ["discrete_blocks", "section_equations"]


def _g(x, digits: int = 4, none: str = "-") -> str:
    if x is None:
        return none
    return f"{x:.{digits}g}"


def _term(coef: float, sym: str, first: bool) -> str:
    mag = f"{abs(coef):.10g}"
    if first:
        return f"{'-' if coef < 0 else ''}{mag} {sym}"
    return f" {'-' if coef < 0 else '+'} {mag} {sym}"


def section_equations(sections, first_input: str = "e", output: str = "u",
                      two_input: tuple[str, str] = ("r", "y")) -> list[str]:
    """Difference equations of a cascade, one per section.

    Section ``j`` maps its input ``x_(j-1)`` (``e`` for the first, or the
    reference ``r`` and measurement ``y`` of a two-input section) to
    ``x_j`` (``u`` for the last):
    ``x_j[k] = sum_i b_i x_(j-1)[k-i] - sum_(i>=1) a_i x_j[k-i]``.

    Parameters
    ----------
    sections : list of mapping
        ``{"b", "a"}`` (and ``"t"`` for a two-input section), as in the JSON.
    """
    lines = []
    n = len(sections)
    for j, s in enumerate(sections, start=1):
        src = first_input if j == 1 else f"x{j - 1}"
        dst = output if j == n else f"x{j}"
        parts: list[str] = []
        if s.get("t") is not None:
            for i, c in enumerate(s["t"]):
                if c:
                    parts.append(_term(c, f"{two_input[0]}[k{'-' + str(i) if i else ''}]",
                                       not parts))
            for i, c in enumerate(s["b"]):
                if c:
                    parts.append(_term(-c, f"{two_input[1]}[k{'-' + str(i) if i else ''}]",
                                       not parts))
        else:
            for i, c in enumerate(s["b"]):
                if c:
                    parts.append(_term(c, f"{src}[k{'-' + str(i) if i else ''}]", not parts))
        for i, c in enumerate(s["a"]):
            if i and c:
                parts.append(_term(-c, f"{dst}[k-{i}]", not parts))
        lines.append(f"{dst}[k] = " + ("".join(parts) if parts else "0"))
    return lines


def discrete_blocks(design, sampling=None) -> list:
    """The blocks of a design's "Discrete implementation" part (empty without a ``discrete``).

    Parameters
    ----------
    design : synth.outputs.document.DesignRecord
    sampling : mapping, optional
        The document's ``sampling`` object (the sample rate against the requirements).
    """
    from synth.outputs.report.document import Bullets, Heading, Para, Pre, Table

    dz = design.discrete
    if not dz:
        return []
    blocks: list = [Heading("Discrete implementation")]
    period, tau = dz.get("period"), dz.get("compute_delay") or 0.0
    method = dz.get("method")
    how = {"tustin-prewarp": f"Tustin's method pre-warped at the gain crossover "
                             f"{_g(dz.get('warp_frequency'), 6)} rad/s",
           "tustin": "Tustin's method without pre-warping"}.get(method, "given in z")
    realisation = dz.get("realisation") or "direct form II transposed"
    sections = [dict(s) for s in dz.get("sections") or []]
    why = ("order <= 2: the polynomial's own coefficients are well conditioned"
           if len(sections) <= 1 else
           "order > 2: a cascade keeps the coefficients well conditioned where one polynomial "
           "with poles near z = 1 would not (common practice)")
    blocks.append(Para(f"The controller runs every {_g(period, 6)} s with the output applied "
                       f"{_g(tau, 6)} s after the sample; C(s) is mapped by {how}, realised as "
                       f"{realisation} ({why})."))
    if sampling and sampling.get("message"):
        blocks.append(Para(str(sampling["message"]), "bad" if str(sampling["message"])
                           .startswith("warning") else "muted"))
    sl = dz.get("sampled_loop") or {}
    cont = dz.get("continuous") or {}
    rate = dz.get("rate") or {}
    rows = [
        ("stable", "yes (continuous verdict)",
         ("yes" if sl.get("stable") else "NO") + f", largest root |z| = "
         f"{_g(sl.get('spectral_radius'))}"),
        ("gain crossover (rad/s)", _g(cont.get("crossover_frequency")),
         _g(sl.get("crossover_frequency"))),
        ("phase margin (deg)", _g(cont.get("phase_margin_deg")),
         _g(sl.get("phase_margin_deg"))),
        ("step overshoot (%)", _g(design.metric("overshoot_percent")),
         _g(sl.get("overshoot_percent")) + " (at the samples)"),
        ("closed-loop bandwidth (rad/s)", _g(cont.get("bandwidth")), "-"),
    ]
    blocks.append(Table(("", "continuous design", "sampled loop"), tuple(rows),
                        numeric=(False, True, True)))
    if rate:
        blocks.append(Para(
            f"Sample rate {_g(rate.get('sample_rate'))} rad/s = {_g(rate.get('ratio'), 3)} times "
            f"the closed-loop bandwidth (common practice: 10 to 30 times). At the crossover the "
            f"hold costs {_g(rate.get('hold_phase_deg'), 3)} deg (w T / 2) and the computation "
            f"delay {_g(rate.get('delay_phase_deg'), 3)} deg (w tau), leaving about "
            f"{_g(rate.get('margin_left_deg'), 3)} deg of phase margin.", "muted"))
    blocks.append(Para("Difference equations (e = reference - measurement, u = output before "
                       "any limit; x1, x2 ... between sections):"))
    two = bool(sections) and sections[0].get("t") is not None
    lines = section_equations(sections, "e" if not two else "r", "u")
    pre = [w for line in lines for w in textwrap.wrap(line, 88, subsequent_indent="       ")]
    prefilter = [dict(s) for s in dz.get("prefilter_sections") or []]
    if prefilter:
        pre += ["", "reference prefilter (r -> rf; then e = rf - measurement):"]
        pre += [w for line in section_equations(prefilter, "r", "rf")
                for w in textwrap.wrap(line, 88, subsequent_indent="       ")]
    blocks.append(Pre(tuple(pre)))
    coef_rows = []
    for j, s in enumerate(sections, start=1):
        coef_rows.append((f"section {j} b", ", ".join(_g(v, 12) for v in s["b"])))
        coef_rows.append((f"section {j} a", ", ".join(_g(v, 12) for v in s["a"])))
        if s.get("t") is not None:
            coef_rows.append((f"section {j} t (reference)", ", ".join(_g(v, 12) for v in s["t"])))
        if s.get("tracking") is not None:
            coef_rows.append((f"section {j} tracking A_aw", ", ".join(_g(v, 12)
                                                                    for v in s["tracking"])))
    blocks.append(Table(("coefficients", "descending powers of z"), tuple(coef_rows)))
    extra = []
    if dz.get("limits") is not None:
        lo, hi = dz["limits"]
        extra.append(f"output limited to [{_g(lo, 6)}, {_g(hi, 6)}]")
    if dz.get("max_rate") is not None:
        extra.append(f"output rate limited to {_g(dz['max_rate'], 6)} per second")
    aw = dz.get("anti_windup")
    if aw:
        extra.append(f"anti-windup: {aw.get('scheme')} in observer form "
                     "(A_aw v = B x + (A_aw - A) u with the limited output u)")
    extra += [str(n) for n in dz.get("notes") or []]
    if extra:
        blocks.append(Bullets(tuple(extra)))
    warns = [str(w) for w in dz.get("warnings") or []]
    if warns:
        blocks.append(Bullets(tuple(warns), "bad" if any(w.startswith("warning") for w in warns)
                              else "muted"))
    blocks.append(Para(
        f"Firmware: synth export RUN.json:{design.rank} --language c --name NAME --out DIR "
        "writes NAME.h, NAME.c and NAME_vectors.csv (--language st: NAME.st, an IEC 61131-3 "
        "function block, and NAME_vectors.csv); the vectors are this controller's outputs for "
        "a reference step, a load step and runs into the limits.", "muted"))
    return blocks
